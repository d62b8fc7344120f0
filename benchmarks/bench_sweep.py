"""Parameter sweeps: 1,000 variants x 2,000 frequencies on a three-segment line.

For three kinds of sweep -- a point value (attachment mass), a geometry value
(length of the middle segment) and a damping value (loss factor of the line) --
times ``dl.sweep`` in one process against the plain baseline, a Python loop that
builds each variant from its model dict and calls ``dl.frf`` on it, and reports
variants per second per core and the ratio. Then the same sweep on a dask
``LocalCluster`` of two single-threaded worker processes (127.0.0.1), against
one local process: the target is a speed-up of at least 1.7x. Every result is
checked equal to the loop's.
"""

from __future__ import annotations

import copy
import os
import time

import numpy as np

import dampline as dl

from ._common import machine_report

N_VAR, N_FREQ = 1000, 2000


def scenario() -> dl.Line:
    """A stepped steel/aluminium/steel bar of our own, fixed at the left, with a clamp
    mass at 0.4 m and a uniform loss factor."""
    return dl.Line.from_dict({
        "title": "sweep benchmark bar", "kind": "axial",
        "segments": [{"length": 0.30, "E": 2.1e11, "rho": 7850.0, "area": 2.0e-4},
                     {"length": 0.20, "E": 7.0e10, "rho": 2700.0, "area": 3.0e-4},
                     {"length": 0.25, "E": 2.1e11, "rho": 7850.0, "area": 1.5e-4}],
        "ends": {"left": "fixed", "right": "free"},
        "attachments": [{"at": 0.40, "mass": 0.1}],
        "damping": {"model": "loss_factor", "eta": 0.01}})


def sweeps(n: int) -> dict:
    """The three sweeps, n values each: a point value, a geometry value, a damping value."""
    return {
        "attachment mass": ("attachments.0.mass", np.linspace(0.01, 1.0, n)),
        "segment length": ("segments.1.length", np.linspace(0.15, 0.30, n)),
        "loss factor": ("damping.eta", np.linspace(0.001, 0.05, n)),
    }


SWEEPS = sweeps(N_VAR)
DRIVE_AT, RESPONSE_AT = 0.1, [0.1, 0.6]


def _set(spec: dict, path: str, value: float) -> dict:
    spec = copy.deepcopy(spec)
    parts = path.split(".")
    node = spec
    for p in parts[:-1]:
        node = node[int(p)] if isinstance(node, list) else node[p]
    node[parts[-1]] = float(value)
    return spec


def _loop(line: dl.Line, path: str, values: np.ndarray, f: np.ndarray) -> np.ndarray:
    base = line.to_dict()
    return np.stack([np.asarray(dl.frf(dl.Line.from_dict(_set(base, path, v)), f,
                                       drive_at=DRIVE_AT, response_at=RESPONSE_AT))
                     for v in values])


def _timed(fn):
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def main(quick: bool = False) -> dict:
    """Run the benchmark (``quick``: 100 variants x 500 frequencies) and return, per
    sweep, the times, ratio, rate and largest difference, and the dask run's times."""
    global N_VAR, N_FREQ
    if quick:
        N_VAR, N_FREQ = 100, 500
    print(machine_report())
    print(f"load average at start: {os.getloadavg()[0]:.1f} (timings are noisy when it "
          f"exceeds the {os.cpu_count()} cores)")
    line = scenario()
    f = np.linspace(10.0, 20e3, N_FREQ)
    cases = sweeps(N_VAR)
    print(f"sweep of a three-segment bar: {N_VAR} variants x {N_FREQ} frequencies, "
          f"{len(RESPONSE_AT)} response points")
    # warm-up (imports, caches)
    dl.sweep(line, "damping.eta", [0.01, 0.02], f, drive_at=DRIVE_AT, response_at=RESPONSE_AT,
             progress=False)
    results = {}
    for name, (path, values) in cases.items():
        t_loop, ref = _timed(lambda: _loop(line, path, values, f))
        t_sw, sw = _timed(lambda: dl.sweep(line, path, values, f, drive_at=DRIVE_AT,
                                           response_at=RESPONSE_AT, progress=False))
        err = float(np.max(np.abs(sw.frf - ref) / np.abs(ref)))
        results[name] = {"t_loop": t_loop, "t_sweep": t_sw, "ratio": t_loop / t_sw,
                         "rate": N_VAR / t_sw, "rate_loop": N_VAR / t_loop, "err": err}
        print(f"  {name:16s} ({path}): sweep {N_VAR / t_sw:7.1f} variants/s/core, "
              f"loop of dl.frf {N_VAR / t_loop:7.1f} variants/s -> {t_loop / t_sw:4.2f}x; "
              f"max relative difference {err:.1e}")
    results["dask"] = _dask(line, f, cases["loss factor"])
    print(f"load average at end: {os.getloadavg()[0]:.1f}")
    return results


def _dask(line: dl.Line, f: np.ndarray, case: tuple) -> dict | None:
    try:
        from distributed import Client, LocalCluster
    except ImportError:
        print("  dask.distributed not installed: cluster run skipped")
        return None
    path, values = case
    kw = dict(drive_at=DRIVE_AT, response_at=RESPONSE_AT, progress=False)
    # the environment is left as it is: dask's nanny itself starts each worker with
    # single-threaded BLAS and MALLOC_TRIM_THRESHOLD_=65536 (its pre-spawn-environ)
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                      dashboard_address=None) as cluster, Client(cluster) as client:
        dl.sweep(line, path, values[:8], f, client=client, chunk=4, **kw)     # warm the workers
        # alternate the two runs and keep the best of each: other work on the machine
        # then biases neither
        t_local = t_dask = float("inf")
        for _ in range(2):
            t, local = _timed(lambda: dl.sweep(line, path, values, f, **kw))
            t_local = min(t_local, t)
            t, remote = _timed(lambda: dl.sweep(line, path, values, f, client=client, **kw))
            t_dask = min(t_dask, t)
    same = bool(np.array_equal(local.frf, remote.frf))
    print(f"  2-worker LocalCluster ({path}): {t_local:.2f} s in one process, {t_dask:.2f} s on "
          f"the cluster -> speed-up {t_local / t_dask:4.2f}x (target >= 1.7x); results "
          f"{'identical' if same else 'DIFFERENT'}")
    return {"t_local": t_local, "t_dask": t_dask, "speedup": t_local / t_dask, "identical": same}


if __name__ == "__main__":
    main()
