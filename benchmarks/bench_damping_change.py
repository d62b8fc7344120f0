"""A damping-only change with the modes reused: rebuild the line with a new loss
factor, then its modal and exact FRF at 4,000 frequencies (target < 30 ms).

What a damping slider costs once the undamped modes of a geometry are known: the
line is rebuilt from its model dict (validated again), the modal FRF is re-summed
with the cached ``ModeSet`` (``coupling="full"``, the default, with the residual),
and the exact FRF is solved afresh (it has no modes to reuse). Two of our scenarios:
the 3-segment titanium horn (axial, a dashpot mounting ring: non-proportional
damping) and the 2-segment tubular sensor mast (bending). 40 modes, the dashboard's
band (0.3 f_1 to 1.5 f_10 of the elastic modes), drive and response at the free end.

Baseline: the same update with the modes computed again (what it costs without
reuse); the ratio says what reuse buys.
"""

from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np

import dampline as dl

from ._common import machine_report, median_time, peak_alloc_mib, row

SCENARIOS = Path(__file__).resolve().parent.parent / "dashboards" / "scenarios"
CASES = {"axial horn, 3 segments": "horn.toml", "bending mast, 2 segments": "sensor_mast.toml"}
N_FREQ, N_MODES = 4000, 40
TARGET_S = 0.030
ETAS = (0.001, 0.002, 0.004, 0.008, 0.016)


def setup(path: Path, n_freq: int = N_FREQ, n_modes: int = N_MODES):
    """(model dict, ModeSet, frequencies Hz, drive/response position m)."""
    line = dl.load(path)
    ms = dl.modes(line, n_modes)
    el = ms.frequencies[ms.frequencies > 0]
    f = np.linspace(0.3 * el[0], 1.5 * el[min(9, el.size - 1)], n_freq)
    return line.to_dict(), ms, f, line.length


def update(spec: dict, eta: float, ms, f, x, *, reuse: bool = True):
    """Rebuild with loss factor ``eta``; modal FRF (cached or recomputed modes) and exact
    FRF at ``x``. Returns (modal, exact)."""
    new = dict(spec, damping=dict(spec.get("damping", {}), model="loss_factor", eta=eta))
    line = dl.Line.from_dict(new)
    if not reuse:
        ms = dl.modes(line, ms.count)
    modal = dl.frf(line, f, drive_at=x, response_at=[x], method="modal", modes=ms)
    exact = dl.frf(line, f, drive_at=x, response_at=[x])
    return modal, exact


def run(name: str, path: Path, quick: bool = False) -> dict:
    spec, ms, f, x = setup(path)
    etas = itertools.cycle(ETAS)
    n_rep = 5 if quick else 21
    t_dl = median_time(lambda: update(spec, next(etas), ms, f, x), repeats=n_rep)
    t_base = median_time(lambda: update(spec, next(etas), ms, f, x, reuse=False),
                         repeats=3 if quick else 7)
    alloc = peak_alloc_mib(lambda: update(spec, 0.003, ms, f, x))
    # the parts, once each, for the printout
    line = dl.Line.from_dict(dict(spec, damping=dict(spec.get("damping", {}), eta=0.003)))
    parts = {}
    for label, fn in (("rebuild", lambda: dl.Line.from_dict(spec)),
                      ("modal", lambda: dl.frf(line, f, drive_at=x, response_at=[x],
                                               method="modal", modes=ms)),
                      ("exact", lambda: dl.frf(line, f, drive_at=x, response_at=[x]))):
        parts[label] = median_time(fn, repeats=3 if quick else 9)
    modal, exact = update(spec, 0.003, ms, f, x)
    err_db = float(dl.studies.local_db_error(np.asarray(modal), np.asarray(exact), f).max())
    print(f"{name}: {N_FREQ} frequencies {f[0]:.0f}-{f[-1]:.0f} Hz, {N_MODES} modes reused")
    print(f"  update (rebuild + modal + exact): {t_dl * 1e3:7.2f} ms  (rebuild "
          f"{parts['rebuild'] * 1e3:.2f}, modal {parts['modal'] * 1e3:.2f}, exact "
          f"{parts['exact'] * 1e3:.2f} ms); target < {TARGET_S * 1e3:.0f} ms")
    print(f"  with the modes recomputed:        {t_base * 1e3:7.2f} ms  ({t_base / t_dl:.1f}x)")
    print(f"  modal vs exact: {err_db:.2f} dB (local-level error, modal truncation)")
    return {"t": t_dl, "t_base": t_base, "parts": parts, "alloc_mib": alloc, "err_db": err_db}


def main(quick: bool = False) -> dict:
    print(machine_report())
    return {name: run(name, SCENARIOS / fname, quick) for name, fname in CASES.items()}


def rows(quick: bool = False, **_) -> list[dict]:
    out = main(quick)
    return [row(f"damping_change {name.split(',')[0]}",
                f"new eta, modal + exact FRF, {name}, {N_FREQ} f", r["t"],
                t_baseline=r["t_base"], baseline="the same with the modes recomputed",
                ratio=r["t_base"] / r["t"], ratio_is="baseline / dampline",
                target=f"< {TARGET_S * 1e3:.0f} ms", met=r["t"] < TARGET_S,
                alloc_mib=r["alloc_mib"],
                notes=(f"modal {r['parts']['modal'] * 1e3:.1f} ms, exact "
                       f"{r['parts']['exact'] * 1e3:.1f} ms, rebuild "
                       f"{r['parts']['rebuild'] * 1e3:.1f} ms"))
            for name, r in out.items()]


if __name__ == "__main__":
    main()
