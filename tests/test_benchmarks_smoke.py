"""Keep the benchmark suite from rotting: import every case module and run the smallest
versions of a few cases. No timing is asserted (speed is the benchmarks' business);
the numbers they compute are checked against independent models.
"""

from __future__ import annotations

import importlib

import numpy as np
import pytest

import dampline as dl
from benchmarks import suite


@pytest.mark.parametrize("name", list(suite.CASES))
def test_case_modules_import_and_offer_rows(name):
    if not suite.available(name):
        pytest.skip(f"benchmarks/{suite.CASES[name]}.py not present")
    mod = importlib.import_module(f"benchmarks.{suite.CASES[name]}")
    assert callable(getattr(mod, "rows", None)) or name == "sweep"
    assert callable(mod.main)


def test_small_stepped_beam_exact_frf_matches_the_hermite_fe_baseline():
    """The exact-FRF beam case at 300 Hz (7 modes) and 60 frequencies: the sparse
    Hermite FE baseline (benchmarks/_beam_fe.py, an independent model: element
    matrices of Przemieniecki 1968) converges to dampline's receptance within 1e-4,
    and refining it (error O(h^4), Strang and Fix 1973) moves it closer."""
    from benchmarks import bench_exact_beam as beam
    line, props = beam.scenario()
    f_max = 300.0
    f = np.linspace(1.0, f_max, 60)
    L, b = line.length, line.boundaries
    resp = [L, b[3], b[7]]
    H = np.asarray(dl.frf(line, f, drive_at=L, response_at=resp))
    epw, fe = beam.converge(props, f, H, L, resp, f_max=f_max, epws=(10, 20, 40, 60),
                            verbose=False)
    err = beam.rel_err(fe.frf(f, L, resp), H)
    assert err <= 1e-4
    coarse = beam.rel_err(beam.BeamFE(props, beam.ENDS, 5, f_max).frf(f, L, resp), H)
    assert coarse > err


def test_memory_case_runs_in_its_own_interpreter():
    """The long-request case at a tiny size: the child returns the full, finite
    (n_freq, n_points) answer and its peak RSS."""
    from benchmarks import bench_memory
    r = bench_memory.one_run(True, n_freq=300, n_points=7)
    assert r["shape"] == [300, 7] and r["finite"]
    assert r["nbytes"] == 300 * 7 * 16 and r["maxrss_mib"] > 0


def test_damping_change_update_modal_agrees_with_exact():
    """The damping-change case on the horn, 200 frequencies: the modal curve with the
    reused modes against the exact one for the same new loss factor (direct calls of
    the public API computed two ways), and the same update with the modes recomputed."""
    from benchmarks import bench_damping_change as dc
    spec, ms, f, x = dc.setup(dc.SCENARIOS / "horn.toml", n_freq=200, n_modes=40)
    modal, exact = dc.update(spec, 0.005, ms, f, x)
    modal2, _ = dc.update(spec, 0.005, ms, f, x, reuse=False)
    err_db = dl.studies.local_db_error(np.asarray(modal), np.asarray(exact), f)
    assert np.max(err_db) < 0.1
    np.testing.assert_allclose(np.asarray(modal2), np.asarray(modal), rtol=1e-8)


def test_dashboard_latency_takes_both_update_paths(tmp_path):
    pytest.importorskip("ipywidgets")
    pytest.importorskip("bqplot")
    from dampline.dashboard.latency import measure_scenario
    from benchmarks import bench_dashboard
    r = measure_scenario(bench_dashboard.SCENARIOS / "sensor_mast.toml", moves=3,
                         n_freq=200, n_points=20, modes=8, constructions=1)
    assert r["n_moves"] == 5 and r["slider"] == "eta"
    for key in ("construction_first", "quick", "settle", "full", "geometry", "geometry_modes"):
        assert np.isfinite(r[key]) and r[key] > 0
    # the full update's parts are the dashboard's own timers and fit inside its wall time
    assert set(r["full_parts"]) == {"modal", "exact", "tables", "field"}
    assert 0 < sum(r["full_parts"].values()) <= 1.5 * r["full"]


def test_readme_table_is_replaced_between_markers_and_other_rows_kept(tmp_path):
    readme = tmp_path / "README.md"
    readme.write_text(f"intro\n\n{suite.START}\n| case | x |\n|---|---|\n"
                      f"| import | old |\n| modal_full | old |\n{suite.END}\n\nafter\n")
    result = {"info": {"date": "today", "command": "python -m benchmarks --only modal",
                       "machine": "m", "versions": "v", "idle_rss_mib": 80.0},
              "rows": [suite.row("modal_full", "w", 0.012, t_baseline=0.004,
                                 ratio=3.0, ratio_is="dampline / baseline", target="<= 10x",
                                 met=True, rss_mib=120.0)]}
    suite.write_readme(result, readme)
    text = readme.read_text()
    assert text.startswith("intro\n") and text.endswith("\nafter\n")
    block = text[text.index(suite.START):text.index(suite.END)]
    assert "| import | old |" in block and "| modal_full | old |" not in block
    assert "| modal_full | 12 ms | 4 ms | 3x of baseline | <= 10x | yes | 120 MiB |" in block
    # rows in the suite's case order: modal before import
    assert block.index("| modal_full") < block.index("| import")
