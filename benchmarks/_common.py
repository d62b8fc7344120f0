"""Timing helpers and the machine report every benchmark prints first."""

from __future__ import annotations

import os
import platform
import statistics
import sys
import time

import numpy as np
import scipy


def machine_report() -> str:
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
