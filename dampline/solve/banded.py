"""Batched banded solves with partial pivoting, vectorised over frequency.

Two solvers, both Gaussian elimination with row interchanges (Golub and Van Loan,
Matrix Computations, 4th ed., 4.3 and 4.3.5 for band matrices): at each step the
largest entry of the pivot column is brought to the diagonal, so the elimination
is backward stable for the indefinite, complex symmetric dynamic stiffness of a
line. Loops run over the unknowns; every operation acts on all frequencies at
once, and memory stays O(n_freq * n * bandwidth).

- :func:`tridiagonal_solve`: the algorithm of LAPACK's ``?gtsv`` (second-order
  lines, one unknown per node).
- :func:`banded_solve` / :func:`banded_solve_inplace`: the algorithm of LAPACK's
  ``?gbtrf`` and ``?gbtrs`` (``?gbsv``) for kl sub- and ku super-diagonals, with
  the kl extra super-diagonals that row interchanges can fill (bending lines:
  w and theta per node give kl = ku = 3).
"""

from __future__ import annotations

import numpy as np

__all__ = ["tridiagonal_solve", "banded_solve", "banded_solve_inplace", "band_workspace"]


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


def band_workspace(n: int, kl: int, ku: int, batch: int) -> np.ndarray:
    """Zeroed work array for :func:`banded_solve_inplace`: shape (n, 2 kl + ku + 1, batch),
    row-oriented: ``work[i, c - i + kl, :] = A[i, c]`` for ``i - kl <= c <= i + ku``; the
    last kl places of each row take the fill-in of row interchanges."""
    return np.zeros((n, 2 * kl + ku + 1, batch), dtype=complex)


def banded_solve_inplace(work: np.ndarray, b: np.ndarray, kl: int, ku: int, *,
                         first=None, last=None) -> np.ndarray:
    """Solve A x = b for a batch of band matrices, overwriting ``work`` and ``b``.

    Parameters
    ----------
    work : (n, 2 kl + ku + 1, batch) complex, C-contiguous
        A in the row-oriented band layout of :func:`band_workspace` (entries outside
        the matrix, and the fill-in places, zero).
    b : (n, batch) complex
        Right-hand sides; the solution is written into it.
    kl, ku : int
        Sub- and super-diagonals of A.
    first, last : sequence of int, optional
        Columns of the first and last entry of each row that may be nonzero for some
        batch member (within the band; default ``i - kl`` and ``i + ku``, clipped). A
        sparser pattern inside the band (a bending line's 2x2 blocks) saves the steps
        that would only move zeros.

    Returns
    -------
    x : (n, batch), the array ``b``. A singular system (an exactly zero pivot) gives inf
    or nan in its column (the caller decides what that means physically).

    Notes
    -----
    LAPACK ``?gbtrf`` (right-looking, unblocked ``?gbtf2``) applied to ``b`` as it goes,
    then ``?gbtrs``' back substitution with U. Step j looks at rows j .. j + kl over
    columns j .. j + kl + ku: the pivot is the first entry of largest |Re| + |Im| in
    column j (the measure of LAPACK's ``izamax``), its row is swapped with row j (for
    the batch members that need it), and the rows below are eliminated. In the
    row-oriented layout that window is one strided view (row j + r keeps column j + c
    at place kl - r + c), so no step copies the matrix. The window is cut to the rows
    whose column j may be nonzero and the columns any of them may fill, which tracks
    the fill-in of the interchanges as ``?gbtf2`` does with its ``ju``. Entries of a
    row left of the current column are never read again and are not cleared.
    """
    n, width, nb = work.shape
    if width != 2 * kl + ku + 1 or b.shape != (n, nb):
        raise ValueError(f"work {work.shape} and b {b.shape} do not fit kl={kl}, ku={ku}")
    if not (work.flags.c_contiguous and work.dtype == complex):
        raise ValueError("work must be a C-contiguous complex array")
    rows = np.arange(n)
    first = np.maximum(rows - kl if first is None else np.maximum(first, rows - kl), 0)
    last = np.minimum(rows + ku if last is None else np.minimum(last, rows + ku), n - 1)
    first, last = [int(v) for v in first], [int(v) for v in last]
    s0, s1, s2 = work.strides
    # temporaries reused by every step
    piv = np.empty(nb, dtype=np.intp)
    mult = np.empty((kl, nb), dtype=complex)
    prod = np.empty((kl, kl + ku, nb), dtype=complex)
    top = np.empty((kl + ku + 1, nb), dtype=complex)
    with np.errstate(divide="ignore", invalid="ignore"):
        for j in range(n - 1):
            # rows j .. j + m whose column j may be nonzero; columns j .. hi they may fill
            m = min(kl, n - 1 - j)
            while m > 0 and first[j + m] > j:
                m -= 1
            if m == 0:
                continue
            hi = max(last[j:j + m + 1])
            w = hi - j + 1
            last[j:j + m + 1] = [hi] * (m + 1)
            first[j + 1:j + m + 1] = [j + 1] * m
            # win[r, c] = A[j + r, j + c]
            win = np.ndarray((m + 1, w, nb), dtype=complex, buffer=work,
                             offset=j * s0 + kl * s1, strides=(s0 - s1, s1, s2))
            bj = b[j:j + m + 1]
            _pivot_rows(win[:, 0], piv)
            t = top[:w]
            count = np.bincount(piv, minlength=m + 1)
            for r in range(1, m + 1):
                if count[r] == 0:
                    continue
                t[:] = win[0]
                if count[r] == nb:
                    win[0] = win[r]
                    win[r] = t
                    bj[[0, r]] = bj[[r, 0]]
                else:
                    take = piv == r
                    np.copyto(win[0], win[r], where=take)
                    np.copyto(win[r], t, where=take)
                    b0 = bj[0].copy()
                    np.copyto(bj[0], bj[r], where=take)
                    np.copyto(bj[r], b0, where=take)
            # multipliers; a zero pivot (the column is zero) gives nan: singular system
            lj = mult[:m]
            np.divide(win[1:, 0], win[0, 0], out=lj)
            if w > 1:
                pj = prod[:m, :w - 1]
                np.multiply(lj[:, None, :], win[0, None, 1:], out=pj)
                np.subtract(win[1:, 1:], pj, out=win[1:, 1:])
            bj[1:] -= lj * bj[0]
        x = b
        for j in range(n - 1, -1, -1):
            c = last[j] - j
            if c > 0:
                u = work[j, kl + 1:kl + 1 + c]
                xr = x[j + 1:j + 1 + c]
                acc = u[0] * xr[0]
                for i in range(1, c):
                    acc += u[i] * xr[i]
                x[j] -= acc
            x[j] /= work[j, kl]
    return x


def _pivot_rows(col: np.ndarray, piv: np.ndarray) -> None:
    """Index into the rows of ``col`` (rows, batch) of the first entry of largest
    |Re| + |Im| in each batch column (LAPACK ``izamax``), into ``piv``."""
    mag = np.abs(col.real)
    mag += np.abs(col.imag)
    best = mag[0]
    piv[:] = 0
    for r in range(1, col.shape[0]):
        more = mag[r] > best
        np.copyto(piv, r, where=more)
        np.maximum(best, mag[r], out=best)


def banded_solve(ab: np.ndarray, rhs: np.ndarray, kl: int, ku: int) -> np.ndarray:
    """Solve A x = b for a batch of band matrices with partial pivoting.

    Parameters
    ----------
    ab : (batch, kl + ku + 1, n)
        A in LAPACK's band layout (that of ``?gbsv`` and ``scipy.linalg.solve_banded``):
        ``ab[:, ku + i - j, j] = A[i, j]``; places outside the matrix are ignored.
    rhs : (batch, n)
    kl, ku : int
        Sub- and super-diagonals of A.

    Returns
    -------
    x : (batch, n); a singular system gives inf or nan in its row.
    """
    ab = np.asarray(ab, dtype=complex)
    rhs = np.asarray(rhs, dtype=complex)
    nb, rows, n = ab.shape
    if rows != kl + ku + 1 or rhs.shape != (nb, n):
        raise ValueError(f"ab {ab.shape} and rhs {rhs.shape} do not fit kl={kl}, ku={ku}")
    work = band_workspace(n, kl, ku, nb)
    # A[i, c] with c = i - kl + d sits at work[i, d] and at ab[ku + kl - d, c]
    i, d = np.nonzero((np.arange(n)[:, None] + np.arange(kl + ku + 1)[None, :] - kl >= 0)
                      & (np.arange(n)[:, None] + np.arange(kl + ku + 1)[None, :] - kl < n))
    work[i, d] = ab[:, ku + kl - d, i + d - kl].T
    b = np.array(rhs.T, order="C", copy=True)
    return banded_solve_inplace(work, b, kl, ku).T
