"""dampline's exact solution against an independent finite-element model.

The reference is tests/fe_reference.py: quadratic Lagrange elements with
consistent mass (Hughes, The Finite Element Method, 2000; Bathe, Finite Element
Procedures, 2014), assembled and solved with scipy.sparse. It shares no code
with dampline. As the mesh is refined, its natural frequencies must converge to
dampline's at the a-priori rate h^4 of quadratic elements (Strang and Fix, An
Analysis of the Finite Element Method, 1973, ch. 6), and its FRF must approach
dampline's.
"""

from __future__ import annotations

import numpy as np
import pytest

import dampline as dl
from tests.fe_reference import build

# a stepped steel/aluminium/titanium line of our own, with every attachment type
SEGS = [
    {"length": 0.35, "E": 2.1e11, "rho": 7850.0, "area": 3.0e-4},
    {"length": 0.50, "E": 7.0e10, "rho": 2700.0, "area": 6.0e-4},
    {"length": 0.25, "E": 1.13e11, "rho": 4430.0, "area": 1.2e-4},
]
ATTS = [
    {"at": 0.20, "mass": 0.6},
    {"at": 0.60, "spring": 4.0e7, "dashpot": 40.0},
    {"at": 0.95, "absorber": {"mass": 0.25, "stiffness": 5.0e7, "damping": 25.0}},
]
RIGHT = {"spring": 2.0e6, "mass": 0.3, "dashpot": 15.0}


def _models(eta: float | None = None):
    segs = [dict(s, eta=eta) if eta else dict(s) for s in SEGS]
    spec = {"kind": "axial", "segments": segs, "ends": {"left": "fixed", "right": RIGHT},
            "attachments": ATTS}
    line = dl.Line.from_dict(spec)
    fe_segs = [{"length": s["length"], "S": s["E"] * s["area"], "m": s["rho"] * s["area"],
                "eta": s.get("eta", 0.0) or 0.0} for s in segs]
    return line, fe_segs


def test_natural_frequencies_converge_at_h4_to_exact():
    line, fe_segs = _models()
    count = 8
    exact = dl.natural_frequencies(line, count)
    errs = []
    ns = (4, 8, 16, 32)
    for n in ns:
        fe = build(fe_segs, ends=("fixed", RIGHT), attachments=ATTS, n_per_segment=n, order=2)
        f_fe = fe.natural_frequencies(count)
        errs.append(np.abs(f_fe / exact - 1.0))
    errs = np.array(errs)
    # finest mesh (32 quadratic elements per segment) agrees to about a part per million
    assert errs[-1].max() < 2e-6, errs[-1]
    # FE is an upper bound (Rayleigh-Ritz) and the error rate is h^4 (slope fitted on the
    # two finest meshes, modes resolved by them): Strang and Fix
    fe_fine = build(fe_segs, ends=("fixed", RIGHT), attachments=ATTS, n_per_segment=32,
                    order=2).natural_frequencies(count)
    assert np.all(fe_fine >= exact * (1 - 1e-12))
    # (modes whose error is above the eigen-solver's round-off, 1e-9)
    resolved = errs[-1] > 1e-9
    assert resolved.sum() >= 5
    slope = np.log2(errs[-2] / errs[-1])[resolved]
    np.testing.assert_allclose(slope, 4.0, atol=0.25)


def test_frf_converges_to_exact_with_damping_and_attachments():
    line, fe_segs = _models(eta=0.01)
    f = np.linspace(20.0, 12e3, 300)
    drive, resp = 0.60, [0.20, 0.60, 1.10]
    H = np.asarray(dl.frf(line, f, drive_at=drive, response_at=resp))
    errs = []
    for epw in (10, 20, 40):
        fe = build(fe_segs, ends=("fixed", RIGHT), attachments=ATTS,
                   elements_per_wavelength=epw, f_max=f[-1], order=2)
        Hf = fe.frf(f, drive, resp)
        errs.append(np.max(np.abs(Hf - H) / np.abs(H)))
    # error falls with refinement at close to the h^4 rate (factor 16 per halving)
    assert errs[0] > errs[1] > errs[2]
    assert errs[1] / errs[2] > 8.0
    assert errs[2] < 2e-4, errs


@pytest.mark.parametrize("end", ["left", "right"])
def test_velocity_drive_matches_fe(end):
    line, fe_segs = _models(eta=0.02)
    f = np.linspace(50.0, 8e3, 120)
    resp = [0.20, 0.85, 1.10]
    x_end = 0.0 if end == "left" else line.length
    H = np.asarray(dl.frf(line, f, drive_at=x_end, response_at=resp, drive="velocity"))
    fe = build(fe_segs, ends=("fixed", RIGHT), attachments=ATTS, elements_per_wavelength=40,
               f_max=f[-1], order=2)
    Hf = fe.frf_velocity_drive(f, end, resp)
    np.testing.assert_allclose(H, Hf, rtol=1e-4, atol=1e-4 * np.abs(Hf).max())
