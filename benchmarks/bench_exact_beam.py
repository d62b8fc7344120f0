"""Exact FRF of a 10-segment stepped beam at 4,000 frequencies against a per-frequency
sparse finite-element solve of the same beam converged to 1e-4.

The beam is the one of :mod:`benchmarks.bench_beam_modes` (ten steel and aluminium
steps, rectangular and round sections, clamped-free), with a loss factor of its own on
each segment (0.5-2 %). A unit force at the free tip; the receptance at the tip and at
two steps, 1 Hz to 10 kHz (the lowest 34 modes).

The baseline is what an engineer would hand-write in scipy (benchmarks/_beam_fe.py):
Hermite cubic elements, refined (elements per flexural wavelength at 10 kHz) until the
receptance agrees with the exact one to 1e-4 relative over the band, then one sparse
LU factorisation per frequency. Both are timed in the same run.

Accuracy of each: the chosen FE model against dampline, and dampline against a finer
FE model (twice the elements per wavelength, so 16 times less discretisation error).
The finer model's round-off grows like (L/h)^4 / (omega^2 scale) at low frequency --
the assembled K - w^2 M is then nearly singular relative to its largest element
stiffness -- so that check is printed over the whole band and over 1-10 kHz, where the
finer model's own error is its discretisation error.
"""

from __future__ import annotations

import statistics

import numpy as np

import dampline as dl

from . import bench_beam_modes
from ._beam_fe import BeamFE
from ._common import machine_report, median_time, peak_alloc_mib, row, timed_runs

F_MIN, F_MAX, N_FREQ = 1.0, 10e3, 4000
TARGET = 1e-4
ENDS = ("clamped", "free")
EPW = (10, 20, 30, 40, 50, 60)


def scenario() -> tuple[dl.Line, list[tuple[float, float, float, float]]]:
    """The stepped beam with per-segment loss factors; (length, EI, m, eta) per segment
    as plain floats for the FE model."""
    segs = bench_beam_modes.segments()
    rng = np.random.default_rng(5)
    for s in segs:
        s["eta"] = float(rng.uniform(0.005, 0.02))
    line = dl.Line.from_dict({"title": "stepped beam, clamped-free, lossy", "kind": "bending",
                              "segments": segs, "ends": {"left": ENDS[0], "right": ENDS[1]},
                              "damping": {"model": "loss_factor"}})
    props = [(s["length"], s["E"] * s["I"], s["rho"] * s["area"], s["eta"]) for s in segs]
    return line, props


def rel_err(H, ref) -> float:
    return float(np.max(np.abs(H - ref) / np.abs(ref)))


def converge(props, f_sub, H_sub, drive, resp, f_max=F_MAX, target=TARGET, epws=EPW,
             verbose=True):
    """The coarsest FE mesh in ``epws`` whose receptance is within ``target`` of H_sub."""
    for epw in epws:
        fe = BeamFE(props, ENDS, epw, f_max)
        err = rel_err(fe.frf(f_sub, drive, resp), H_sub)
        if verbose:
            print(f"  FE {epw:3d} elements/wavelength, {fe.n_dof:5d} DOF: max rel. error {err:.1e}")
        if err <= target:
            return epw, fe
    raise RuntimeError(f"no FE mesh up to {epws[-1]} elements/wavelength reached {target}")


def main(quick: bool = False) -> dict:
    print(machine_report())
    line, props = scenario()
    f = np.linspace(F_MIN, F_MAX, N_FREQ)
    L = line.length
    b = line.boundaries
    drive, resp = L, [L, b[3], b[7]]
    n_modes = int(np.sum(dl.natural_frequencies(line, 60) <= F_MAX))

    def run_dl():
        return dl.frf(line, f, drive_at=drive, response_at=resp)

    H = np.asarray(run_dl())
    t_dl = median_time(run_dl, repeats=3 if quick else 5)
    alloc = peak_alloc_mib(run_dl)

    epw, fe = converge(props, f[::10], H[::10], drive, resp)
    H_fe = fe.frf(f, drive, resp)
    err_fe = rel_err(H_fe, H)
    t_fe = statistics.median(timed_runs(lambda: fe.frf(f, drive, resp),
                                        repeats=1 if quick else 3, warmup=False))

    fine = BeamFE(props, ENDS, 2 * epw, F_MAX)
    chk = f[::20]
    H_fine = fine.frf(chk, drive, resp)
    err_dl = rel_err(H[::20], H_fine)
    high = chk >= 0.1 * F_MAX
    err_dl_high = rel_err(H[::20][high], H_fine[high])

    ratio = t_fe / t_dl
    print(f"exact FRF, 10-segment stepped beam ({n_modes} modes in {F_MIN:g} Hz-"
          f"{F_MAX / 1e3:g} kHz), {N_FREQ} frequencies, {len(resp)} response points:")
    print(f"  dampline exact : {t_dl * 1e3:8.1f} ms, peak allocation {alloc:.0f} MiB")
    print(f"  scipy Hermite FE, {fe.n_dof} DOF ({epw} el/wavelength), one splu per frequency: "
          f"{t_fe * 1e3:8.1f} ms   (error {err_fe:.1e} against exact)")
    print(f"  exact vs a {fine.n_dof}-DOF FE model ({2 * epw} el/wavelength): {err_dl:.1e} "
          f"over the band, {err_dl_high:.1e} over {0.1 * F_MAX / 1e3:g}-{F_MAX / 1e3:g} kHz "
          "(below, the finer model's round-off dominates)")
    print(f"  ratio FE / dampline: {ratio:.1f}x   (target >= 100x)")
    return {"t_dampline": t_dl, "t_fe": t_fe, "ratio": ratio, "err_fe": err_fe,
            "err_dl": err_dl, "err_dl_high": err_dl_high, "n_dof_fe": fe.n_dof, "epw": epw,
            "n_dof_fine": fine.n_dof, "alloc_mib": alloc, "n_modes_in_band": n_modes}


def rows(quick: bool = False, **_) -> list[dict]:
    r = main(quick)
    return [row("exact_beam", f"exact FRF, 10-segment stepped beam, {N_FREQ} f x 3 points",
                r["t_dampline"], t_baseline=r["t_fe"],
                baseline=f"Hermite FE, {r['n_dof_fe']} DOF, splu per frequency",
                ratio=r["ratio"], ratio_is="baseline / dampline", target=">= 100x",
                met=r["ratio"] >= 100, alloc_mib=r["alloc_mib"],
                notes=(f"FE vs exact {r['err_fe']:.1e}; exact vs 2x finer FE "
                       f"{r['err_dl_high']:.1e} (1-10 kHz), {r['err_dl']:.1e} (whole band)"))]


if __name__ == "__main__":
    main()
