"""Batched tridiagonal solve with partial pivoting, vectorised over frequency.

The algorithm of LAPACK's ``?gtsv`` (Gaussian elimination with row
interchanges, Golub and Van Loan, Matrix Computations, 4th ed., 4.3): at each
step the larger of the diagonal and sub-diagonal entry is the pivot, so the
elimination is backward stable for the indefinite, complex symmetric dynamic
stiffness of a line. Loops run over the n nodes; every operation acts on all
frequencies at once, and memory stays O(n_freq * n).
"""

from __future__ import annotations

import numpy as np

__all__ = ["tridiagonal_solve"]


def tridiagonal_solve(sub: np.ndarray, diag: np.ndarray, sup: np.ndarray,
                      rhs: np.ndarray) -> np.ndarray:
    """Solve T x = b for a batch of tridiagonal systems.

    Parameters
    ----------
    sub, sup : (batch, n-1)   sub- and super-diagonal
    diag : (batch, n)
    rhs : (batch, n)

    Returns
    -------
    x : (batch, n); a singular system gives inf or nan in its row (the caller
    decides what that means physically).
    """
    # node-major copies: each step then works on contiguous rows of frequencies
    d = np.array(np.asarray(diag, dtype=complex).T, order="C", copy=True)
    dl = np.array(np.asarray(sub, dtype=complex).T, order="C", copy=True)
    du = np.array(np.asarray(sup, dtype=complex).T, order="C", copy=True)
    b = np.array(np.asarray(rhs, dtype=complex).T, order="C", copy=True)
    n = d.shape[0]
    if n == 1:
        with np.errstate(divide="ignore", invalid="ignore"):
            return (b / d).T
    du2 = np.zeros_like(dl)
    with np.errstate(divide="ignore", invalid="ignore"):
        for i in range(n - 1):
            di, li, ui = d[i], dl[i], du[i]
            swap = np.abs(di) < np.abs(li)
            # pivot row i (no swap) or row i+1 (swap); fact eliminates the other
            piv = np.where(swap, li, di)
            other = np.where(swap, di, li)
            fact = np.where(piv == 0, 0.0, other / piv)
            dn = d[i + 1]
            bi, bn = b[i], b[i + 1]
            new_dn = np.where(swap, ui - fact * dn, dn - fact * ui)
            new_ui = np.where(swap, dn, ui)
            new_bi = np.where(swap, bn, bi)
            new_bn = np.where(swap, bi - fact * bn, bn - fact * bi)
            if i < n - 2:
                un = du[i + 1]
                du2[i] = np.where(swap, un, 0.0)
                du[i + 1] = np.where(swap, -fact * un, un)
            d[i] = piv
            d[i + 1] = new_dn
            du[i] = new_ui
            b[i] = new_bi
            b[i + 1] = new_bn
        x = b
        x[n - 1] = b[n - 1] / d[n - 1]
        x[n - 2] = (b[n - 2] - du[n - 2] * x[n - 1]) / d[n - 2]
        for i in range(n - 3, -1, -1):
            x[i] = (b[i] - du[i] * x[i + 1] - du2[i] * x[i + 2]) / d[i]
    return x.T
