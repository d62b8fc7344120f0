"""Small tools shared by the physics tests: a reporting assert, Gauss quadrature, a
bracketing root scan with mpmath and each kind's wave-equation coefficients. Nothing
here imports dampline."""

from __future__ import annotations

import mpmath as mp
import numpy as np

#: (label, measured error, fraction of the tolerance used) of every check run so far
MEASURED: list[tuple[str, float, float]] = []


def check(label: str, got, ref, *, rtol: float, atol: float = 0.0) -> None:
    """``np.testing.assert_allclose`` that also records and prints the measured error
    (``pytest -s``), so that one can see how much room each tolerance leaves.

    Printed: the largest elementwise relative error (over entries above 1e-3 of the
    largest reference entry when the check is absolute, ``rtol == 0``, relative to
    that largest entry) and the fraction of the tolerance used."""
    got = np.asarray(got)
    ref = np.asarray(ref)
    diff = np.abs(got - ref)
    mag = np.abs(ref)
    peak = float(mag.max()) if mag.size else 0.0
    if rtol > 0:
        nz = mag > 0
        rel = float((diff[nz] / mag[nz]).max()) if nz.any() else 0.0
    else:
        rel = float(diff.max() / peak) if peak > 0 else float(diff.max())
    used = float((diff / (atol + rtol * mag)).max()) if diff.size else 0.0
    MEASURED.append((label, rel, used))
    kind = "rel err" if rtol > 0 else "err/peak"
    print(f"\n[{label}] {kind} {rel:.2e}, tolerance used {used:.2e} "
          f"(rtol {rtol:.0e}, atol {atol:.1e})")
    np.testing.assert_allclose(got, ref, rtol=rtol, atol=atol, err_msg=label)


def gauss_points(bounds, order: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Legendre nodes and weights on every interval of ``bounds`` (sorted)."""
    t, w = np.polynomial.legendre.leggauss(order)
    xs, ws = [], []
    for a, b in zip(bounds[:-1], bounds[1:]):
        if b <= a:
            continue
        xs.append(0.5 * (b - a) * t + 0.5 * (a + b))
        ws.append(0.5 * (b - a) * w)
    return np.concatenate(xs), np.concatenate(ws)


def scan_roots(g, w_max: float, count: int, n_grid: int, w_min: float = 0.0,
               dense=(), dps: int = 30) -> np.ndarray:
    """The first ``count`` roots of ``g(w, lib)`` in (w_min, w_max]: sign changes on a
    uniform grid (plus optional dense sub-grids where roots crowd), each refined with
    mpmath's bracketing Anderson-Bjorck solver at ``dps`` digits. ``g`` must be
    continuous (write frequency equations without poles)."""
    grid = np.linspace(w_min, w_max, n_grid)[1:]
    grid = np.unique(np.concatenate([grid, *[np.asarray(d, float) for d in dense]]))
    grid = grid[(grid > w_min) & (grid <= w_max)]
    vals = g(grid, np)
    idx = np.flatnonzero(np.sign(vals[:-1]) * np.sign(vals[1:]) < 0)
    roots = []
    with mp.workdps(dps):
        for i in idx[:count]:
            a, b = mp.mpf(grid[i]), mp.mpf(grid[i + 1])
            r = mp.findroot(lambda w: g(w, mp), (a, b), solver="anderson")
            assert a <= r <= b, "root left its bracket"
            roots.append(float(r))
    assert len(roots) == count, f"scan found {len(roots)} of {count} roots: extend w_max"
    return np.array(roots)


#: air at 20 C (the duct segments' default fluid): density kg/m^3, sound speed m/s
AIR_RHO, AIR_C = 1.204, 343.2


def wave_coefficients(kind: str, seg: dict) -> tuple[float, float]:
    """(S, m) of a segment spec in the wave equation (S u')' + w^2 m u = 0 of its kind
    (for bending, E I and rho A of (E I w'')'' = w^2 rho A w): E A and rho A (axial),
    G J and rho J (torsion), T and mu (string), A / rho and A / (rho c^2) (duct, the
    analogue of a compliance; Kinsler et al., Fundamentals of Acoustics), E I and rho A."""
    if kind == "axial":
        return seg["E"] * seg["area"], seg["rho"] * seg["area"]
    if kind == "torsion":
        return seg["G"] * seg["J"], seg["rho"] * seg["J"]
    if kind == "string":
        return seg["tension"], seg["mass_per_length"]
    if kind == "duct":
        rho, c = seg.get("rho", AIR_RHO), seg.get("c", AIR_C)
        return seg["area"] / rho, seg["area"] / (rho * c ** 2)
    return seg["E"] * seg["I"], seg["rho"] * seg["area"]
