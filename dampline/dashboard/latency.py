"""Kernel-side latency of the dashboard's damping slider (no browser).

``python -m dampline.dashboard.latency [--moves 20]`` builds the demo horn
(3 segments, 4000 frequencies, 200 field points, 40 modes), moves the loss
factor slider from Python and prints the median time of each part of the
update: the modal curve (line rebuild + modal sum with the cached ModeSet +
marks), the exact curve, the modal table and coupling, the field, and the total.
"""

from __future__ import annotations

import argparse
import platform
import time

import numpy as np

import dampline as dl
from dampline.demo import HORN


def measure(moves: int = 20, n_freq: int = 4000, n_points: int = 200, modes: int = 40) -> dict:
    d = dl.Dashboard(dl.Line.from_dict(HORN), n_freq=n_freq, n_points=n_points, modes=modes)
    for v in (0.003, 0.004):          # warm-up moves are not counted
        d.controls["eta"].value = v
    for k in d.timings:
        d.timings[k].clear()
    wall = []
    for v in np.logspace(-3.5, -1.5, moves):
        t = time.perf_counter()
        d.controls["eta"].value = float(v)
        wall.append(time.perf_counter() - t)
    out = {k: float(np.median(v)) * 1e3 for k, v in d.timings.items() if v}
    out["assignment (wall)"] = float(np.median(wall)) * 1e3
    return out


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--moves", type=int, default=20)
    a = ap.parse_args(argv)
    res = measure(a.moves)
    print(f"machine: {platform.processor() or platform.machine()}, python {platform.python_version()}")
    for k, v in res.items():
        print(f"{k:>20s}: median {v:8.2f} ms")


if __name__ == "__main__":
    main()
