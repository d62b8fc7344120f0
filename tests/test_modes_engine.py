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
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest

import dampline as dl
from _reference_tools import check
from dampline.solve import beam

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
