"""Kernel-side update times of the dashboard (no browser): a damping-slider move
(< 30 ms), a geometry change (< 300 ms) and construction (< 2 s), on the README's demo
scenario (the sensor mast) and on the horn, 4,000 frequencies, 200 points, 40 modes.

Measured by :func:`dampline.dashboard.latency.measure_scenario`. A damping move sent by
the browser takes the quick path (the modal curve and the field are redrawn at once,
the exact curve, table and coupling catch up when the drag pauses); a value assigned
from Python recomputes everything before it returns. Both are reported: the quick path
against the target, with the full update as its baseline, and the full update against
the same target.
"""

from __future__ import annotations

from pathlib import Path

from ._common import machine_report, row

SCENARIOS = Path(__file__).resolve().parent.parent / "dashboards" / "scenarios"
CASES = {"mast": "sensor_mast.toml", "horn": "horn.toml"}
TARGETS_MS = {"damping": 30.0, "geometry": 300.0, "construction": 2000.0}


def main(quick: bool = False) -> dict:
    from dampline.dashboard.latency import measure_scenario

    print(machine_report())
    out = {}
    for name, fname in CASES.items():
        r = measure_scenario(SCENARIOS / fname, moves=8 if quick else 20,
                             constructions=2 if quick else 4)
        print(f"dashboard, {fname}: 4000 frequencies, 200 points, 40 modes "
              f"({r['slider']} slider, {r['n_moves']} moves)")
        print(f"  construction: first {r['construction_first']:.0f} ms, median "
              f"{r['construction']:.0f} ms (target < 2 s)")
        print(f"  damping move from the browser (quick path): {r['quick']:.1f} ms; "
              f"catch-up after the pause {r['settle']:.1f} ms")
        parts = ", ".join(f"{k} {v:.1f}" for k, v in r["full_parts"].items())
        print(f"  damping move assigned from Python (full): {r['full']:.1f} ms (target < 30 ms; "
              f"{parts} ms)")
        print(f"  geometry change: {r['geometry']:.0f} ms, of which modes "
              f"{r['geometry_modes']:.0f} ms (target < 300 ms)")
        out[name] = r
    return out


def rows(quick: bool = False, **_) -> list[dict]:
    out = main(quick)
    result = []
    for name, r in out.items():
        ms = 1e-3
        result += [
            row(f"dashboard {name} damping quick", f"{name}: damping move from the browser, "
                "modal curve + field", r["quick"] * ms, t_baseline=r["full"] * ms,
                baseline="full update (Python assignment)", ratio=r["full"] / r["quick"],
                ratio_is="baseline / dampline", target="< 30 ms",
                met=r["quick"] < TARGETS_MS["damping"],
                notes=f"exact curve, table, coupling catch up in {r['settle']:.0f} ms"),
            row(f"dashboard {name} damping full", f"{name}: damping move assigned from Python, "
                "everything", r["full"] * ms, target="< 30 ms",
                met=r["full"] < TARGETS_MS["damping"],
                notes="of which " + ", ".join(f"{k} {v:.1f} ms" for k, v in
                                              r["full_parts"].items())),
            row(f"dashboard {name} geometry", f"{name}: segment length changed", r["geometry"] * ms,
                target="< 300 ms", met=r["geometry"] < TARGETS_MS["geometry"],
                notes=f"of which dl.modes {r['geometry_modes']:.0f} ms"),
            row(f"dashboard {name} construction", f"{name}: Dashboard(...) built",
                r["construction_first"] * ms, target="< 2 s",
                met=r["construction_first"] < TARGETS_MS["construction"],
                notes=f"first after imports; median of repeats {r['construction']:.0f} ms"),
        ]
    return result


if __name__ == "__main__":
    main()
