"""``import dampline`` in a fresh interpreter (target < 0.3 s).

Each sample is a new ``python -c`` process that times its own import statement with
``time.perf_counter`` (interpreter start-up is not counted). The baseline is the
import of the libraries dampline cannot do without, ``numpy`` and ``scipy.linalg``,
timed the same way; samples alternate between the two so both see the same machine
load. Then one ``python -X importtime -c "import dampline"`` run lists the largest
cumulative costs.
"""

from __future__ import annotations

import statistics
import subprocess
import sys
from pathlib import Path

from ._common import machine_report, row

ROOT = Path(__file__).resolve().parent.parent
TARGET_S = 0.3
BASELINE = "numpy, scipy.linalg"
_CODE = ("import time; t = time.perf_counter(); import {mods}; "
         "print(time.perf_counter() - t)")


def import_time(mods: str) -> float:
    """Seconds the statement ``import <mods>`` takes in a fresh interpreter."""
    out = subprocess.run([sys.executable, "-c", _CODE.format(mods=mods)], cwd=ROOT,
                         capture_output=True, text=True, check=True)
    return float(out.stdout.strip())


def top_costs(n: int = 12) -> list[tuple[float, int, str]]:
    """(cumulative s, depth, module) of the ``n`` largest entries of -X importtime
    under ``import dampline``."""
    out = subprocess.run([sys.executable, "-X", "importtime", "-c", "import dampline"],
                         cwd=ROOT, capture_output=True, text=True, check=True)
    rows = []
    for line in out.stderr.splitlines():
        if not line.startswith("import time:") or "cumulative" in line:
            continue
        _self, cum, name = line[len("import time:"):].split("|")
        depth = (len(name) - len(name.lstrip())) // 2
        rows.append((int(cum) * 1e-6, depth, name.strip()))
    return sorted(rows, reverse=True)[:n]


def main(quick: bool = False) -> dict:
    print(machine_report())
    n = 3 if quick else 9
    t_dl, t_base = [], []
    for _ in range(n):
        t_dl.append(import_time("dampline"))
        t_base.append(import_time(BASELINE))
    t, tb = statistics.median(t_dl), statistics.median(t_base)
    print(f"import dampline, fresh interpreter, median of {n}: {t * 1e3:.0f} ms "
          f"(min {min(t_dl) * 1e3:.0f}); import {BASELINE}: {tb * 1e3:.0f} ms; "
          f"target < {TARGET_S * 1e3:.0f} ms")
    top = top_costs()
    print("  largest cumulative costs (python -X importtime, one run):")
    for cum, depth, name in top:
        print(f"    {cum * 1e3:8.1f} ms  {'  ' * depth}{name}")
    return {"t": t, "t_base": tb, "top": top}


def rows(quick: bool = False, **_) -> list[dict]:
    r = main(quick)
    heavy = [f"{name} {cum * 1e3:.0f} ms" for cum, _depth, name in r["top"]
             if not name.startswith("dampline")][:2]
    return [row("import", "import dampline, fresh interpreter", r["t"], t_baseline=r["t_base"],
                baseline=f"import {BASELINE}", ratio=r["t"] / r["t_base"],
                ratio_is="dampline / baseline", target=f"< {TARGET_S * 1e3:.0f} ms",
                met=r["t"] < TARGET_S,
                notes=f"largest: {', '.join(heavy) or '-'} (cumulative, one -X importtime run)")]


if __name__ == "__main__":
    main()
