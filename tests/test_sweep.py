"""Parameter sweeps (dl.sweep).

References: every variant against a direct ``dl.frf`` call on the same edited model
(the public API computed one variant at a time, rtol 1e-10); the uniform fixed-free
bar against its closed forms f_n = (2n - 1) c / (4 L) and tip receptance
u/F = tan(k L) / (k E* A), E* = E (1 + i eta), k = w sqrt(rho / E*) (Rao, Mechanical
Vibrations, continuous systems; from memory, and re-derived in the test's comment);
a dask LocalCluster run against the local run (identical arrays).
"""

from __future__ import annotations

import importlib
import math
import os
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest

import dampline as dl

SCEN = Path(__file__).resolve().parents[1] / "dashboards" / "scenarios"
RTOL = 1e-10


def _frf_each(sw, freqs, **kw):
    return np.stack([np.asarray(dl.frf(sw.line(i), freqs, **kw)) for i in range(len(sw))])


def _assert_close(got, ref, rtol=RTOL):
    np.testing.assert_allclose(got, ref, rtol=rtol, atol=0.0)


# every kind: (scenario, path, values, drive_at, response_at, frequencies)
CASES = {
    # a longer tip segment moves the end attachment inside the line: two topologies
    "horn": ("horn.toml", "segments.2.length", [0.04, 0.043, 0.046], 0.02, [0.0, 0.07, 0.145],
             np.linspace(50.0, 60e3, 400)),
    "pump_shaft": ("pump_shaft.toml", "attachments.0.absorber.stiffness",
                   [1.0e5, 2.0e5, 4.0e5], 0.95, [0.0, 0.5, 0.95], np.linspace(5.0, 3000.0, 400)),
    "exhaust_pipe": ("exhaust_pipe.toml", "segments.1.section.diameter", [0.08, 0.12, 0.16],
                     0.0, [0.0, 0.9, 2.2], np.linspace(10.0, 1200.0, 400)),
    "sensor_mast": ("sensor_mast.toml", "ends.right.mass", [0.5, 1.8, 4.0], 0.9,
                    [0.3, 1.2, 1.8], np.linspace(1.0, 800.0, 400)),
}


@pytest.mark.parametrize("name", sorted(CASES))
def test_exact_sweep_equals_frf_per_variant(name):
    toml, path, values, xd, xr, f = CASES[name]
    line = dl.load(SCEN / toml)
    drive = "volume_velocity" if line.kind == "duct" else "force"
    sw = dl.sweep(line, path, values, f, drive_at=xd, response_at=xr, drive=drive, progress=False)
    assert sw.frf.shape == (3, f.size, len(xr))
    np.testing.assert_array_equal(sw.values[:, 0], values)
    ref = _frf_each(sw, f, drive_at=xd, response_at=xr, drive=drive)
    _assert_close(sw.frf, ref)
    # the edit landed where the path points
    for i, v in enumerate(values):
        node = sw.line(i).to_dict()
        for part in path.split("."):
            node = node[int(part)] if isinstance(node, list) else node[part]
        assert node == v


@pytest.mark.parametrize("quantity,drive", [("force", "force"), ("mobility", "velocity"),
                                            ("receptance", "force")])
def test_exact_sweep_quantities_interior_drive(quantity, drive):
    """Interior drive (the piece split around the load), end velocity, internal force."""
    line = dl.load(SCEN / "pump_shaft.toml")
    f = np.linspace(5.0, 2500.0, 300)
    xd = 0.0 if drive == "velocity" else 0.52
    xr = [0.1, 0.5, 0.55, 0.95]
    sw = dl.sweep(line, "segments.0.length", [0.35, 0.38, 0.42], f, drive_at=xd, response_at=xr,
                  drive=drive, quantity=quantity, progress=False)
    ref = _frf_each(sw, f, drive_at=xd, response_at=xr, drive=drive, quantity=quantity)
    _assert_close(sw.frf, ref)


def test_bending_sweep_moment_and_stress():
    line = dl.load(SCEN / "sensor_mast.toml")
    f = np.linspace(1.0, 600.0, 300)
    for q in ("moment", "stress", "rotation"):
        sw = dl.sweep(line, "segments.0.section.outer_diameter", [0.058, 0.06, 0.065], f,
                      drive_at=1.0, response_at=[0.1, 0.9, 1.05], quantity=q, progress=False)
        ref = _frf_each(sw, f, drive_at=1.0, response_at=[0.1, 0.9, 1.05], quantity=q)
        _assert_close(sw.frf, ref)


def test_moving_attachment_changes_topology():
    """An attachment moved along the line (onto a segment joint, an end, past the drive):
    each topology is solved in its own stack, each variant still equals dl.frf."""
    line = dl.load(SCEN / "horn.toml")
    f = np.linspace(50.0, 60e3, 300)
    at = [0.0, 0.03, 0.06, 0.08, 0.105, 0.13, 0.145]
    sw = dl.sweep(line, "attachments.0.at", at, f, drive_at=0.08, response_at=[0.02, 0.12],
                  progress=False)
    _assert_close(sw.frf, _frf_each(sw, f, drive_at=0.08, response_at=[0.02, 0.12]))


def test_string_modal_sweep_shares_modes():
    """Stay cable (modal damping: method 'modal'): sweeping the damper shares one
    ModeSet; each variant equals dl.frf computing its own modes."""
    line = dl.load(SCEN / "stay_cable.toml")
    f = np.linspace(0.5, 12.0, 300)
    kw = dict(drive_at=7.0, response_at=[1.5, 24.0])
    sw = dl.sweep(line, "attachments.0.dashpot", [3e4, 9e4, 2.7e5], f, method="modal",
                  modes=24, progress=False, **kw)
    ref = _frf_each(sw, f, method="modal", modes=24, **kw)
    _assert_close(sw.frf, ref)


def test_string_exact_sweep():
    spec = dl.load(SCEN / "stay_cable.toml").to_dict()
    spec["damping"] = {"model": "loss_factor", "eta": 0.002}
    line = dl.Line.from_dict(spec)
    f = np.linspace(0.5, 12.0, 300)
    sw = dl.sweep(line, "segments.0.tension", [2.0e6, 2.2e6, 2.4e6], f, drive_at=7.0,
                  response_at=[1.5, 24.0], progress=False)
    _assert_close(sw.frf, _frf_each(sw, f, drive_at=7.0, response_at=[1.5, 24.0]))


def _bar(L=1.0, eta=1e-3):
    return dl.Line.from_dict({
        "kind": "axial", "segments": [{"length": L, "E": 2.1e11, "rho": 7850.0, "area": 1e-4}],
        "ends": {"left": "fixed", "right": "free"},
        "damping": {"model": "loss_factor", "eta": eta}})


def test_undamped_line_and_static_limit_follow_frf():
    """A line without damping (resonances hit exactly) and 0 Hz on a held line: the
    sweep gives what dl.frf gives, including inf and the static limit."""
    import warnings
    c = math.sqrt(2.1e11 / 7850.0)
    f = np.concatenate([[0.0], np.linspace(100.0, 4000.0, 60), [c / 4.0, 3 * c / 4.0]])
    line = _bar(1.0, 0.0)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        sw = dl.sweep(line, "segments.0.length", [0.9, 1.0], f, drive_at=0.9,
                      response_at=[0.5, 0.9], progress=False)
        ref = _frf_each(sw, f, drive_at=0.9, response_at=[0.5, 0.9])
    _assert_close(sw.frf, ref)
    assert np.isfinite(sw.frf[:, 0]).all()           # 0 Hz: the static receptance


def test_grid_and_paired_modes():
    line = dl.load(SCEN / "horn.toml")
    f = np.linspace(1e3, 50e3, 200)
    a, b = [0.002, 0.004, 0.008], [0.001, 0.003]
    grid = dl.sweep(line, ["attachments.0.mass", "damping.eta"], [a, b], f, response_at=[0.0],
                    progress=False)
    assert grid.values.shape == (6, 2)
    expected = [(x, y) for x in a for y in b]          # first path slowest
    np.testing.assert_array_equal(grid.values, expected)
    _assert_close(grid.frf, _frf_each(grid, f, response_at=[0.0]))
    paired = dl.sweep(line, ["attachments.0.mass", "damping.eta"], [a, [0.001, 0.002, 0.004]],
                      f, response_at=[0.0], mode="paired", progress=False)
    np.testing.assert_array_equal(paired.values, np.column_stack([a, [0.001, 0.002, 0.004]]))
    _assert_close(paired.frf, _frf_each(paired, f, response_at=[0.0]))
    with pytest.raises(dl.ModelError, match="paired"):
        dl.sweep(line, ["attachments.0.mass", "damping.eta"], [a, b], f, mode="paired")


def test_fixed_free_bar_closed_form():
    """Length sweep of a uniform fixed-free bar: natural frequencies (2n - 1) c / (4 L),
    the tip receptance tan(k L) / (k E* A) at every frequency, the first peak at f_1,
    and the resonance margin against the closest closed-form frequency."""
    E, rho, A, eta = 2.1e11, 7850.0, 1e-4, 1e-3
    c = math.sqrt(E / rho)
    lengths = np.array([0.8, 0.9, 1.0, 1.1, 1.25])
    f = np.linspace(200.0, 4000.0, 3801)           # 1 Hz steps
    sw = dl.sweep(_bar(1.0, eta), "segments.0.length", lengths, f, drive_at=lengths.min(),
                  response_at=[lengths.min()], progress=False)
    # drive and response at x = 0.8 m: for L = 0.8 that is the tip
    w = 2 * math.pi * f
    Es = E * (1 + 1j * eta)
    k = w * np.sqrt(rho / Es)
    # u(x) = a sin(k x) with E* A u'(L) = F at the tip: u(L)/F = tan(k L) / (k E* A)
    tip = np.tan(k * 0.8) / (k * Es * A)
    np.testing.assert_allclose(sw.frf[0, :, 0], tip, rtol=1e-9)
    fn = sw.natural_frequencies(3)
    closed = (2 * np.arange(1, 4) - 1)[None, :] * c / (4 * lengths[:, None])
    np.testing.assert_allclose(fn, closed, rtol=1e-9)
    fe = 1500.0
    pk = sw.peaks(excitation=fe)
    # closest closed-form resonance to the excitation and its margin
    n = np.arange(1, 40)
    fc = (2 * n[None, :] - 1) * c / (4 * lengths[:, None])
    near = fc[np.arange(len(lengths)), np.argmin(np.abs(fc - fe), axis=1)]
    np.testing.assert_allclose(pk.natural_frequency, near, rtol=1e-9)
    np.testing.assert_allclose(pk.margin, (near - fe) / fe * 100.0, rtol=1e-8)
    # the lowest peak of each variant sits at f_1 (hysteretic damping: the peak is at
    # w_n exactly for one mode; 1 Hz sampling with parabolic refinement)
    for i, L in enumerate(lengths):
        pf, lv = pk.of(i, 0)
        assert abs(pf[0] - c / (4 * L)) < 0.5
    assert np.all(np.isfinite(pk.highest(0)))


@pytest.mark.parametrize("path,values,unit,words", [
    ("segments.3.length", [1.0], "m", "out of range"),
    ("segments.0.lenght", [1.0], "", "lenght"),
    ("kind", [1.0], "", "not a number"),
    ("ends.right.spring", [1e5], "N/m", "not a table"),
    ("segments.0.length", [-0.5], "m", "positive"),
    ("damping.eta", [0.01, float("nan")], "(loss factor)", "finite"),
    ("attachments.0.at", [5.0], "m", "off the line"),
])
def test_bad_path_or_value(path, values, unit, words):
    line = dl.load(SCEN / "horn.toml")
    with pytest.raises(dl.ModelError) as info:
        dl.sweep(line, path, values, [1000.0])
    err = info.value
    assert err.key == path
    assert err.unit == unit
    assert words in str(err)


def test_bad_request_is_a_model_error():
    line = dl.load(SCEN / "horn.toml")
    with pytest.raises(dl.ModelError, match="response_at") as info:
        # the shortest variant leaves the response point off its end
        dl.sweep(_bar(), "segments.0.length", [1.0, 0.5], [1000.0], response_at=[0.9])
    assert info.value.key == "segments.0.length" and info.value.value == 0.5
    with pytest.raises(dl.ModelError, match="mode"):
        dl.sweep(line, "damping.eta", [0.01], [1000.0], mode="diagonal")
    with pytest.raises(dl.ModelError, match="values"):
        dl.sweep(line, ["damping.eta", "attachments.0.mass"], [[0.01]], [1000.0])
    with pytest.raises(dl.ModelError, match="modal"):
        dl.sweep(dl.load(SCEN / "stay_cable.toml"), "damping.zeta", [0.01], [1.0])


def test_request_checked_on_the_variants_not_the_base():
    """A response point past the base line's end but on every swept variant is fine."""
    f = np.linspace(100.0, 3000.0, 40)
    sw = dl.sweep(_bar(0.8), "segments.0.length", [1.0, 1.2], f, drive_at=0.9,
                  response_at=[0.95], progress=False)
    _assert_close(sw.frf, _frf_each(sw, f, drive_at=0.9, response_at=[0.95]))


def test_csv_header_has_units(tmp_path):
    line = _bar()
    f = np.linspace(100.0, 2000.0, 20)
    sw = dl.sweep(line, ["segments.0.length", "segments.0.E"], [[0.9, 1.0], [2.0e11]], f,
                  drive_at=0.9, response_at=[0.5, 0.9], progress=False)
    out = sw.to_csv(tmp_path / "sweep.csv")
    lines = Path(out).read_text().splitlines()
    assert lines[0].startswith("#")
    head = lines[1].split(",")
    assert head[:3] == ["segments.0.length [m]", "segments.0.E [Pa]", "frequency [Hz]"]
    assert "real H at 0.5 m [m/N]" in head and "level H at 0.9 m [dB re 1 m/N]" in head
    rows = np.loadtxt(out, delimiter=",", skiprows=2)
    assert rows.shape == (2 * 20, 3 + 2 * 4)
    np.testing.assert_allclose(rows[:, 3] + 1j * rows[:, 4], sw.frf[:, :, 0].ravel(), rtol=1e-9)
    peaks_csv = sw.peaks().to_csv(tmp_path / "peaks.csv")
    assert peaks_csv.splitlines()[0].split(",")[1] == "segments.0.length [m]"
    assert "frequency [Hz]" in peaks_csv.splitlines()[0]
    assert not list(tmp_path.glob(".*.tmp"))          # atomic write left no temporary


def test_chunking_and_progress(capsys):
    line = _bar()
    f = np.linspace(100.0, 3000.0, 50)
    vals = np.linspace(0.5, 1.5, 7)
    whole = dl.sweep(line, "segments.0.length", vals, f, drive_at=0.5, response_at=[0.5],
                     progress=False)
    capsys.readouterr()
    parts = dl.sweep(line, "segments.0.length", vals, f, drive_at=0.5, response_at=[0.5],
                     chunk=2, progress=True)
    np.testing.assert_array_equal(parts.frf, whole.frf)
    assert "4/4 chunks" in capsys.readouterr().err
    dl.sweep(line, "segments.0.length", vals, f, drive_at=0.5, response_at=[0.5], chunk=2,
             progress=False)
    assert capsys.readouterr().err == ""
    with pytest.raises(dl.ModelError, match="chunk"):
        dl.sweep(line, "segments.0.length", vals, f, drive_at=0.5, chunk=0)


def test_sweep_paths_list_every_number_with_its_unit():
    line = dl.load(SCEN / "pump_shaft.toml")
    paths = dl.studies.sweep_paths(line)
    assert paths["segments.1.section.inner_diameter"] == "m"
    assert paths["attachments.0.absorber.mass"] == "kg m^2"      # torsion: inertia
    assert paths["segments.0.G"] == "Pa"
    assert "kind" not in paths and "ends.left" not in paths
    # every listed path is sweepable as it stands
    spec = line.to_dict()
    for p in paths:
        node = spec
        for part in p.split("."):
            node = node[int(part)] if isinstance(node, list) else node[part]
        assert isinstance(node, float)


def test_dask_cluster_identical():
    distributed = pytest.importorskip("distributed")
    line = dl.load(SCEN / "pump_shaft.toml")
    f = np.linspace(5.0, 2000.0, 200)
    vals = np.linspace(1e5, 4e5, 8)
    kw = dict(drive_at=0.52, response_at=[0.0, 0.95], progress=False, chunk=3)
    local = dl.sweep(line, "attachments.0.absorber.stiffness", vals, f, **kw)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        remote = dl.sweep(line, "attachments.0.absorber.stiffness", vals, f, client=client, **kw)
        with pytest.raises(dl.ModelError, match="absorber.stiffness"):
            dl.sweep(line, "attachments.0.absorber.stiffness", [-1.0], f, client=client, **kw)
        # a bad variant in a later chunk is checked on a worker: the same message as
        # the local check gives, naming that variant
        bad = np.r_[vals[:5], -2.0]
        with pytest.raises(dl.ModelError) as remote_err:
            dl.sweep(line, "attachments.0.absorber.stiffness", bad, f, client=client, **kw)
    with pytest.raises(dl.ModelError) as local_err:
        dl.sweep(line, "attachments.0.absorber.stiffness", bad, f, **kw)
    assert str(remote_err.value) == str(local_err.value)
    assert "-2" in str(local_err.value)
    np.testing.assert_array_equal(remote.frf, local.frf)
    np.testing.assert_array_equal(remote.values, local.values)


def test_heap_setting_only_where_the_environment_fixed_it():
    """dask workers start with MALLOC_TRIM_THRESHOLD_ set, which fixes glibc's mmap
    threshold; only then does a chunk raise the thresholds, and it puts them back.
    Run in child processes: the allocator settings are process-wide."""
    script = textwrap.dedent("""
        import importlib
        sw = importlib.import_module("dampline.studies.sweep")
        with sw._heap_kept() as h:
            active = h._libc is not None
            if active:
                mallopt, trim = h._libc
                calls = []
                h._libc = (lambda p, v: calls.append((p, v)) or mallopt(p, v), trim)
        print(active, calls if active else [])
    """)
    env = {k: v for k, v in os.environ.items() if not k.startswith("MALLOC_")}
    plain = subprocess.run([sys.executable, "-c", script], env=env, capture_output=True,
                           text=True, check=True).stdout.split(None, 1)
    assert plain[0] == "False"
    fixed = subprocess.run([sys.executable, "-c", script],
                           env={**env, "MALLOC_TRIM_THRESHOLD_": "65536"},
                           capture_output=True, text=True, check=True).stdout.split(None, 1)
    if fixed[0] == "False":
        pytest.skip("glibc's mallopt is not available here")
    sw = importlib.import_module("dampline.studies.sweep")
    # restored: the trim threshold to the environment's value, the mmap threshold to
    # glibc's fixed default
    assert fixed[1].strip() == str([(sw._M_TRIM_THRESHOLD, 65536),
                                    (sw._M_MMAP_THRESHOLD, 128 * 1024)])
