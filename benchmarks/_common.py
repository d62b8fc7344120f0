"""Timing helpers and the machine report every benchmark prints first.

Importing this module loads no numpy or scipy (they are imported where used): the
suite's parent process stays small, because a child process started from it inherits
its peak resident set size as a floor of its own (Linux keeps it across exec).
"""

from __future__ import annotations

import gc
import os
import platform
import statistics
import sys
import time
import tracemalloc


def machine_report() -> str:
    import numpy as np
    import scipy

    threads = {k: os.environ[k] for k in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS",
                                          "MKL_NUM_THREADS") if k in os.environ}
    cpu = platform.processor() or platform.machine()
    try:
        with open("/proc/cpuinfo") as fh:
            for line in fh:
                if line.startswith("model name"):
                    cpu = line.split(":", 1)[1].strip()
                    break
    except OSError:
        pass
    return (f"machine: {cpu}, {os.cpu_count()} cores, {platform.system()} {platform.release()}\n"
            f"python {sys.version.split()[0]}, numpy {np.__version__}, scipy {scipy.__version__}"
            f"{', ' + str(threads) if threads else ''}")


def median_time(fn, repeats: int = 5) -> float:
    """Median wall time (s) of ``repeats`` calls after one warm-up call."""
    fn()
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def timed_runs(fn, repeats: int, warmup: bool = True) -> list[float]:
    """Wall times (s) of ``repeats`` calls of ``fn``; one untimed warm-up call first
    unless ``warmup`` is False (used for baselines that take seconds per call, where a
    warm-up only doubles the run time)."""
    if warmup:
        fn()
    times = []
    for _ in range(max(1, repeats)):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return times


def peak_alloc_mib(fn) -> float:
    """Peak memory (MiB) allocated during one call of ``fn``, result included, above
    what was allocated before it: tracemalloc, which numpy reports its array buffers to.
    Memory that BLAS/LAPACK or SuperLU allocate on their own is not seen."""
    gc.collect()
    tracemalloc.start()
    try:
        base = tracemalloc.get_traced_memory()[0]
        fn()
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    return (peak - base) / 2 ** 20


def row(case: str, what: str, t_dampline: float, *, t_baseline: float | None = None,
        baseline: str = "", ratio: float | None = None, ratio_is: str = "",
        target: str = "", met: bool | None = None, alloc_mib: float | None = None,
        notes: str = "", **extra) -> dict:
    """One line of the summary table (times in s). ``ratio_is`` says which way the
    ratio goes, e.g. "baseline / dampline" (a speed-up) or "dampline / baseline"."""
    out = {"case": case, "what": what, "t_dampline": t_dampline, "t_baseline": t_baseline,
           "baseline": baseline, "ratio": ratio, "ratio_is": ratio_is, "target": target,
           "met": met, "alloc_mib": alloc_mib, "notes": notes}
    out.update(extra)
    return out


def versions() -> dict:
    """Versions of the libraries the benchmarks use (those importable)."""
    import importlib
    out = {"python": sys.version.split()[0]}
    for name in ("dampline", "numpy", "scipy", "ipywidgets", "bqplot", "dask", "mpmath"):
        try:
            out[name] = importlib.import_module(name).__version__
        except Exception:                       # not installed: leave it out
            pass
    return out
