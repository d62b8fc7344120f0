"""Kernel-side latency of the dashboard (no browser).

``python -m dampline.dashboard.latency [--moves 20] [--scenario PATH ...]`` times, for
each scenario file (default: the sensor mast of the README demo and the horn), with
4000 frequencies, 200 field points and 40 modes:

* construction (the first after the widget libraries are imported, and the median of
  a few more);
* a damping-slider move sent by the browser (``set_state`` inside a running event
  loop): the quick path that redraws the modal curve and the field at once, and the
  catch-up of the exact curve, table and coupling once the drag pauses;
* a damping-slider move assigned from Python (everything recomputed before it returns);
* a geometry change (segment length: new modes, then everything).

Without ``--scenario`` it also prints the old per-part breakdown for the demo horn
(:func:`measure`).
"""

from __future__ import annotations

import argparse
import asyncio
import platform
import statistics
import time
from pathlib import Path

import numpy as np

import dampline as dl
from dampline.demo import HORN

#: the scenario files the command measures by default (README demo first)
SCENARIOS = ("sensor_mast.toml", "horn.toml")


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


def _damping_slider(d) -> tuple[str, np.ndarray]:
    """The damping slider the scenario's model uses and values to move it through."""
    model = d.line.damping.model
    if model == "modal":
        return "zeta", np.logspace(-2.5, -1.5, 8)
    if model == "rayleigh":
        b0 = float(d.controls["beta"].value) or float(d.controls["beta"].max) / 10
        return "beta", b0 * np.linspace(0.5, 1.5, 8)
    return "eta", np.logspace(-3.3, -1.7, 8)


def _ms(values) -> float:
    return float(statistics.median(values)) * 1e3


def measure_scenario(path, *, moves: int = 20, n_freq: int = 4000, n_points: int = 200,
                     modes: int = 40, constructions: int = 3) -> dict:
    """Kernel-side times (ms, medians) of one scenario file; see the module docstring.

    Keys: ``construction_first``, ``construction``, ``quick`` (browser move, modal curve
    and field), ``quick_wall`` (the whole ``set_state`` call), ``settle`` (catch-up after
    the drag pauses), ``full`` (Python assignment, wall), ``geometry`` (wall),
    ``geometry_modes`` (the ``dl.modes`` part), ``n_moves``.
    """
    from . import app                      # widget libraries imported before any timing

    t = time.perf_counter()
    d = dl.Dashboard(path, n_freq=n_freq, n_points=n_points, modes=modes)
    first = time.perf_counter() - t
    builds = []
    for _ in range(max(0, constructions - 1)):
        t = time.perf_counter()
        dl.Dashboard(path, n_freq=n_freq, n_points=n_points, modes=modes)
        builds.append(time.perf_counter() - t)
    name, base = _damping_slider(d)
    values = [float(v) for v in np.resize(base, moves + 2)]
    slider = d.controls[name]

    # assignment from Python: complete before it returns (two warm-up moves not counted)
    full = []
    for i, v in enumerate(values):
        if i == 2:
            for k in d.timings:
                d.timings[k].clear()
        t = time.perf_counter()
        slider.value = v
        if i >= 2:
            full.append(time.perf_counter() - t)
    # where the full update's time goes (medians of the dashboard's own timers)
    full_parts = {k: _ms(d.timings[k]) for k in ("modal", "exact", "tables", "field")
                  if d.timings[k]}

    # values sent by the browser, inside the kernel's running event loop
    for k in d.timings:
        d.timings[k].clear()
    quick_wall, settle = [], []

    drag_values = [v * 1.07 for v in values]     # each one differs from the current value

    async def drag():
        for v in drag_values:
            t = time.perf_counter()
            slider.set_state({"value": v})
            quick_wall.append(time.perf_counter() - t)
            await asyncio.sleep(0)
        n = len(d.timings["total"])
        await asyncio.sleep(3 * app.SETTLE_S)
        settle.extend(d.timings["total"][n:])

    asyncio.run(drag())
    quick = list(d.timings["quick"])
    if len(quick) != len(drag_values) or len(settle) != 1:
        raise RuntimeError(f"browser moves took the wrong path: {len(quick)} quick updates "
                           f"for {len(drag_values)} moves, {len(settle)} catch-ups")

    # geometry: the first segment's length, a few per cent either way
    key = "segments.0.length"
    L0 = float(d.controls[key].value)
    geometry = []
    d.timings["modes"].clear()
    for s in (1.02, 0.98, 1.01, 0.99, 1.03, 1.0)[: max(3, min(6, moves // 3))]:
        t = time.perf_counter()
        d.controls[key].value = L0 * s
        geometry.append(time.perf_counter() - t)
    return {"construction_first": first * 1e3,
            "construction": _ms([first] + builds),
            "quick": _ms(quick[1:] or quick), "quick_wall": _ms(quick_wall[1:] or quick_wall),
            "settle": _ms(settle), "full": _ms(full), "full_parts": full_parts,
            "geometry": _ms(geometry),
            "geometry_modes": _ms(d.timings["modes"]), "n_moves": len(values),
            "slider": name}


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--moves", type=int, default=20)
    ap.add_argument("--scenario", action="append", default=None,
                    help="a model TOML file (repeatable); default: the demo mast and the horn")
    a = ap.parse_args(argv)
    print(f"machine: {platform.processor() or platform.machine()}, python {platform.python_version()}")
    paths = a.scenario
    if paths is None:
        here = Path(__file__).resolve().parents[2] / "dashboards" / "scenarios"
        paths = [str(here / s) for s in SCENARIOS if (here / s).exists()]
        res = measure(a.moves)
        print("demo horn (dampline.demo.HORN), damping slider assigned from Python, parts:")
        for k, v in res.items():
            print(f"{k:>20s}: median {v:8.2f} ms")
    for p in paths:
        r = measure_scenario(p, moves=a.moves)
        print(f"{Path(p).name}: 4000 frequencies, 200 points, 40 modes ({r['slider']} slider)")
        print(f"  construction         : first {r['construction_first']:8.1f} ms, median "
              f"{r['construction']:8.1f} ms")
        print(f"  browser move, quick  : {r['quick']:8.2f} ms (set_state call "
              f"{r['quick_wall']:.2f} ms); catch-up after the pause {r['settle']:.2f} ms")
        parts = ", ".join(f"{k} {v:.1f}" for k, v in r["full_parts"].items())
        print(f"  Python assignment    : {r['full']:8.2f} ms (everything: {parts} ms)")
        print(f"  geometry change      : {r['geometry']:8.2f} ms (modes {r['geometry_modes']:.2f} ms)")


if __name__ == "__main__":
    main()
