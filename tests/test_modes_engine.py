"""Pieces of the natural-frequency engine checked on their own.

1. The exact dynamic mass of a bending piece, ``beam.piece_mass``, against
   (a) its definition, the integral of m w(x)^2 over the piece for the exact field w
   with the given end values, by mpmath quadrature, and (b) minus the w^2-derivative of
   an independently written exact stiffness, by mpmath differentiation. Both
   references use the classical Krylov-Duncan solution of EI w'''' = w^2 m w at 50
   digits, not dampline's formulas.
2. Near-rigid modes of a bar held by a soft end spring, where the piece stiffnesses
   E A / h exceed the spring by 1e4-1e6: the roots of the closed-form frequency
   equation (free at x = 0, spring k at x = L: u = cos(beta x), E A u'(L) + k u(L) = 0,
   so beta L tan(beta L) = k L / (E A); Rao, Mechanical Vibrations, the end-spring bar)
   found by mpmath.
3. The quadratic form x^T K(w) x of the Rayleigh functional, summed piece by piece
   (``modes._energy``), for nearly rigid motions of a line with a very short piece,
   against the same form of the mpmath stiffness of item 1 at 60 digits; and a stepped
   cantilever with a 2 mm segment against the roots of its transfer-matrix frequency
   determinant (Krylov-Duncan functions per segment, clamped-free boundary minor) found
   by mpmath.
4. The count of negative eigenvalues by LDL^T without pivoting with its growth check
   (``modes._checked_negcount``) against LAPACK's eigenvalues, and the banded
   Householder QR (``modes._band_qr``) against LAPACK's QR and solve.
"""

from __future__ import annotations

import importlib
import math

import mpmath as mp
import numpy as np
import pytest

import dampline as dl
from _reference_tools import check, scan_roots
from dampline.solve import beam

# the module (``dampline.solve.modes`` is also the name of the function it exports)
engine = importlib.import_module("dampline.solve.modes")

EI, M_LEN, H = 2.3, 1.7, 0.7          # N m^2, kg/m, m


def _krylov_field(b, h):
    """(end-value map, field) of the exact solution w(x) = A S + B T + C U + D V of
    EI w'''' = w^2 m w with S, T, U, V = (cosh + cos) / 2, (sinh + sin) / 2,
    (cosh - cos) / 2, (sinh - sin) / 2 of beta x, at mp precision."""
    def funcs(z):
        ch, sh, c, s = mp.cosh(z), mp.sinh(z), mp.cos(z), mp.sin(z)
        return (ch + c) / 2, (sh + s) / 2, (ch - c) / 2, (sh - s) / 2

    S, T, U, V = funcs(b * h)
    # [w(0), w'(0), w(h), w'(h)] = E [A, B, C, D]
    E = mp.matrix([[1, 0, 0, 0], [0, b, 0, 0], [S, T, U, V], [b * V, b * S, b * T, b * U]])
    return E, funcs


def _stiffness_mp(b, h, ei):
    """The 4x4 exact dynamic stiffness [F1, M1, F2, M2] = K [w1, th1, w2, th2] with
    F1 = EI w'''(0), M1 = -EI w''(0), F2 = -EI w'''(h), M2 = EI w''(h)."""
    E, funcs = _krylov_field(b, h)
    S, T, U, V = funcs(b * h)
    # w'' = b^2 (A U + B V + C S + D T), w''' = b^3 (A T + B U + C V + D S)
    F = mp.matrix([[0, 0, 0, ei * b ** 3], [0, 0, -ei * b ** 2, 0],
                   [-ei * b ** 3 * T, -ei * b ** 3 * U, -ei * b ** 3 * V, -ei * b ** 3 * S],
                   [ei * b ** 2 * U, ei * b ** 2 * V, ei * b ** 2 * S, ei * b ** 2 * T]])
    return F * E ** -1


@pytest.mark.parametrize("lam", [1e-3, 0.4, 1.9, 2.1, 7.0, 40.0])
def test_piece_mass_is_the_integral_of_m_w_squared(lam):
    # v^T M u = int m w_v w_u dx for the exact fields of end values v, u: the quadrature
    # of the Krylov-Duncan field (its terms reach cosh(lam), hence the extra digits)
    b = lam / H
    got = beam.piece_mass(EI, M_LEN, np.array([b]), H)[0]
    with mp.workdps(50 + int(lam / 2.3)):
        bb, hh = mp.mpf(b), mp.mpf(H)
        E, funcs = _krylov_field(bb, hh)
        coef = E ** -1                               # columns: the four shape functions

        def shape(x):
            s = funcs(bb * x)
            return [mp.fsum(s[r] * coef[r, j] for r in range(4)) for j in range(4)]

        ref = np.empty((4, 4))
        for i in range(4):
            for j in range(i, 4):
                val = M_LEN * mp.quad(lambda x: shape(x)[i] * shape(x)[j],
                                      mp.linspace(0, hh, 9))
                ref[i, j] = ref[j, i] = float(val)
    check(f"piece mass = int m N N^T (mpmath quadrature), beta h = {lam}", got, ref, rtol=0,
          atol=2e-14 * np.abs(ref).max())


@pytest.mark.parametrize("lam", [1e-3, 0.4, 2.1, 7.0, 40.0])
def test_piece_mass_is_minus_the_stiffness_slope(lam):
    # M = -dK/d(w^2) = -(m / (4 EI beta^3)) dK/d(beta) (Richards and Leung, J. Sound
    # Vib. 55, 1977), the derivative of the mpmath stiffness taken by mpmath
    b = lam / H
    got = beam.piece_mass(EI, M_LEN, np.array([b]), H)[0]
    with mp.workdps(60 + int(lam / 2.3)):
        dK = mp.diff(lambda bb: _stiffness_mp(bb, mp.mpf(H), mp.mpf(EI)), mp.mpf(b))
        ref = -np.array(dK.tolist(), dtype=float) * M_LEN / (4 * EI * b ** 3)
    check(f"piece mass = -dK/d(w^2) (mpmath), beta h = {lam}", got, ref, rtol=0,
          atol=2e-14 * np.abs(ref).max())


@pytest.mark.parametrize("spring_ratio", [1e-6, 1e-4, 1e-2])
def test_bar_on_a_soft_spring(spring_ratio):
    # three equal steel segments, free left end, spring k = ratio E A / L at the right:
    # the first mode is nearly a rigid motion on the spring
    E, rho, A, L = 2.0e11, 7850.0, 1.0e-4, 3.0
    k = spring_ratio * E * A / L
    seg = {"length": L / 3, "E": E, "rho": rho, "area": A}
    line = dl.Line.from_dict({"kind": "axial", "segments": [seg] * 3,
                              "ends": {"left": "free", "right": {"spring": k, "mass": 0.0}}})
    count = 6
    got = dl.natural_frequencies(line, count)
    c = math.sqrt(E / rho)
    with mp.workdps(40):
        r = mp.mpf(spring_ratio)
        g = lambda z: z * mp.sin(z) - r * mp.cos(z)          # z tan z = r without poles
        roots = [mp.findroot(g, mp.sqrt(r) if n == 0 else n * mp.pi + r / (n * mp.pi))
                 for n in range(count)]
        ref = np.array([float(z * c / (L * 2 * mp.pi)) for z in roots])
    check(f"bar on a spring k L / EA = {spring_ratio:g}: f_n (closed form, mpmath)", got, ref,
          rtol=1e-13)
    # the first mode alone, asked for on its own, is the same number
    check("first mode asked for alone", dl.natural_frequencies(line, 1), got[:1], rtol=1e-14)


# ======================================================================================
# 3. The Rayleigh functional of a line with a very short piece
# ======================================================================================
@pytest.mark.parametrize("f_hz", [0.3, 40.0, 2.0e3])
def test_energy_of_nearly_rigid_motions_against_mpmath(f_hz):
    # a free-free line of 0.6 m, 1 mm and 0.5 m (pieces down to 0.38 mm: EI / h^3 of the
    # short ones is ~1e10 times that of the long ones). Rigid translation and rotation
    # plus a small bending field: x^T K x is then of the size of the inertia terms, far
    # below the stiffness entries of the short pieces, which cancel in an assembled form
    E, rho, A, I = 2.1e11, 7850.0, 4.0e-4, 3.0e-8
    segs = [{"length": L_, "E": E, "rho": rho, "area": A, "I": I} for L_ in (0.6, 1e-3, 0.5)]
    line = dl.Line.from_dict({"kind": "bending", "segments": segs,
                              "ends": {"left": "free", "right": "free"}})
    mesh = engine._Counter(line).mesh
    x = mesh.x
    rng = np.random.default_rng(3)
    X = np.zeros((4, mesh.n_dof))
    for r in range(4):
        a, b = rng.normal(size=2)
        bend = 1e-6 * rng.normal(size=(2, x.size))
        X[r, 0::2] = a + b * x + bend[0]
        X[r, 1::2] = b + bend[1]
    w = np.full(4, 2 * math.pi * f_hz)
    got, _mag = engine._energy(mesh, w, X)
    ref = np.empty(4)
    with mp.workdps(60):
        ww = mp.mpf(w[0])
        ei, m = mp.mpf(E) * mp.mpf(I), mp.mpf(rho) * mp.mpf(A)
        b = mp.root(ww * ww * m / ei, 4)
        for r in range(4):
            tot = mp.mpf(0)
            for p, hp in enumerate(mesh.piece_h):
                K = _stiffness_mp(b, mp.mpf(hp), ei)
                u = [mp.mpf(v) for v in X[r, 2 * p:2 * p + 4]]
                tot += mp.fsum(u[i] * K[i, j] * u[j] for i in range(4) for j in range(4))
            ref[r] = float(tot)
    # (the assembled form x^T (K x) is off by ~5e-5 here)
    check(f"x^T K x of nearly rigid motions, f = {f_hz:g} Hz (mpmath stiffness)", got, ref,
          rtol=1e-11)


def _stepped_cantilever_delta(props):
    """Frequency determinant g(w, lib) of a clamped-free beam of uniform segments
    (length, EI, m): the boundary minor (bending moment, shear) at the free end of the
    two fields started at the clamped end, carried by the Krylov-Duncan transfer matrix
    of each segment (state w, w', EI w'', EI w'''); scaled by exp(-sum beta L), entire
    in w^2: no poles."""
    def g(w, lib):
        one = w * 0 + 1
        c1 = [0 * one, 0 * one, one, 0 * one]
        c2 = [0 * one, 0 * one, 0 * one, one]
        zt = 0 * one
        for length, ei, m in props:
            b = (w * w * m / ei) ** 0.25 if lib is np else mp.root(w * w * m / ei, 4)
            z = b * length
            zt = zt + z
            ch, sh, c, s = lib.cosh(z), lib.sinh(z), lib.cos(z), lib.sin(z)
            S, T, U, V = (ch + c) / 2, (sh + s) / 2, (ch - c) / 2, (sh - s) / 2
            Tm = [[S, T / b, U / (b * b * ei), V / (b ** 3 * ei)],
                  [b * V, S, T / (b * ei), U / (b * b * ei)],
                  [ei * b * b * U, ei * b * V, S, T / b],
                  [ei * b ** 3 * T, ei * b * b * U, b * V, S]]
            c1 = [sum(Tm[i][j] * c1[j] for j in range(4)) for i in range(4)]
            c2 = [sum(Tm[i][j] * c2[j] for j in range(4)) for i in range(4)]
        return (c1[2] * c2[3] - c2[2] * c1[3]) * lib.exp(-zt)
    return g


def test_stepped_cantilever_with_a_2_mm_segment():
    # steel 0.8 m, a 2 mm collar (4x the second moment), aluminium 0.9 m: the collar's
    # pieces are ~1e9 times stiffer than the rest, the case where the roots were once
    # resolved only to ~(L / h)^3 eps
    segs = [(0.8, 2.1e11, 7850.0, 4.0e-4, 3.0e-8), (2e-3, 2.1e11, 7850.0, 8.0e-4, 1.2e-7),
            (0.9, 7.0e10, 2700.0, 4.0e-4, 3.0e-8)]
    line = dl.Line.from_dict({
        "kind": "bending", "ends": {"left": "clamped", "right": "free"},
        "segments": [{"length": L_, "E": E_, "rho": r_, "area": A_, "I": I_}
                     for L_, E_, r_, A_, I_ in segs]})
    count = 8
    got = dl.natural_frequencies(line, count)
    props = [(L_, E_ * I_, r_ * A_) for L_, E_, r_, A_, I_ in segs]
    w = scan_roots(_stepped_cantilever_delta(props), 2 * math.pi * 1.2 * got[-1], count,
                   n_grid=20000, dps=40)
    check("stepped cantilever with a 2 mm collar: f_n (transfer-matrix determinant, mpmath)",
          got, w / (2 * math.pi), rtol=1e-11)


# ======================================================================================
# 4. The certifying count and the banded QR against LAPACK
# ======================================================================================
def test_checked_count_against_lapack_eigenvalues():
    # random symmetric matrices of half-bandwidth 3, every fourth with a nearly singular
    # leading 6x6 block (its last pivot ~1e-13): where the growth check trusts the LDL^T
    # count it equals the number of negative eigenvalues from LAPACK; the nearly singular
    # ones are not trusted
    rng = np.random.default_rng(5)
    nb, n, bw = 400, 24, 3
    A = np.zeros((nb, n, n))
    for k in range(bw + 1):
        i = np.arange(n - k)
        v = rng.normal(size=(nb, n - k))
        A[:, i, i + k] = v
        A[:, i + k, i] = v
    bad = np.arange(0, nb, 4)
    lead = A[bad, :5, :5]
    A[bad, 5, 5] = np.einsum("fi,fi->f", A[bad, 5, :5],
                             np.linalg.solve(lead, A[bad, :5, 5][..., None])[..., 0]) + 1e-13
    ref = (np.linalg.eigvalsh(A) < 0.0).sum(axis=1)
    neg, trusted = engine._checked_negcount(A.copy(), bw)
    assert np.array_equal(neg[trusted], ref[trusted])
    assert not trusted[bad].any()
    assert trusted.mean() > 0.5


def test_banded_qr_against_lapack():
    rng = np.random.default_rng(8)
    nb, n, bw = 30, 17, 3
    A = np.zeros((nb, n, n))
    for k in range(-bw, bw + 1):
        i = np.arange(max(0, -k), min(n, n - k))
        A[:, i, i + k] = rng.normal(size=(nb, i.size))
    R = A.copy()
    V, beta = engine._band_qr(R, bw)
    _q, R_ref = np.linalg.qr(A)
    check("banded QR: |R| (LAPACK)", np.abs(R), np.abs(R_ref), rtol=0, atol=1e-12)
    x = rng.normal(size=(nb, n))
    y = np.linalg.solve(np.triu(R), engine._apply_qt(V, beta, x)[..., None])[..., 0]
    check("banded QR: solution of A y = x (LAPACK)", y,
          np.linalg.solve(A, x[..., None])[..., 0], rtol=0, atol=1e-10 * np.abs(y).max())
