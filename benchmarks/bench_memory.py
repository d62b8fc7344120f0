"""A long request: the exact FRF of a 3-segment axial line at 100,000 frequencies x
1,000 points, which must stay under 2 GB peak memory (2e9 bytes = 1907 MiB).

The answer alone is 1e8 complex numbers, 1526 MiB; the engine solves it in frequency
chunks (``dampline.solve.exact.CHUNK_ENTRIES``) written into that one output array, so
the temporaries stay small. Each run is a fresh interpreter that imports dampline,
makes the call and reports its own peak resident set size (``getrusage(RUSAGE_SELF)
.ru_maxrss``: everything the process held at its peak, interpreter and libraries
included). The baseline line is the same fresh interpreter with dampline imported and
the output array allocated and filled (``np.ones``), nothing solved: the least any
implementation could hold.
"""

from __future__ import annotations

import json
import statistics
import subprocess
import sys
from pathlib import Path

from ._common import machine_report, row

ROOT = Path(__file__).resolve().parent.parent
N_FREQ, N_POINTS = 100_000, 1_000
LIMIT_MIB = 2e9 / 2 ** 20

_SCRIPT = r"""
import json, resource, sys, time
import numpy as np
import dampline as dl
n_freq, n_points, solve = int(sys.argv[1]), int(sys.argv[2]), sys.argv[3] == "solve"
line = dl.load(sys.argv[4])
f = np.linspace(1e3, 1e5, n_freq)
x = np.linspace(0.0, line.length, n_points)
t = time.perf_counter()
if solve:
    H = np.asarray(dl.frf(line, f, drive_at=line.length, response_at=x, method="exact"))
    finite = bool(np.isfinite(H).all())
else:
    H = np.ones((n_freq, n_points), dtype=complex)
    finite = True
dt = time.perf_counter() - t
print(json.dumps({"t": dt, "maxrss_mib": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
                  "shape": list(H.shape), "nbytes": H.nbytes, "finite": finite}))
"""


def one_run(solve: bool, n_freq: int = N_FREQ, n_points: int = N_POINTS) -> dict:
    path = ROOT / "dashboards" / "scenarios" / "horn.toml"
    out = subprocess.run([sys.executable, "-c", _SCRIPT, str(n_freq), str(n_points),
                          "solve" if solve else "fill", str(path)],
                         cwd=ROOT, capture_output=True, text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main(quick: bool = False) -> dict:
    print(machine_report())
    n = 1 if quick else 3
    runs = [one_run(True) for _ in range(n)]
    base = one_run(False)
    t = statistics.median(r["t"] for r in runs)
    rss = max(r["maxrss_mib"] for r in runs)
    out_mib = runs[0]["nbytes"] / 2 ** 20
    print(f"exact FRF of the 3-segment horn, {N_FREQ} frequencies x {N_POINTS} points "
          f"(output {out_mib:.0f} MiB), fresh interpreter per run, {n} run(s):")
    print(f"  time {t:.1f} s (median), peak RSS {rss:.0f} MiB (max); all finite: "
          f"{all(r['finite'] for r in runs)}")
    print(f"  baseline (dampline imported, output array filled, nothing solved): "
          f"peak RSS {base['maxrss_mib']:.0f} MiB")
    print(f"  limit 2 GB = {LIMIT_MIB:.0f} MiB: {'met' if rss < LIMIT_MIB else 'NOT met'}")
    return {"t": t, "rss_mib": rss, "base_rss_mib": base["maxrss_mib"], "out_mib": out_mib,
            "finite": all(r["finite"] for r in runs)}


def rows(quick: bool = False, **_) -> list[dict]:
    r = main(quick)
    return [row("memory", f"exact FRF, 3-segment axial, {N_FREQ:,} f x {N_POINTS:,} points",
                r["t"], baseline="interpreter + output array only (memory)",
                target="peak RSS < 2 GB", met=r["rss_mib"] < LIMIT_MIB and r["finite"],
                rss_mib=r["rss_mib"],
                notes=(f"peak RSS {r['rss_mib']:.0f} MiB in its own process; output alone "
                       f"{r['out_mib']:.0f} MiB; least possible {r['base_rss_mib']:.0f} MiB"))]


if __name__ == "__main__":
    main()
