"""Sweep view widget: set the controls from Python, press Run (``.run()``), and compare
the marks' data with a direct ``dl.sweep`` call and ``dl.natural_frequencies`` of
each variant (the view holds no physics; tolerances cover round-off only). No browser.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

pytest.importorskip("ipywidgets")
bq = pytest.importorskip("bqplot")

import dampline as dl  # noqa: E402
from dampline.dashboard.sweep_view import SweepView  # noqa: E402

SCEN = Path(__file__).resolve().parents[1] / "dashboards" / "scenarios"


def _db(H):
    return 20.0 * np.log10(np.abs(H))


def test_run_matches_direct_sweep():
    line = dl.load(SCEN / "horn.toml")
    f = np.linspace(100.0, 60e3, 2000)
    view = SweepView(line, drive_at=0.0, response_at=0.145, freqs=f, modes=4)
    c = view.controls
    assert "attachments.0.mass" in c["path"].options
    c["path"].value = "attachments.0.mass"
    assert "kg" in view.unit_label.value
    c["start"].value, c["stop"].value, c["count"].value = 0.001, 0.02, 50
    view.run()                       # what the Run button calls
    vals = np.linspace(0.001, 0.02, 50)
    ref = dl.sweep(line, "attachments.0.mass", vals, f, drive_at=0.0, response_at=[0.145],
                   progress=False)
    m = view.marks
    np.testing.assert_allclose(m["map"].x, f)
    np.testing.assert_allclose(m["map"].y, vals)
    assert m["map"].color.shape == (50, 2000)
    np.testing.assert_allclose(m["map"].color, _db(ref.frf[:, :, 0]), rtol=1e-12)
    # highest peak of each variant, straight from the FRF samples' local maxima
    pk = ref.peaks()
    np.testing.assert_allclose(m["peak_level"].y, pk.highest(0), rtol=1e-12)
    np.testing.assert_allclose(m["peak_level"].x, vals)
    assert np.all(m["peak_level"].y <= _db(ref.frf[:, :, 0]).max(axis=1) + 0.5)
    # natural frequencies: dl.natural_frequencies of each variant, in the band
    # (the free-free horn's rigid-body mode at 0 Hz lies below the band: not drawn)
    drawn_all = m["natural"].y
    for i in (0, 17, 49):
        fn = dl.natural_frequencies(ref.line(i), 4)
        inband = fn[(fn >= f[0]) & (fn <= f[-1])]
        drawn = drawn_all[:, i]
        np.testing.assert_allclose(np.sort(drawn[np.isfinite(drawn)]), inband, rtol=1e-12)
    assert "attachments.0.mass" in view._ax_value[0].label


def test_bad_input_keeps_last_plots():
    line = dl.load(SCEN / "pump_shaft.toml")
    f = np.linspace(5.0, 2000.0, 300)
    view = SweepView(line, drive_at=0.95, response_at=0.0, freqs=f, modes=3)
    c = view.controls
    c["path"].value = "attachments.0.absorber.stiffness"
    c["count"].value = 5
    view.run()
    before = np.array(view.marks["map"].color)
    c["start"].value = -1.0e5                      # a negative stiffness: invalid model
    assert view.run() is None
    assert "attachments.0.absorber.stiffness" in view.status.value
    assert "N m/rad" in view.status.value
    np.testing.assert_array_equal(view.marks["map"].color, before)


def test_run_button_and_figures():
    line = dl.load(SCEN / "sensor_mast.toml")
    f = np.linspace(1.0, 400.0, 400)
    view = SweepView(line, drive_at=1.8, response_at=1.8, freqs=f, modes=3)
    view.controls["path"].value = "ends.right.mass"
    view.controls["count"].value = 4
    view.controls["run"].click()
    assert view.result is not None and len(view.result) == 4
    assert isinstance(view.marks["map"], bq.HeatMap)
    assert set(view.figures) == {"peaks", "resonances", "map"}
    ref = dl.sweep(line, "ends.right.mass", view.values(), f, drive_at=1.8, response_at=[1.8],
                   progress=False)
    np.testing.assert_allclose(view.marks["map"].color, _db(ref.frf[:, :, 0]), rtol=1e-12)
