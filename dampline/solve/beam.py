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
    """C0..C3 at z (|z| < 1), by their series in w = z^4, each evaluated by Horner's
    rule with its real coefficients (in place: a complex-by-real multiply and an add
    per term; five times faster than forming the powers and contracting them)."""
    z = np.asarray(z, dtype=complex)
    z2 = z * z
    w = z2 * z2
    out = []
    for m in range(4):
        c = _KCOEF[m]
        s = c[-1] * w
        for k in range(_NTERMS - 2, 0, -1):
            s += c[k]
            s *= w
        s += c[0]
        out.append(s)
    out[1] *= z
    out[2] *= z2
    out[3] *= z2
    out[3] *= z
    return out


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


def _parts(EI, beta, h, forces: bool = True):
    """(Ds, Fs, Da, Fa) as 4-tuples of arrays (row-major 2x2); each regime is evaluated
    only where it applies. ``forces=False`` skips Fs and Fa (returned as None): the
    interior field needs only the displacement bases."""
    shape, (b1, lam) = _regimes(beta, beta * h)
    small = np.abs(lam) < SMALL
    nout = 16 if forces else 8
    out = [np.empty(lam.size, dtype=complex) for _ in range(nout)]
    iL = np.flatnonzero(~small)
    if iL.size:
        bb, ll = b1[iL], lam[iL]
        a = np.exp(-1j * ll)
        b = np.exp(-ll)
        vals = (1 + a, 1 + b, -1j * bb * (1 - a), -bb * (1 - b),                    # Ds
                1 - a, 1 - b, -1j * bb * (1 + a), -bb * (1 + b))                    # Da
        if forces:
            b2, b3 = bb * bb, bb * bb * bb
            vals += (1j * b3 * (1 - a), -b3 * (1 - b), b2 * (1 + a), -b2 * (1 + b),  # Fs
                     1j * b3 * (1 + a), -b3 * (1 + b), b2 * (1 - a), -b2 * (1 - b))  # Fa
        for o, v in zip(out, vals):
            o[iL] = v
    iS = np.flatnonzero(small)
    if iS.size:
        bb = b1[iS]
        c0, c1, c2, c3 = _krylov(0.5 * lam[iS])
        vals = (c0, c2, -bb * c3, -bb * c1,
                -c1, -c3, bb * c0, bb * c2)
        if forces:
            b2, b3 = bb * bb, bb * bb * bb
            vals += (-b3 * c1, -b3 * c3, -b2 * c2, -b2 * c0,
                     b3 * c2, b3 * c0, b2 * c3, b2 * c1)
        for o, v in zip(out, vals):
            o[iS] = v
    out = [o.reshape(shape) for o in out]
    Ds, Da = tuple(out[0:4]), tuple(out[4:8])
    if not forces:
        return Ds, None, Da, None
    Fs, Fa = out[8:12], out[12:16]
    return Ds, tuple(EI * f for f in Fs), Da, tuple(EI * f for f in Fa)


def _halves(EI, beta, h, scale=1.0):
    """Entries (00, 01, 11) of the symmetric and the antisymmetric 2x2 stiffness
    K = F D^{-1} (each symmetric), the products written out in closed form in each
    regime, times ``scale``, as six arrays of the broadcast input shape.

    |lambda| >= 2, with P, Q = 1 -+ exp(-i lambda) and R, T = 1 -+ exp(-lambda)
    (the antisymmetric half swaps P <-> Q and R <-> T)::

        D = i P T - Q R,   K00 = -2 i EI beta^3 P R / D,
        K01 = -EI beta^2 (i P T + Q R) / D,   K11 = -2 EI beta Q T / D;

    |lambda| < 2, with C_m = C_m(lambda / 2), X = C1^2 - C3^2, Y = C0^2 - C2^2,
    E = C0 C1 - C2 C3, G = C0 C3 - C1 C2::

        symmetric:      K00 = -EI beta^3 X / E,  K01 = EI beta^2 G / E,  K11 = EI beta Y / E
        antisymmetric:  K00 = -EI beta^3 Y / G,  K01 = -EI beta^2 E / G, K11 = -EI beta X / G
    """
    shape, (b1, lam, ei) = _regimes(beta, beta * h, EI)
    small = np.flatnonzero(np.abs(lam) < SMALL)
    if small.size == lam.size:
        out = _halves_small(b1, lam, ei, scale)
    else:
        # the large-|lambda| forms on every entry (those of the small ones, inaccurate or
        # not finite there, are replaced next): no gather and scatter of the majority
        with np.errstate(all="ignore"):
            out = _halves_large(b1, lam, ei, scale)
        if small.size:
            for o, v in zip(out, _halves_small(b1[small], lam[small], ei[small], scale)):
                o[small] = v
    return tuple(o.reshape(shape) for o in out)


def _halves_large(bb, ll, ei, scale):
    """:func:`_halves` for |lambda| >= 2 (flat arrays)."""
    e1 = ei * bb
    e1 *= -2.0 * scale                           # -2 EI beta scale
    e2 = e1 * bb
    e2 *= 0.5                                    # -EI beta^2 scale
    e3 = e2 * bb
    e3 *= 2j                                     # -2 i EI beta^3 scale
    a = np.exp(-1j * ll)
    b = np.exp(-ll)
    P, Q, R, T = 1.0 - a, 1.0 + a, 1.0 - b, 1.0 + b
    PT, QR = P * T, Q * R
    iPT, iQR = 1j * PT, 1j * QR
    ds = 1.0 / (iPT - QR)
    da = 1.0 / (iQR - PT)
    PR, QT = P * R, Q * T
    return [e3 * PR * ds, e2 * (iPT + QR) * ds, e1 * QT * ds,
            e3 * QT * da, e2 * (iQR + PT) * da, e1 * PR * da]


def _halves_small(bb, ll, ei, scale):
    """:func:`_halves` for |lambda| < 2 (flat arrays), by the Krylov-Duncan series."""
    e1 = ei * bb
    if scale != 1.0:
        e1 *= scale
    e2 = e1 * bb
    e3 = e2 * bb
    c0, c1, c2, c3 = _krylov(0.5 * ll)
    X, Y = c1 * c1 - c3 * c3, c0 * c0 - c2 * c2
    E, G = c0 * c1 - c2 * c3, c0 * c3 - c1 * c2
    ie, ig = 1.0 / E, 1.0 / G
    e3 = -e3
    return [e3 * X * ie, e2 * G * ie, e1 * Y * ie,
            e3 * Y * ig, -e2 * E * ig, -e1 * X * ig]


def piece_entries(EI, beta, h):
    """The 4x4 exact dynamic stiffness as 4 rows of 4 arrays of the broadcast input
    shape (no stacked copy; exactly symmetric): pass (n_piece, n_freq) arrays to get
    frequency-contiguous entries. The same matrix as :func:`piece_stiffness` (to
    rounding), from the closed forms of :func:`_halves`: a third of the operations."""
    s00, s01, s11, a00, a01, a11 = _halves(EI, beta, h, 0.5)
    # symmetric (s) and antisymmetric (a) halves of the nodal motion recombined
    # (each already halved); entries the 4x4 repeats are computed once
    k00, k02 = s00 + a00, s00 - a00
    k11, k13 = s11 + a11, a11 - s11
    k01, k03, k21 = s01 + a01, a01 - s01, s01 - a01
    m01 = -k01
    return ((k00, k01, k02, k03),
            (k01, k11, k21, k13),
            (k02, k21, k00, m01),
            (k03, k13, m01, k11))


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


def _halves_slope(EI, beta, h):
    """d/d(beta) of the six entries of :func:`_halves` (scale 1/2) for |lambda| >= 2, by
    the quotient rule on its closed forms: with a = exp(-i lambda), b = exp(-lambda),
    dP = i h a, dQ = -i h a, dR = h b, dT = -h b and, for the symmetric half,

        K00 = -2 i EI beta^3 P R / D,  K01 = -EI beta^2 (i P T + Q R) / D,
        K11 = -2 EI beta Q T / D,  D = i P T - Q R

    (the antisymmetric half swaps P <-> Q and R <-> T)."""
    shape, (bb, ll, ei, hh) = _regimes(beta, beta * h, EI, h)
    a = np.exp(-1j * ll)
    b = np.exp(-ll)
    P, Q, R, T = 1.0 - a, 1.0 + a, 1.0 - b, 1.0 + b
    dP, dR = 1j * hh * a, hh * b
    dQ, dT = -dP, -dR
    c1 = 0.5 * ei                                   # (the halves' scale 1/2)
    e1, e2, e3 = c1 * bb, c1 * bb * bb, c1 * bb * bb * bb
    out = []
    for P_, Q_, R_, T_, dP_, dQ_, dR_, dT_ in ((P, Q, R, T, dP, dQ, dR, dT),
                                              (Q, P, T, R, dQ, dP, dT, dR)):
        PT, QR = P_ * T_, Q_ * R_
        dPT, dQR = dP_ * T_ + P_ * dT_, dQ_ * R_ + Q_ * dR_
        iD = 1.0 / (1j * PT - QR)
        dD = 1j * dPT - dQR
        N0, dN0 = P_ * R_, dP_ * R_ + P_ * dR_
        N1, dN1 = 1j * PT + QR, 1j * dPT + dQR
        N2, dN2 = Q_ * T_, dQ_ * T_ + Q_ * dT_
        out += [-2j * (3.0 * e2 * N0 * iD + e3 * (dN0 - N0 * dD * iD) * iD),
                -(2.0 * e1 * N1 * iD + e2 * (dN1 - N1 * dD * iD) * iD),
                -2.0 * (c1 * N2 * iD + e1 * (dN2 - N2 * dD * iD) * iD)]
    return tuple(o.reshape(shape) for o in out)


#: Gauss-Legendre rule for the mass of a piece with |beta h| < SMALL: the integrand is entire
#: and the rule's error is below (beta h)^24 / 24! ~ 3e-17
_GAUSS = np.polynomial.legendre.leggauss(12)
#: the consistent mass of the static (Hermite cubic) shapes, times 420 / (m h)
_HERMITE = np.array([[156, 22, 54, -13], [22, 4, 13, -3], [54, 13, 156, -22], [-13, -3, -22, 4]],
                    dtype=float)


def piece_mass(EI, m, beta, h):
    """Exact dynamic mass of undamped pieces, (..., 4, 4) over the input shape (real beta):

        M = -dK/d(w^2) = -(m / (4 EI beta^3)) dK/d(beta),   v^T M u = int m N v . N u dx,

    with N the exact shape functions at that frequency (Richards and Leung, J. Sound
    Vib. 55, 1977). For |beta h| >= 2 from the closed forms (:func:`_halves_slope`); below, where
    that difference cancels like 1/(beta h)^4, as int m N N^T dx by Gauss quadrature of
    the Krylov-Duncan form of N; for beta h < 1e-6 the Hermite cubic consistent mass."""
    EI, m, beta, h = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (EI, m, beta, h)))
    shape = beta.shape
    EI, m, beta, h = (a.ravel() for a in (EI, m, beta, h))
    lam = beta * h
    out = np.empty((lam.size, 4, 4))
    iL = np.flatnonzero(lam >= SMALL)
    if iL.size:
        b = beta[iL]
        s00, s01, s11, a00, a01, a11 = (x.real for x in _halves_slope(EI[iL], b, h[iL]))
        # recombined like piece_entries' halves
        k00, k02, k11, k13 = s00 + a00, s00 - a00, s11 + a11, a11 - s11
        k01, k03, k21 = s01 + a01, a01 - s01, s01 - a01
        dK = np.stack([np.stack(r, -1) for r in ((k00, k01, k02, k03), (k01, k11, k21, k13),
                                                  (k02, k21, k00, -k01), (k03, k13, -k01, k11))], -2)
        out[iL] = -(m[iL] / (4.0 * EI[iL] * b ** 3))[:, None, None] * dK
    i0 = np.flatnonzero(lam < 1e-6)
    if i0.size:
        s4 = np.ones((i0.size, 4))
        s4[:, 1::2] = h[i0, None]                       # rotations carry a length
        out[i0] = ((m[i0] * h[i0] / 420.0)[:, None, None] * _HERMITE
                   * s4[:, :, None] * s4[:, None, :])
    iS = np.flatnonzero((lam < SMALL) & (lam >= 1e-6))
    if iS.size:
        b, hh = beta[iS], h[iS]
        Ds, _Fs, Da, _Fa = _parts(EI[iS], b, hh, forces=False)
        s0, s1, s2, s3 = (x.real / 2 for x in _inv2(*Ds))
        a0, a1, a2, a3 = (x.real / 2 for x in _inv2(*Da))
        # basis coefficients (sym a, sym b, anti a, anti b) of the shapes N_j, (n, 4 basis, 4 j)
        C = np.stack([np.stack([s0, s1, s0, -s1], -1), np.stack([s2, s3, s2, -s3], -1),
                      np.stack([a0, a1, -a0, a1], -1), np.stack([a2, a3, -a2, a3], -1)], 1)
        t, wq = _GAUSS
        # C_m(beta (x - h/2)) at the Gauss points: real arguments, so the series in reals
        z = 0.5 * lam[iS].real[:, None] * t[None, :]
        z2 = z * z
        z4 = z2 * z2
        Pk = np.empty((_NTERMS,) + z.shape)
        Pk[0] = 1.0
        for k in range(1, _NTERMS):
            np.multiply(Pk[k - 1], z4, out=Pk[k])
        Sk = np.einsum("mk,k...->m...", _KCOEF, Pk)
        B = np.stack([Sk[0], z2 * Sk[2], z * Sk[1], z2 * z * Sk[3]], 1)   # (n, 4 basis, q)
        G = (B * (wq * 0.5 * hh[:, None])[:, None, :]) @ np.swapaxes(B, 1, 2)
        out[iS] = m[iS][:, None, None] * (np.swapaxes(C, 1, 2) @ G @ C)
    return out.reshape(shape + (4, 4))


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
    Ds, _Fs, Da, _Fa = _parts(EI, beta, h, forces=False)
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
    # below the first root (4.73) 1 - cos cosh = lam^4 / 6 + ... > 0, but sech - cos
    # rounds to 0 for lam < ~2e-4: take the sign from the series there
    sg = np.where(lam < 1.0, 1.0, sg)
    return j - (1.0 - (-1.0) ** j * sg) / 2.0
