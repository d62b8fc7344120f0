"""Sparse Hermite-cubic finite-element model of a stepped Euler-Bernoulli beam: the
hand-written scipy baseline of the bending benchmarks (imports nothing from dampline).

Element matrices on an element of length h (Przemieniecki, Theory of Matrix Structural
Analysis, 1968; Cook et al., Concepts and Applications of FEA, 4th ed., sec. 2.4 and
11.3), DOFs (w1, theta1, w2, theta2) with theta = w'::

    K_e = EI*/h^3 [[12, 6h, -12, 6h], [6h, 4h^2, -6h, 2h^2],
                   [-12, -6h, 12, -6h], [6h, 2h^2, -6h, 4h^2]],   EI* = EI (1 + i eta)
    M_e = m h/420 [[156, 22h, 54, -13h], [22h, 4h^2, 13h, -3h^2],
                   [54, 13h, 156, -22h], [-13h, -3h^2, -22h, 4h^2]]

Eigenvalue errors converge as O(h^4) (Strang and Fix, An Analysis of the Finite Element
Method, 1973, ch. 6). The mesh puts ``elements_per_wavelength`` elements on each
flexural wavelength 2 pi / beta, beta = (w^2 m / EI)^(1/4), of each segment at
``f_max``, with nodes at every segment end. The receptance is solved the way an
engineer would write it by hand: one sparse LU factorisation of
``K - w^2 M`` per frequency (e^{+i w t}).
"""

from __future__ import annotations

import math

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

__all__ = ["BeamFE"]

#: held DOFs (0 = w, 1 = theta) of each classical end condition
HELD = {"clamped": (0, 1), "pinned": (0,), "free": (), "sliding": (1,)}


def _k_unit(h: float) -> np.ndarray:
    return np.array([[12, 6 * h, -12, 6 * h],
                     [6 * h, 4 * h * h, -6 * h, 2 * h * h],
                     [-12, -6 * h, 12, -6 * h],
                     [6 * h, 2 * h * h, -6 * h, 4 * h * h]]) / h ** 3


def _m_unit(h: float) -> np.ndarray:
    return h / 420 * np.array([[156, 22 * h, 54, -13 * h],
                               [22 * h, 4 * h * h, 13 * h, -3 * h * h],
                               [54, 13 * h, 156, -22 * h],
                               [-13 * h, -3 * h * h, -22 * h, 4 * h * h]])


class BeamFE:
    """Sparse FE model of a stepped beam.

    Parameters
    ----------
    props : list of (length m, EI N m^2, m kg/m, eta)
        Uniform segments from x = 0.
    ends : (str, str)
        Left and right end: "clamped", "pinned", "free" or "sliding".
    elements_per_wavelength : float
        Elements per flexural wavelength of each segment at ``f_max`` (Hz); at least
        ``min_per_segment`` elements per segment.
    """

    def __init__(self, props, ends, elements_per_wavelength: float, f_max: float,
                 min_per_segment: int = 2):
        w_max = 2.0 * math.pi * f_max
        x, rows, cols, kv, mv = [0.0], [], [], [], []
        x_end = 0.0
        for length, EI, m, eta in props:
            beta = (w_max * w_max * m / EI) ** 0.25
            n = max(min_per_segment,
                    math.ceil(elements_per_wavelength * beta * length / (2 * math.pi) - 1e-9))
            h = length / n
            first = len(x) - 1
            x += list(x_end + h * np.arange(1, n + 1))
            x_end += length
            x[-1] = x_end                       # segment ends are nodes, exactly
            dofs = 2 * (first + np.arange(n))[:, None] + np.arange(4)[None, :]   # (n, 4)
            rows.append(np.repeat(dofs, 4, axis=1).ravel())
            cols.append(np.tile(dofs, (1, 4)).ravel())
            kv.append(np.tile((EI * (1 + 1j * eta) * _k_unit(h)).ravel(), n))
            mv.append(np.tile((m * _m_unit(h)).ravel(), n))
        self.x = np.array(x)
        n_full = 2 * len(x)
        r, c = np.concatenate(rows), np.concatenate(cols)
        K = sp.csr_matrix((np.concatenate(kv), (r, c)), shape=(n_full, n_full))
        M = sp.csr_matrix((np.concatenate(mv), (r, c)), shape=(n_full, n_full))
        held = [j for j in HELD[ends[0]]] + [n_full - 2 + j for j in HELD[ends[1]]]
        self.free = np.setdiff1d(np.arange(n_full), held)
        self.K = K[self.free][:, self.free].tocsc()
        self.M = M[self.free][:, self.free].tocsc()
        self.n_dof = int(self.free.size)
        self._index = -np.ones(n_full, dtype=int)
        self._index[self.free] = np.arange(self.n_dof)

    def dof(self, x: float) -> int:
        """Unknown index of the transverse displacement at node ``x`` (m); -1 if held."""
        i = int(np.argmin(np.abs(self.x - x)))
        if abs(self.x[i] - x) > 1e-9 * self.x[-1]:
            raise ValueError(f"x = {x} m is not a node of the mesh")
        return int(self._index[2 * i])

    def frf(self, freqs_hz, drive_at: float, response_at) -> np.ndarray:
        """Receptance w(response_at) / F(drive_at), m/N, complex (n_freq, n_resp):
        one sparse LU of ``K - w^2 M`` per frequency."""
        f = np.asarray(freqs_hz, dtype=float)
        d = self.dof(drive_at)
        r = np.array([self.dof(x) for x in response_at])
        out = np.zeros((f.size, r.size), dtype=complex)
        b = np.zeros(self.n_dof, dtype=complex)
        b[d] = 1.0
        ok = r >= 0
        for n, fn in enumerate(f):
            w = 2.0 * math.pi * fn
            u = spla.splu((self.K - (w * w) * self.M).tocsc()).solve(b)
            out[n, ok] = u[r[ok]]
        return out
