"""Exact dynamic stiffness of a uniform Euler-Bernoulli piece, overflow-free.

On a piece of length h, EI w'''' = w^2 m w with beta^4 = w^2 m / EI (complex
with damping). The 4x4 dynamic stiffness relates the end forces and moments
applied to the piece, [F1, M1, F2, M2], to [w1, theta1, w2, theta2]
(theta = w'; F1 = EI w'''(0), M1 = -EI w''(0), F2 = -EI w'''(h), M2 = EI w''(h);
Banerjee, Computers & Structures 63, 1997; Doyle, Wave Propagation in
Structures, 1997).

The piece is split into its parts symmetric and antisymmetric about its middle,
each a 2x2 problem K = F D^{-1}, written in a basis that is well conditioned
in its range of lambda = beta h:

- |lambda| >= 2: exponentials decaying from each end,
  exp(-i beta x) +- exp(-i beta (h - x)) and exp(-beta x) +- exp(-beta (h - x)),
  with Re beta > 0 and Im beta <= 0 so that no term exceeds 1: cosh and sinh
  never appear, so nothing overflows however large and damped lambda gets;
- |lambda| < 2: the Krylov-Duncan functions C_m(z) = sum z^(4k+m)/(4k+m)!
  (C0 = (cosh + cos)/2, C1 = (sinh + sin)/2, ...) about the middle, summed as
  series, so the static limit keeps every digit (no 1 - cos cosh cancellation).
"""

from __future__ import annotations

import math

import numpy as np

SMALL = 2.0
_NTERMS = 8


def fourth_root(x: np.ndarray) -> np.ndarray:
    """beta = x^(1/4), principal branch: for passive damping arg x is in (-pi, 0], so
    Re beta > 0 and Im beta <= 0 and every basis exponential is bounded by 1."""
    return np.power(np.asarray(x, dtype=complex), 0.25)


#: 1/(4k+m)!: row m, column k, of the Krylov-Duncan series C_m(z) = z^m sum_k z^(4k) / (4k+m)!
_KCOEF = np.array([[1.0 / math.factorial(4 * k + m) for k in range(_NTERMS)] for m in range(4)])


def _krylov(z: np.ndarray) -> list[np.ndarray]:
    """C0..C3 at z (|z| < 1), by their series: the powers z^(4k) are formed once and
    all four series are one small real-by-complex product."""
    z = np.asarray(z, dtype=complex)
    z2 = z * z
    z4 = z2 * z2
    P = np.empty((_NTERMS,) + z.shape, dtype=complex)
    P[0] = 1.0
    for k in range(1, _NTERMS):
        np.multiply(P[k - 1], z4, out=P[k])
    S = np.tensordot(_KCOEF, P, axes=1)
    return [S[0], z * S[1], z2 * S[2], z2 * z * S[3]]


def _inv2(p, q, r, s):
    det = p * s - q * r
    return s / det, -q / det, -r / det, p / det


def _mul2(A, B):
    a0, a1, a2, a3 = A
    b0, b1, b2, b3 = B
    return (a0 * b0 + a1 * b2, a0 * b1 + a1 * b3, a2 * b0 + a3 * b2, a2 * b1 + a3 * b3)


def _regimes(*arrays):
    """Broadcast, flatten, and split the indices by |beta h| regime."""
    arrs = np.broadcast_arrays(*arrays)
    shape = arrs[0].shape
    flat = [np.asarray(a, dtype=complex).ravel() for a in arrs]
    return shape, flat


def _parts(EI, beta, h):
    """(Ds, Fs, Da, Fa) as 4-tuples of arrays (row-major 2x2); each regime is evaluated
    only where it applies."""
    shape, (b1, lam) = _regimes(beta, beta * h)
    small = np.abs(lam) < SMALL
    out = [np.empty(lam.size, dtype=complex) for _ in range(16)]
    iL = np.flatnonzero(~small)
    if iL.size:
        bb, ll = b1[iL], lam[iL]
        b2, b3 = bb * bb, bb * bb * bb
        a = np.exp(-1j * ll)
        b = np.exp(-ll)
        vals = (1 + a, 1 + b, -1j * bb * (1 - a), -bb * (1 - b),                    # Ds
                1j * b3 * (1 - a), -b3 * (1 - b), b2 * (1 + a), -b2 * (1 + b),      # Fs
                1 - a, 1 - b, -1j * bb * (1 + a), -bb * (1 + b),                    # Da
                1j * b3 * (1 + a), -b3 * (1 + b), b2 * (1 - a), -b2 * (1 - b))      # Fa
        for o, v in zip(out, vals):
            o[iL] = v
    iS = np.flatnonzero(small)
    if iS.size:
        bb = b1[iS]
        b2, b3 = bb * bb, bb * bb * bb
        c0, c1, c2, c3 = _krylov(0.5 * lam[iS])
        vals = (c0, c2, -bb * c3, -bb * c1,
                -b3 * c1, -b3 * c3, -b2 * c2, -b2 * c0,
                -c1, -c3, bb * c0, bb * c2,
                b3 * c2, b3 * c0, b2 * c3, b2 * c1)
        for o, v in zip(out, vals):
            o[iS] = v
    out = [o.reshape(shape) for o in out]
    Ds, Fs, Da, Fa = out[0:4], out[4:8], out[8:12], out[12:16]
    return tuple(Ds), tuple(EI * f for f in Fs), tuple(Da), tuple(EI * f for f in Fa)


def piece_stiffness(EI, beta, h):
    """The 4x4 exact dynamic stiffness, as an array (..., 4, 4) over the input shape."""
    Ds, Fs, Da, Fa = _parts(EI, beta, h)
    Ks = _mul2(Fs, _inv2(*Ds))
    Ka = _mul2(Fa, _inv2(*Da))
    s00, s01, s10, s11 = Ks
    a00, a01, a10, a11 = Ka
    K = np.empty(np.shape(s00) + (4, 4), dtype=complex)
    K[..., 0, :] = np.stack([s00 + a00, s01 + a01, s00 - a00, -s01 + a01], -1) / 2
    K[..., 1, :] = np.stack([s10 + a10, s11 + a11, s10 - a10, -s11 + a11], -1) / 2
    K[..., 2, :] = np.stack([s00 - a00, s01 - a01, s00 + a00, -s01 - a01], -1) / 2
    K[..., 3, :] = np.stack([-s10 + a10, -s11 + a11, -s10 - a10, s11 + a11], -1) / 2
    return K


def _basis(beta, h, x, order):
    """The four basis functions (sym a, sym b, anti a, anti b) or their x-derivative
    of ``order`` at local x; each regime evaluated only where it applies."""
    shape, (bb, hh, xx) = _regimes(beta, h, x)
    lam = bb * hh
    small = np.abs(lam) < SMALL
    out = [np.empty(lam.size, dtype=complex) for _ in range(4)]
    iL = np.flatnonzero(~small)
    if iL.size:
        # exp(-i beta x), exp(-i beta (h-x)), exp(-beta x), exp(-beta (h-x)), all <= 1
        b, x_, h_ = bb[iL], xx[iL], hh[iL]
        e1 = np.exp(-1j * b * x_)
        e2 = np.exp(-1j * b * (h_ - x_))
        e3 = np.exp(-b * x_)
        e4 = np.exp(-b * (h_ - x_))
        f1, f2, f3 = (-1j) ** order, (1j) ** order, (-1.0) ** order
        bo = b ** order
        for o, v in zip(out, (f1 * e1 + f2 * e2, f3 * e3 + e4, f1 * e1 - f2 * e2, f3 * e3 - e4)):
            o[iL] = bo * v
    iS = np.flatnonzero(small)
    if iS.size:
        # C_m(beta (x - h/2)); d/dx C_m = beta C_(m-1), C_(-1) = C3
        b = bb[iS]
        C = _krylov(b * (xx[iS] - 0.5 * hh[iS]))
        bo = b ** order
        for o, m in zip(out, (0, 2, 1, 3)):
            o[iS] = bo * C[(m - order) % 4]
    return tuple(o.reshape(shape) for o in out)


def coefficients(EI, beta, h, u):
    """Basis coefficients (sym a, sym b, anti a, anti b) of a piece with nodal values
    u = (w1, th1, w2, th2): from the symmetric and antisymmetric halves."""
    Ds, _Fs, Da, _Fa = _parts(EI, beta, h)
    w1, t1, w2, t2 = u
    Ws, Ts, Wa, Ta = (w1 + w2) / 2, (t1 - t2) / 2, (w1 - w2) / 2, (t1 + t2) / 2
    i0, i1, i2, i3 = _inv2(*Ds)
    j0, j1, j2, j3 = _inv2(*Da)
    return (i0 * Ws + i1 * Ts, i2 * Ws + i3 * Ts, j0 * Wa + j1 * Ta, j2 * Wa + j3 * Ta)


def interior(EI, beta, h, x, u, order):
    """w^(order)(x) inside a piece with nodal values u = (w1, th1, w2, th2) (each an array)."""
    c = coefficients(EI, beta, h, u)
    B = _basis(beta, h, x, order)
    return c[0] * B[0] + c[1] * B[1] + c[2] * B[2] + c[3] * B[3]


def clamped_count(lam: np.ndarray) -> np.ndarray:
    """Natural frequencies of a clamped-clamped piece below the one where beta h = lam
    (real lam >= 0): j - (1 - (-1)^j sgn(1 - cosh lam cos lam)) / 2, j = floor(lam / pi)
    (Wittrick and Williams 1971), with sgn(1 - cosh cos) = sgn(sech - cos)."""
    j = np.floor(lam / math.pi)
    sech = np.where(lam > 700.0, 0.0, 1.0 / np.cosh(np.minimum(lam, 700.0)))
    sg = np.sign(sech - np.cos(lam))
    return j - (1.0 - (-1.0) ** j * sg) / 2.0
