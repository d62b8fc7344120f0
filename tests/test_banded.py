"""Batched banded elimination with partial pivoting (dampline.solve.banded) and the
bending FRF it solves.

References, all computed here: LAPACK ``?gbsv`` through ``scipy.linalg.solve_banded``
and ``?gesv`` through ``np.linalg.solve``, one system at a time; a plain Gaussian
elimination without row interchanges, written here, to show which systems need them;
and the public ``dl.frf`` computed another way, with the dense LAPACK solve of the full
dynamic stiffness (absorber DOFs kept, held DOFs removed) in place of the banded one.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.linalg

import dampline as dl
from dampline.solve import beam, exact
from dampline.solve.banded import band_workspace, banded_solve, banded_solve_inplace

from _reference_tools import check


# ===================================================================== the solver
def _random_band(rng, batch, n, kl, ku):
    """Random complex band matrices in LAPACK's layout ab[:, ku + i - j, j] = A[i, j],
    with the places outside the matrix set to garbage (they must be ignored)."""
    return rng.normal(size=(batch, kl + ku + 1, n)) + 1j * rng.normal(size=(batch, kl + ku + 1, n))


def _dense(ab, kl, ku):
    """The dense (batch, n, n) matrices of band storage ab (batch, kl + ku + 1, n)."""
    batch, _, n = ab.shape
    A = np.zeros((batch, n, n), dtype=complex)
    for i in range(n):
        for j in range(max(0, i - kl), min(n, i + ku + 1)):
            A[:, i, j] = ab[:, ku + i - j, j]
    return A


def _lapack(ab, rhs, kl, ku):
    return np.array([scipy.linalg.solve_banded((kl, ku), ab[f], rhs[f]) for f in range(len(ab))])


def _no_pivoting(A, b):
    """Gaussian elimination without row interchanges (the reference that fails)."""
    A = A.astype(complex)
    b = b.astype(complex)
    n = len(b)
    for j in range(n - 1):
        m = A[j + 1:, j] / A[j, j]
        A[j + 1:, j:] -= m[:, None] * A[j, j:]
        b[j + 1:] -= m * b[j]
    x = np.zeros(n, dtype=complex)
    for j in range(n - 1, -1, -1):
        x[j] = (b[j] - A[j, j + 1:] @ x[j + 1:]) / A[j, j]
    return x


@pytest.mark.parametrize("n,kl,ku", [(1, 0, 0), (1, 2, 3), (2, 3, 3), (5, 1, 1), (9, 1, 2),
                                     (12, 3, 3), (17, 2, 4), (8, 4, 1), (10, 0, 2), (10, 2, 0),
                                     (30, 3, 3)])
def test_banded_solve_equals_lapack_gbsv_per_system(n, kl, ku):
    rng = np.random.default_rng(n * 100 + kl * 10 + ku)
    ab = _random_band(rng, 24, n, kl, ku)
    ab[:, ku] += 4.0 * (kl == 0 or ku == 0)       # triangular bands: keep them regular
    rhs = rng.normal(size=(24, n)) + 1j * rng.normal(size=(24, n))
    x = banded_solve(ab, rhs, kl, ku)
    ref = _lapack(ab, rhs, kl, ku)
    cond = np.linalg.cond(_dense(ab, kl, ku))
    # backward stable: forward error within a few eps times the condition number
    err = np.abs(x - ref).max(axis=1) / np.abs(ref).max(axis=1)
    print(f"\n[n={n} kl={kl} ku={ku}] max err {err.max():.1e}, max cond {cond.max():.1e}")
    assert np.all(err <= 50 * np.finfo(float).eps * cond)


@pytest.mark.parametrize("scale", [0.0, 1e-13])
def test_pivoting_handles_zero_and_tiny_diagonals(scale):
    """A band whose diagonal is zero (elimination without interchanges divides by zero)
    or 1e-13 of the rest (it loses ~13 digits): the pivoted solve matches LAPACK's
    dense ``?gesv`` to rounding, the unpivoted one written here does not."""
    rng = np.random.default_rng(7)
    n, kl, ku, batch = 14, 3, 3, 16
    ab = _random_band(rng, batch, n, kl, ku)
    ab[:, ku] *= scale
    rhs = rng.normal(size=(batch, n)) + 1j * rng.normal(size=(batch, n))
    A = _dense(ab, kl, ku)
    ref = np.linalg.solve(A, rhs[..., None])[..., 0]
    x = banded_solve(ab, rhs, kl, ku)
    cond = np.linalg.cond(A)
    assert cond.max() < 1e6                           # well posed: only the order is bad
    check(f"pivoted band solve, diagonal x {scale:g}", x, ref, rtol=1e-12)
    with np.errstate(all="ignore"):
        plain = np.array([_no_pivoting(A[f], rhs[f]) for f in range(batch)])
    bad = ~np.isfinite(plain).all(axis=1) | (np.abs(plain - ref).max(axis=1)
                                             > 1e-6 * np.abs(ref).max(axis=1))
    assert bad.all()


def test_members_that_swap_and_members_that_do_not_in_one_batch():
    """One batch, three kinds of members: diagonally dominant (no interchange),
    zero diagonal (an interchange at every step) and random (some): every path of the
    per-member row swaps, each against LAPACK."""
    rng = np.random.default_rng(11)
    n, kl, ku = 11, 2, 3
    ab = _random_band(rng, 30, n, kl, ku)
    ab[:10, ku] += 20.0
    ab[10:20, ku] = 0.0
    rhs = rng.normal(size=(30, n)) + 1j * rng.normal(size=(30, n))
    check("mixed interchanges", banded_solve(ab, rhs, kl, ku), _lapack(ab, rhs, kl, ku),
          rtol=1e-12)
    # the same with every member needing the same interchange (whole-row swaps)
    ab[:, ku] = 0.0
    check("all interchange", banded_solve(ab, rhs, kl, ku), _lapack(ab, rhs, kl, ku),
          rtol=1e-12)


def test_block_pattern_inside_the_band():
    """2x2-block tridiagonal matrices (kl = ku = 3, a bending line's pattern) solved
    with the row extents given (``first``/``last``) and without: both equal LAPACK."""
    rng = np.random.default_rng(3)
    nodes, batch = 9, 20
    n, kb = 2 * nodes, 3
    A = np.zeros((batch, n, n), dtype=complex)
    for q in range(nodes - 1):
        blk = rng.normal(size=(batch, 4, 4)) + 1j * rng.normal(size=(batch, 4, 4))
        A[:, 2 * q:2 * q + 4, 2 * q:2 * q + 4] += blk
    A[:, ::2, ::2] *= 1e-3                            # make interchanges happen
    rhs = rng.normal(size=(batch, n)) + 1j * rng.normal(size=(batch, n))
    ref = np.linalg.solve(A, rhs[..., None])[..., 0]
    ab = np.zeros((batch, 2 * kb + 1, n), dtype=complex)
    for i in range(n):
        for j in range(max(0, i - kb), min(n, i + kb + 1)):
            ab[:, kb + i - j, j] = A[:, i, j]
    check("block band, full extents", banded_solve(ab, rhs, kb, kb), ref, rtol=1e-12)
    work = band_workspace(n, kb, kb, batch)
    for i in range(n):
        for j in range(max(0, i - kb), min(n, i + kb + 1)):
            work[i, j - i + kb] = A[:, i, j]
    node0 = 2 * (np.arange(n) // 2)
    x = banded_solve_inplace(work, np.array(rhs.T, order="C"), kb, kb,
                             first=node0 - 2, last=node0 + 3).T
    check("block band, block extents", x, ref, rtol=1e-12)


def test_singular_member_gives_non_finite_row_only():
    """A member with a zero column is singular: its row is inf or nan (the caller turns
    that into inf and a warning), the other members are unaffected."""
    rng = np.random.default_rng(5)
    n, kl, ku = 8, 2, 2
    ab = _random_band(rng, 5, n, kl, ku)
    j = 4
    for i in range(max(0, j - ku), min(n, j + kl + 1)):
        ab[2, ku + i - j, j] = 0.0
    rhs = rng.normal(size=(5, n)) + 1j * rng.normal(size=(5, n))
    x = banded_solve(ab, rhs, kl, ku)
    assert not np.isfinite(x[2]).all()
    keep = [0, 1, 3, 4]
    check("regular members beside a singular one", x[keep], _lapack(ab[keep], rhs[keep], kl, ku),
          rtol=1e-12)


def test_bad_shapes_are_refused():
    with pytest.raises(ValueError):
        banded_solve(np.zeros((2, 5, 4)), np.zeros((2, 4)), 1, 1)
    with pytest.raises(ValueError):
        banded_solve_inplace(np.zeros((4, 6, 2), dtype=complex), np.zeros((4, 2), dtype=complex),
                             1, 1)


# ====================================================== piece stiffness closed forms
@pytest.mark.parametrize("scale", [1e-4, 0.3, 1.9, 2.1, 8.0, 60.0, 3e3])
def test_piece_entries_equal_the_matrix_products(scale):
    """The closed forms behind the banded assembly against the 2x2 products
    K = F D^-1 of :func:`dampline.solve.beam.piece_stiffness`, both regimes and the
    static limit, damped; and exactly symmetric."""
    rng = np.random.default_rng(int(scale * 10))
    EI = 3.0e4 * (1 + 0.02j)
    beta = scale * rng.uniform(0.5, 1.5, (40, 3)) * np.exp(-1j * rng.uniform(0, 0.4, (40, 3)))
    h = np.array([0.2, 0.7, 1.3])
    K = beam.piece_stiffness(EI, beta, h)
    E = beam.piece_entries(EI, beta, h)
    got = np.stack([np.stack(row, -1) for row in E], -2)
    size = np.abs(K).max(axis=(-2, -1), keepdims=True)
    err = np.abs(got - K) / size
    print(f"\n[piece entries, |beta| ~ {scale:g}] max err / max entry {err.max():.1e}")
    assert err.max() <= 1e-12
    assert np.array_equal(got, np.swapaxes(got, -1, -2))


# =========================================================== bending FRF, both paths
E, RHO = 2.1e11, 7850.0


def _seg(length, area, I, eta=None):
    s = {"length": length, "E": E, "rho": RHO, "area": area, "I": I}
    if eta is not None:
        s["eta"] = eta
    return s


STEPPED = [_seg(0.6, 4e-4, 3e-8), _seg(0.45, 2.5e-4, 1.2e-8, eta=0.01), _seg(0.8, 5e-4, 5e-8)]
ABSORBER = {"at": 1.3, "absorber": {"mass": 0.4, "stiffness": 2.0e5, "damping": 12.0}}
ROTARY = {"at": 0.5, "mass": 0.8, "rot_inertia": 2e-3, "rot_spring": 150.0}
TABLE = {"mass": 1.2, "spring": 4.0e4, "dashpot": 3.0, "rot_spring": 900.0, "rot_inertia": 3e-3}


def _line(left, right, attachments=(ABSORBER, ROTARY), damping=None):
    segs = STEPPED if damping is None else [{k: v for k, v in s.items() if k != "eta"}
                                             for s in STEPPED]
    spec = {"kind": "bending", "segments": segs, "ends": {"left": left, "right": right},
            "attachments": list(attachments),
            "damping": damping or {"model": "loss_factor", "eta": 0.004}}
    return dl.Line.from_dict(spec)


#: 40 Hz to 6 kHz: the dynamic stiffness of these lines is mostly conditioned well enough
#: (cond < 1e7) for the two eliminations to agree to 1e-10; near 40 Hz cond reaches ~1e9
#: for some end pairs (below, see the mpmath test)
F = np.linspace(40.0, 6000.0, 300)


def _both(monkeypatch, line, f=F, **kw):
    banded = np.asarray(dl.frf(line, f, **kw))
    with monkeypatch.context() as m:
        m.setattr(exact, "_solve_banded", exact._solve_dense)
        dense = np.asarray(dl.frf(line, f, **kw))
    return banded, dense


CASES = {
    # (left, right, attachments, damping, frf keywords)
    "clamped-free, absorber and rotary inertia, tip force": (
        "clamped", "free", (ABSORBER, ROTARY), None,
        dict(drive_at=1.85, response_at=[0.2, 0.5, 1.3, 1.85])),
    "pinned-sliding, force inside a piece": (
        "pinned", "sliding", (ABSORBER, ROTARY), None,
        dict(drive_at=0.77, response_at=[0.0, 0.77, 1.1, 1.6], quantity="rotation")),
    "free-table, moment at an attachment": (
        "free", TABLE, (ABSORBER, ROTARY), None,
        dict(drive_at=0.5, drive="moment", response_at=[0.2, 0.5, 1.6, 1.85], quantity="moment")),
    "table-clamped, moment inside a piece, shear": (
        TABLE, "clamped", (ROTARY,), {"model": "rayleigh", "alpha": 2.0, "beta": 1e-6},
        dict(drive_at=1.02, drive="moment", response_at=[0.3, 1.02, 1.7], quantity="shear")),
    "sliding-pinned, velocity at the sliding end": (
        "sliding", "pinned", (ABSORBER,), None,
        dict(drive_at=0.0, drive="velocity", response_at=[0.0, 0.9, 1.6], quantity="mobility")),
    "pinned-clamped, velocity at the clamped end (a moving clamped base)": (
        "pinned", "clamped", (ABSORBER, ROTARY), None,
        dict(drive_at=1.85, drive="velocity", response_at=[0.4, 1.2], quantity="moment")),
    "table-free, velocity at the table end": (
        TABLE, "free", (ABSORBER,), None,
        dict(drive_at=0.0, drive="velocity", response_at=[0.3, 1.85], quantity="accelerance")),
    "free-free, no damping, off resonance": (
        "free", "free", (ROTARY,), {"model": "none"},
        dict(drive_at=1.85, response_at=[0.0, 1.0, 1.85])),
}


@pytest.mark.parametrize("name", list(CASES))
def test_bending_frf_banded_equals_dense(monkeypatch, name):
    left, right, atts, damping, kw = CASES[name]
    line = _line(left, right, atts, damping)
    f = F
    if damping == {"model": "none"}:
        # off its natural frequencies (1 %), where the undamped response is regular
        fn = dl.natural_frequencies(line, 40)
        f = F[np.abs(F[:, None] / fn[None, fn > 0] - 1).min(axis=1) > 0.01]
    banded, dense = _both(monkeypatch, line, f, **kw)
    assert np.isfinite(banded).all()
    # two backward-stable eliminations agree to about eps cond(K) (Higham, Accuracy and
    # Stability of Numerical Algorithms, 2nd ed., ch. 9): 1e-10, or more at the few
    # frequencies where the dynamic stiffness is that ill-conditioned
    rtol = np.maximum(1e-10, 10.0 * np.finfo(float).eps * _condition(line, f, kw))
    scale = np.abs(dense).max(axis=1, keepdims=True)
    err = np.abs(banded - dense) / np.maximum(np.abs(dense), 1e-3 * scale)
    assert np.all(err.max(axis=1) <= rtol), (name, float((err.max(axis=1) / rtol).max()))


def _condition(line, f, kw) -> np.ndarray:
    """2-norm condition number, per frequency, of the dynamic stiffness (held DOFs
    removed) on the mesh the FRF uses."""
    from dampline.solve.mesh import assemble, held_dofs
    w = 2.0 * math.pi * np.asarray(f)
    extra = (kw["drive_at"], *kw["response_at"])
    mesh = exact.mesh_avoiding_poles(line, w, extra)
    K, _ = assemble(mesh, w)
    held = set(held_dofs(mesh, (False, False)))
    keep = [i for i in range(K.shape[1]) if i not in held]
    return np.linalg.cond(K[:, keep][:, :, keep])


def test_sensor_mast_banded_equals_dense(monkeypatch):
    from pathlib import Path
    mast = dl.load(Path(__file__).resolve().parents[1] / "dashboards" / "scenarios"
                   / "sensor_mast.toml")
    f = np.linspace(1.0, 2000.0, 4000)
    banded, dense = _both(monkeypatch, mast, f, drive_at=mast.length,
                          response_at=[0.25, 1.0, mast.length])
    check("sensor mast", banded, dense, rtol=1e-10)


def test_undamped_absorber_exactly_at_its_frequency_falls_back_to_the_dense_solve():
    """Exactly at sqrt(k/m) an absorber without damping has an infinite apparent mass:
    condensed onto its node it divides by zero, so the banded path hands that frequency
    to the dense solve, which keeps the absorber's DOF and is regular there."""
    line = _line("clamped", "free", ({"at": 1.3, "absorber": {"mass": 1.0, "stiffness": 1.0}},))
    f0 = 1.0 / (2.0 * math.pi)                         # (2 pi f0)^2 m == k, to the bit
    f = np.array([0.8 * f0, f0, 1.3 * f0])
    w = 2.0 * math.pi * f
    assert w[1] * w[1] == 1.0
    xr = np.array([0.5, 1.3, 1.85])
    got = exact._exact(line, f, 1.85, xr, "force", "receptance", None)
    mesh = exact.mesh_avoiding_poles(line, w)
    rhs = np.zeros((3, mesh.n_dof), dtype=complex)
    rhs[:, 2 * mesh.node_at(1.85)] = 1.0
    U, S, k = exact._solve_dense(mesh, w, rhs, None, (False, False))
    ref = exact._response(mesh, w, S, k, U, xr, "receptance")
    assert np.isfinite(got).all()
    check("absorber frequency, banded with dense fallback", got, ref, rtol=1e-10)
    # the absorber pins its point there
    assert abs(got[1, 1]) <= 1e-12 * abs(got[1, 2])


@pytest.mark.parametrize("name,f_hz", [("free-free, no damping, off resonance", 0.5),
                                       ("free-free, no damping, off resonance", 1.0),
                                       ("pinned-sliding, force inside a piece", 4.64)])
def test_ill_conditioned_systems_are_solved_as_well_as_lapack(name, f_hz):
    """Near rigid-body motion (free-free at 0.5-1 Hz) or on a lightly damped resonance
    the dynamic stiffness has cond ~ 1e8-1e9, and the two eliminations differ by more
    than 1e-10. Against the same matrix solved by mpmath at 30 digits, the banded
    solution is within the backward-stable bound 20 eps cond (normwise), as is LAPACK's."""
    import mpmath as mp
    from dampline.solve import mesh as M
    left, right, atts, damping, kw = CASES[name]
    line = _line(left, right, atts, damping)
    w = np.array([2.0 * math.pi * f_hz])
    mesh = M.mesh_avoiding_poles(line, w)
    rhs = np.zeros((1, mesh.n_dof), dtype=complex)
    rhs[0, 2 * mesh.node_at(1.85)] = 1.0
    U_band = exact._solve_banded(mesh, w, rhs, None, (False, False))[0][0]
    U_dense = exact._solve_dense(mesh, w, rhs, None, (False, False))[0][0]
    K = M.assemble(mesh, w, damped=True)[0][0]
    free = M.free_dofs(mesh, M.held_dofs(mesh))
    Kf = K[np.ix_(free, free)]
    with mp.workdps(30):
        A = mp.matrix([[mp.mpc(v.real, v.imag) for v in row] for row in Kf])
        b = mp.matrix([mp.mpc(v.real, v.imag) for v in rhs[0, free]])
        ref = np.array([complex(v) for v in mp.lu_solve(A, b)])
    cond = np.linalg.cond(Kf)
    bound = 20 * np.finfo(float).eps * cond
    err = {k: np.linalg.norm(U[free] - ref) / np.linalg.norm(ref)
           for k, U in (("banded", U_band), ("dense", U_dense))}
    print(f"\n[{name} at {f_hz} Hz] cond {cond:.1e}: banded {err['banded']:.1e}, "
          f"LAPACK {err['dense']:.1e}, bound {bound:.1e}")
    assert cond > 1e7
    assert err["banded"] <= bound and err["dense"] <= bound
