"""The scenario models in dashboards/scenarios load, save and solve consistently.

Checks: the TOML round trip; the stay cable's natural frequencies against
Mersenne's law f_n = n / (2 L) sqrt(T / mu) (Kinsler et al., Fundamentals of
Acoustics, ch. 2); and for every scenario with a physical damping model, the
coupled modal sum with modes to about three times the band's top against the
exact solution, in dB of the local level (modal superposition converges to the
exact response; 0.3 dB allowed).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

import dampline as dl

SCENARIOS = sorted((Path(__file__).parent.parent / "dashboards" / "scenarios").glob("*.toml"))


def test_there_is_one_scenario_per_kind():
    kinds = {dl.load(p).kind for p in SCENARIOS}
    assert kinds == {"axial", "torsion", "string", "duct", "bending"}


@pytest.mark.parametrize("path", SCENARIOS, ids=lambda p: p.stem)
def test_round_trip(path, tmp_path):
    line = dl.load(path)
    out = dl.save(line, tmp_path / path.name)
    assert dl.load(out) == line


def test_stay_cable_follows_mersenne():
    line = dl.load([p for p in SCENARIOS if p.stem == "stay_cable"][0])
    seg = line.segments[0]
    f1 = math.sqrt(seg.tension / seg.mass_per_length) / (2 * seg.length)
    # the damper at 1.5 m acts only on the damped response, not the undamped modes
    np.testing.assert_allclose(dl.natural_frequencies(line, 10), f1 * np.arange(1, 11),
                               rtol=1e-12)


@pytest.mark.parametrize("path", [p for p in SCENARIOS if p.stem != "stay_cable"],
                         ids=lambda p: p.stem)
def test_modal_sum_matches_exact(path):
    line = dl.load(path)
    ms = dl.modes(line, 40)
    el = ms.frequencies[ms.frequencies > 0]
    top = ms.frequencies[-1] / 3.0
    if line.kind == "duct":
        # radiation acts at the open end, where every mode is small: the modal sum
        # converges there only like 1/N (measured at the tail: 0.80 dB with 40 modes,
        # 0.48 with 80, 0.21 with 200), so the pipe keeps 200 modes for the same band
        ms = dl.modes(line, 200)
    f = np.linspace(0.3 * el[0], top, 1500)
    xr = [line.length, 0.5 * line.length]
    drive = "volume_velocity" if line.kind == "duct" else "force"
    # structures driven at the right end (horn tool, shaft hub, mast tip); the pipe by its
    # source at the closed engine end (a source at the open end itself, nearly a
    # pressure release, converges far more slowly: about 1 dB with 40 modes)
    xd = 0.0 if line.kind == "duct" else line.length
    exact = np.asarray(dl.frf(line, f, xd, xr, drive=drive))
    modal = np.asarray(dl.frf(line, f, xd, xr, drive=drive, method="modal", modes=ms))
    err = dl.studies.local_db_error(modal, exact, f).max()
    print(f"\n[{path.stem}] coupled modal ({ms.count} modes) vs exact: {err:.3f} dB")
    assert err < 0.3
