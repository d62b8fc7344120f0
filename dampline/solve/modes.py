"""Natural frequencies and mass-normalised modes of the undamped line.

Roots are bracketed by the Wittrick-Williams algorithm (Q. J. Mech. Appl.
Math. 24, 1971, 263-284): the number of natural frequencies below w is

    J(w) = sum over pieces of J0 + s{K(w)},

where J0 counts the natural frequencies of each piece with both ends clamped
(floor(k h / pi) for a second-order piece) and s{K} is the number of negative
pivots of the real dynamic stiffness in an LDL^T factorisation (Sylvester's law
of inertia). All roots are estimated at once from linearised eigenproblems that
keep the nearby piece poles exactly, refined together by a nonlinear Rayleigh
quotient iteration, and certified by one count at points between them; a root
that fails is isolated and bisected on J itself, so none is missed or doubled,
close pairs included. Rigid-body modes come from the supports and are reported
as 0.0 Hz. Mode shapes are null vectors of K(w), mass-normalised with the exact
dynamic mass -dK/d(w^2) (Richards and Leung, J. Sound Vib. 55, 1977).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from ..errors import ModelError
from ..families import static_coefficients
from ..model.line import EndTable, Line
from . import beam
from .mesh import (GOLDEN, SPLITS, Mesh, _cc_bending_roots, _node_terms, assemble, build_mesh,
                   free_dofs, held_dofs, interior_field, piece_stiffness, piece_wavenumbers,
                   pole_distance, static_field)

__all__ = ["natural_frequencies", "modes", "ModeSet"]


def _check_count(count) -> int:
    if isinstance(count, bool) or not isinstance(count, (int, np.integer)):
        raise ModelError("count", count, "", "must be a whole number of modes")
    if count < 1:
        raise ModelError("count", count, "", "must be at least 1")
    if count > 100_000:
        raise ModelError("count", count, "", "is unreasonably large (at most 100000)")
    return int(count)


def _assemble(mesh: Mesh, omega: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """:func:`~dampline.solve.mesh.assemble` of the undamped line (``damped=False``): the
    same (K, J0), to rounding (:func:`_stiffness_into`)."""
    omega = np.asarray(omega, dtype=float)
    K = np.zeros((omega.size, mesh.n_dof, mesh.n_dof))
    S, k = _stiffness_into(K, mesh, omega)
    t = k * mesh.piece_h
    J0 = beam.clamped_count(t).sum(axis=1) if mesh.dpn == 2 else np.floor(t / math.pi).sum(axis=1)
    return K, J0


def _stiffness_into(A: np.ndarray, mesh: Mesh, omega: np.ndarray,
                    d: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """A[:, :n_dof, :n_dof] += D K(w) D, the undamped dynamic stiffness of all DOFs,
    congruently scaled by D = diag(d) (d (n_freq, n_dof); None: D = I). A must be
    C-contiguous and may be larger than n_dof. Returns the pieces' (S, k).

    For bending the piece matrices come from the closed forms of
    :func:`beam.piece_entries` (a third of the operations of the 2x2 products, and as
    accurate next to a clamped-piece pole: checked against mpmath); each entry of all
    pieces is added at once (:func:`_add_pieces`), scaled before it lands, so that no
    pass over the dense matrices is spent on the assembly or the scaling."""
    dpn, h = mesh.dpn, mesh.piece_h
    S, k = piece_wavenumbers(mesh, omega, damped=False)
    if dpn == 2:
        E = [[e.real for e in row] for row in beam.piece_entries(S, k, h)]
    else:
        k11, k12 = piece_stiffness(S, k, h, False)
        E = [[k11, k12], [k12, k11]]
    if d is not None:
        npc, m = h.size, 2 * dpn
        ds = [d[:, a:a + dpn * npc:dpn] for a in range(m)]
        E = [[E[a][b] * (ds[a] * ds[b]) if b >= a else None for b in range(m)] for a in range(m)]
    _add_pieces(A, E)
    for dof, kk in _node_terms(mesh, omega, False):
        A[:, dof, dof] += kk if d is None else kk * d[:, dof] ** 2
    for j, (node, ab) in enumerate(mesh.absorbers):
        q, dof = mesh.n_line_dofs + j, dpn * node
        kq, kn, kc = ab.stiffness - omega * omega * ab.mass, ab.stiffness, -ab.stiffness
        if d is not None:
            kq, kn, kc = kq * d[:, q] ** 2, kn * d[:, dof] ** 2, kc * d[:, dof] * d[:, q]
        A[:, dof, dof] += kn
        A[:, q, q] += kq
        A[:, dof, q] += kc
        A[:, q, dof] += kc
    return S, k


def _add_pieces(A: np.ndarray, E) -> None:
    """A[:, dpn p + a, dpn p + b] += E[a][b][:, p] for every piece p, E symmetric (2 dpn
    rows of 2 dpn arrays (n_freq, n_piece); only its upper triangle is read): entry (a, b)
    of all pieces is one strided slice of the flattened matrices (step dpn (n + 1)), no
    index arrays."""
    nf, n, _ = A.shape
    m = len(E)
    npc = E[0][0].shape[-1]
    flat = A.reshape(nf, n * n)
    step = (m // 2) * (n + 1)
    for a in range(m):
        for b in range(a, m):
            start = a * n + b
            flat[:, start:start + step * npc:step] += E[a][b]
            if a != b:
                start = b * n + a
                flat[:, start:start + step * npc:step] += E[a][b]


def _negcount(A: np.ndarray, bw: int) -> np.ndarray:
    """Negative pivots of symmetric matrices A (batch, n, n), band half-width bw,
    by Gaussian elimination without pivoting (LDL^T; A is overwritten)."""
    nb, n, _ = A.shape
    neg = np.zeros(nb, dtype=int)
    # an exactly zero pivot is replaced by a tiny one of the matrix's scale, as in
    # Sturm-sequence bisection; near-singular pivots legitimately produce huge entries
    tiny = np.abs(A).max(axis=(1, 2)) * np.finfo(float).eps + np.finfo(float).tiny
    with np.errstate(over="ignore", invalid="ignore"):
        for j in range(n):
            p = A[:, j, j]
            p = np.where(p == 0.0, tiny, p)
            neg += p < 0.0
            hi = min(n, j + bw + 1)
            if hi > j + 1:
                col = A[:, j + 1:hi, j]
                A[:, j + 1:hi, j + 1:hi] -= col[:, :, None] * (col / p[:, None])[:, None, :]
    return neg


#: largest growth max_i sum_j l_ij^2 |d_j| / max |A| of an LDL^T factorisation whose
#: count is trusted (see :func:`_checked_negcount`)
_GROWTH = 64.0


def _checked_negcount(A: np.ndarray, bw: int) -> tuple[np.ndarray, np.ndarray]:
    """(negative pivots, trusted) of the LDL^T factorisation without pivoting of the
    symmetric matrices A (batch, n, n), band half-width bw (A is overwritten).

    The computed factors are exactly those of A + E with |E| <= gamma_n |L| |D| |L^T|
    (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., 2002, Thm 9.3),
    so by Sylvester's law of inertia the count is exactly that of A + E. The entries of
    |L| |D| |L^T| are at most its largest diagonal entry max_i sum_j l_ij^2 |d_j|
    (Cauchy-Schwarz), accumulated here as the elimination goes; where that is within
    _GROWTH of max |A|, E is within (2 bw + 1) gamma_n _GROWTH max |A| in the 2-norm,
    a backward error of the order of an eigensolver's, and the count is trusted. A
    tiny pivot (a nearly singular leading block) shows as a large growth."""
    nb, n, _ = A.shape
    neg = np.zeros(nb, dtype=int)
    scale = np.abs(A).max(axis=(1, 2))
    acc = np.zeros((nb, n))
    with np.errstate(all="ignore"):
        for j in range(n):
            p = A[:, j, j].copy()
            neg += p < 0.0
            acc[:, j] += np.abs(p)
            hi = min(n, j + bw + 1)
            if hi > j + 1:
                col = A[:, j + 1:hi, j]
                acc[:, j + 1:hi] += col * col / np.abs(p)[:, None]
                A[:, j + 1:hi, j + 1:hi] -= col[:, :, None] * (col / p[:, None])[:, None, :]
        trusted = acc.max(axis=1) <= _GROWTH * scale          # (NaN, inf: not trusted)
    return neg, trusted


class _Counter:
    """J(w) of a line: Wittrick-Williams count of natural frequencies below w."""

    def __init__(self, line: Line, split: float = GOLDEN):
        self.mesh = build_mesh(line, split=split)
        self.free = free_dofs(self.mesh, held_dofs(self.mesh))
        # absorber DOFs couple to their node only: bandwidth from the assembled pattern
        order = self._band_order()
        self.order = order
        pattern = np.abs(assemble(self.mesh, np.array([1.0]), damped=False)[0][0]) > 0
        pattern = pattern[np.ix_(order, order)]
        ii, jj = np.nonzero(pattern)
        self.bw = int(np.max(np.abs(ii - jj))) if ii.size else 0
        # envelope of K and M on the free DOFs, from the structure (pieces couple the DOFs
        # of their two nodes, an absorber its mass to its node): the first column of
        # each row, which a Cholesky factor keeps (:func:`_lower_solve`)
        m = self.mesh
        struct = np.eye(m.n_dof, dtype=bool)
        for p in range(m.n_nodes - 1):
            struct[m.dpn * p:m.dpn * (p + 2), m.dpn * p:m.dpn * (p + 2)] = True
        for j, (node, _ab) in enumerate(m.absorbers):
            struct[m.dpn * node, m.n_line_dofs + j] = struct[m.n_line_dofs + j, m.dpn * node] = True
        self.first = np.argmax(struct[np.ix_(self.free, self.free)], axis=1)
        n = self.free.size
        # the last row of each column inside the envelope (for L^T, :func:`_upper_solve`)
        self.last = np.array([np.flatnonzero(self.first <= i).max() for i in range(n)], dtype=int)

    def _band_order(self) -> np.ndarray:
        """Free DOFs node by node, each absorber right after its node: a narrow band."""
        m = self.mesh
        free = set(self.free.tolist())
        seq = []
        by_node: dict[int, list[int]] = {}
        for j, (node, _ab) in enumerate(m.absorbers):
            by_node.setdefault(node, []).append(m.n_line_dofs + j)
        for i in range(m.n_nodes):
            seq += [m.dpn * i + j for j in range(m.dpn) if m.dpn * i + j in free]
            seq += [q for q in by_node.get(i, []) if q in free]
        return np.asarray(seq, dtype=int)

    def __call__(self, omega: np.ndarray) -> np.ndarray:
        """Fast count: LDL^T without pivoting along the band."""
        omega = np.asarray(omega, dtype=float)
        K, J0 = _assemble(self.mesh, omega)
        o = self.order
        A = K[:, o[:, None], o[None, :]]
        return (J0 + _negcount(A, self.bw)).astype(int)

    def _scaled(self, omega: np.ndarray):
        K, J0 = _assemble(self.mesh, omega)
        f = self.free
        A = K[:, f[:, None], f[None, :]]
        # a diagonal congruence keeps the inertia and balances force and moment rows
        d = 1.0 / np.sqrt(np.abs(A).max(axis=2) + 1e-300)
        return A * d[:, :, None] * d[:, None, :], J0

    def stable(self, omega: np.ndarray):
        """Backward-stable count from the eigenvalues of the scaled matrix:
        (J, eigenvalues ascending, J0)."""
        A, J0 = self._scaled(omega)
        ev = np.linalg.eigvalsh(A)
        return (J0 + (ev < 0).sum(axis=1)).astype(int), ev, J0.astype(int)

    def certified(self, omega: np.ndarray) -> np.ndarray:
        """The count J(w) with a guarantee like that of :meth:`stable` (exact for a matrix
        within a small multiple of eps of the scaled K(w), bounded in
        :func:`_checked_negcount`), cheaper: LDL^T without pivoting along the band,
        trusted where its growth is small; the eigenvalues of the scaled matrix decide
        where it is not (measured: 1 point in 5 or 6 on the benchmark beam)."""
        omega = np.asarray(omega, dtype=float)
        K, J0 = _assemble(self.mesh, omega)
        o = self.order
        A = K[:, o[:, None], o[None, :]]
        d = 1.0 / np.sqrt(np.abs(A).max(axis=2) + 1e-300)
        A *= d[:, :, None]
        A *= d[:, None, :]
        neg, trusted = _checked_negcount(A.copy(), self.bw)
        redo = np.flatnonzero(~trusted)
        if redo.size:
            neg[redo] = (np.linalg.eigvalsh(A[redo]) < 0.0).sum(axis=1)
        return (J0 + neg).astype(int)

    def crossing(self, omega: np.ndarray, q: np.ndarray) -> np.ndarray:
        """The q-th smallest eigenvalue of the scaled K(w): continuous inside a bracket
        without poles, and zero at the natural frequency it holds."""
        A, _ = self._scaled(omega)
        ev = np.linalg.eigvalsh(A)
        return ev[np.arange(len(q)), q]


def _rigid_motions(mesh: Mesh) -> np.ndarray:
    """Nodal vectors of the rigid-body motions the supports leave free, (n_rigid, n_dof).

    Found from the supports, not from a numerical null space (a very short segment makes
    the static stiffness so graded that an eigenvalue threshold misreads it): the rigid
    motions of a line are u = a (second order) or w = a + b x (bending); every held DOF
    and every spring to ground is a constraint row on (a, b), and the rigid motions are
    the null space of those rows. Absorber masses move with their attachment point.
    """
    line = mesh.line
    L = line.length
    # a spring far softer than the line itself (1e-10 of its own end-to-end stiffness)
    # grounds nothing that matters: its mode stays a rigid-body mode at 0.0 Hz
    S_min = min(static_coefficients(line.kind, sg)[0] for sg in line.segments)
    k_tr = 1e-10 * S_min / (L ** 3 if mesh.dpn == 2 else L)
    k_rot = 1e-10 * S_min / L
    rows = []
    for dof in held_dofs(mesh):
        node, j = divmod(dof, mesh.dpn)
        rows.append([1.0, mesh.x[node] / L] if j == 0 else [0.0, 1.0])
    for node, _m, s, _c, _ri, rs in mesh.lumped:
        if s > k_tr:
            rows.append([1.0, mesh.x[node] / L])
        if rs > k_rot:
            rows.append([0.0, 1.0])
    for side, e in enumerate(line.ends):
        x = 0.0 if side == 0 else 1.0
        if isinstance(e, EndTable):
            if e.spring > k_tr:
                rows.append([1.0, x])
            if e.rot_spring > k_rot:
                rows.append([0.0, 1.0])
        elif line.kind == "duct" and e in ("unflanged", "flanged"):
            rows.append([1.0, x])       # the end correction's analogue spring
    ncoef = 2 if mesh.dpn == 2 else 1
    C = np.array(rows)[:, :ncoef] if rows else np.zeros((0, ncoef))
    if C.shape[0]:
        _u, sv, vt = np.linalg.svd(C)
        rank = int(np.sum(sv > 1e-9 * sv.max()))
        basis = vt[rank:]
    else:
        basis = np.eye(ncoef)
    out = np.zeros((basis.shape[0], mesh.n_dof))
    for r, coef in enumerate(basis):
        a, b = coef[0], (coef[1] / L if ncoef == 2 else 0.0)
        w = a + b * mesh.x
        if mesh.dpn == 1:
            out[r, :mesh.n_nodes] = w
        else:
            out[r, 0:mesh.n_line_dofs:2] = w
            out[r, 1:mesh.n_line_dofs:2] = b
        for j, (node, _ab) in enumerate(mesh.absorbers):
            out[r, mesh.n_line_dofs + j] = w[node]
    return out


def _rigid_count(mesh: Mesh, free: np.ndarray) -> int:
    return _rigid_motions(mesh).shape[0]


def _omega_scale(line: Line, count: int) -> float:
    """A frequency near the count-th mode: n pi c / L (second order), or
    (n pi / L)^2 sqrt(EI / m) with the softest segment (bending)."""
    if line.kind == "bending":
        r = min(math.sqrt(np.divide(*static_coefficients(line.kind, s))) for s in line.segments)
        return (count * math.pi / line.length) ** 2 * r
    t = sum(s.length / math.sqrt(np.divide(*static_coefficients(line.kind, s)))
            for s in line.segments)
    return count * math.pi / t


def _bisect(count_fn, targets: np.ndarray, lo: np.ndarray, hi: np.ndarray,
            rtol: float) -> tuple[np.ndarray, np.ndarray]:
    """Bisect every bracket on the count J until (hi - lo) <= rtol hi."""
    lo, hi = lo.copy(), hi.copy()
    for _ in range(2000):
        active = (hi - lo) > rtol * hi
        if not active.any():
            break
        mid = 0.5 * (lo[active] + hi[active])
        um, inv = np.unique(mid, return_inverse=True)   # shared brackets, one evaluation
        J = count_fn(um)[inv]
        up = J >= targets[active]
        ia = np.flatnonzero(active)
        hi[ia[up]] = mid[up]
        lo[ia[~up]] = mid[~up]
    return lo, hi


#: separators at w (1 -+ this) close runs of roots certified by the stable count
_CERTIFY = 1e-9
#: the refinement stops once a step is below this fraction of w^2
_RFI_TOL = 1e-13
_RFI_ITER = 12
#: shifts of the linearised eigenproblem: one per ~this many modes (Weyl count), each
#: with the exact poles of the _POLES nearest clamped-piece modes. Each pencil serves
#: the targets nearest its shift, up to ~1.25 modes away (its zone of validity spans
#: ~5 poles to either side); with the pencil's eigenvector as the refinement's start an
#: estimate that far out still converges to its own root (1.5 and 8 before the start
#: vectors: 40% more pencils, each with 80% of the work)
_SHIFT_SPACING = 2.5
_POLES = 10


def _blocks(n_points: int, n: int):
    """Slices of at most ~2e6 matrix entries: bounded temporaries for long batches."""
    step = max(16, 2_000_000 // max(n * n, 1))
    return [slice(a, min(a + step, n_points)) for a in range(0, n_points, step)]


def _free_pair(counter: _Counter, omega: np.ndarray):
    """K(w) and M(w) = -dK/d(w^2) on the free DOFs, congruently scaled to a unit mass
    diagonal (a diagonal congruence keeps the inertia and balances forces against
    moments and absorber DOFs against line DOFs); and the scaling d (x = d x_scaled)."""
    f = counter.free
    K, _J0 = _assemble(counter.mesh, omega)
    M = _mass_matrix(counter.mesh, omega)
    K = K[:, f[:, None], f[None, :]]
    M = M[:, f[:, None], f[None, :]]
    d = 1.0 / np.sqrt(np.einsum("fii->fi", M))
    dd = d[:, :, None] * d[:, None, :]
    return K * dd, M * dd, d


def _inverse_step(Ks: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    """Solve Ks y = rhs (batched, rhs (batch, n)) and normalise y. At a root Ks is singular
    to working precision, which is the point of inverse iteration; should LU meet an
    exactly zero (or underflowing) pivot, the diagonal is moved by a few ulps of the
    matrix scale, a perturbation below the rounding already in Ks."""
    rhs = rhs / np.linalg.norm(rhs, axis=1, keepdims=True)
    with np.errstate(all="ignore"):
        try:
            y = np.linalg.solve(Ks, rhs[:, :, None])[:, :, 0]
            bad = np.flatnonzero(~np.isfinite(y).all(axis=1))
        except np.linalg.LinAlgError:
            y = np.empty_like(rhs)
            bad = np.arange(rhs.shape[0])
        if bad.size:
            scale = np.abs(Ks[bad]).max(axis=(1, 2))
            # (a matrix that is exactly zero, e.g. one DOF at its root, takes any nudge)
            nudge = 4.0 * np.finfo(float).eps * np.where(scale > 0.0, scale, 1.0)
            y[bad] = np.linalg.solve(Ks[bad] + nudge[:, None, None] * np.eye(Ks.shape[1]),
                                     rhs[bad][:, :, None])[:, :, 0]
    y = y / np.abs(y).max(axis=1, keepdims=True)         # (a huge y must not overflow |y|)
    return y / np.linalg.norm(y, axis=1, keepdims=True)


def _energy(mesh: Mesh, omega: np.ndarray, X: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(x^T K(w) x, the sum of its terms' magnitudes) for nodal vectors X (batch, n_dof),
    summed piece by piece without the cancellation of the assembled matrix, and per
    absorber k (x_node - x_mass)^2 - w^2 m x_mass^2: every term is then of the size of
    the physical energies, not of the largest stiffness.

    Second order: for a nearly rigid motion (a line on soft springs) the piece
    stiffnesses S / h cancel in K x; per piece, with k11 + k12 = S k (cos kh - 1) /
    sin kh = -S k tan(kh / 2),

        x^T K_e x = (k11 + k12) (xa^2 + xb^2) - k12 (xa - xb)^2.

    Bending: a short piece's stiffness ~ EI / h^3 cancels in K x for its rigid motions
    (measured: roots resolved to ~1e-6 only, (L / h)^3 eps); per piece, from the halves
    of :func:`beam._halves` (scale 1/2),

        x^T K_e x = u_s^T K_s u_s + u_a^T K_a u_a,
        u_s = (w1 + w2, t1 - t2),  u_a = (w1 - w2, t1 + t2),

    each half's form written about its larger diagonal entry (:func:`_half_terms`) with
    its determinant in closed form, det K_s = det K_a = -(EI beta^2)^2 / 4 (exact for
    the Euler-Bernoulli halves, both regimes): for the rigid rotation of a short piece
    the two terms are then the small residual shear and rotary terms themselves."""
    nn, dpn = mesh.n_nodes, mesh.dpn
    S, k = piece_wavenumbers(mesh, omega, damped=False)
    if dpn == 2:
        h = mesh.piece_h
        s00, s01, s11, a00, a01, a11 = (x.real for x in beam._halves(S, k, h, 0.5))
        det = -0.25 * (S * k * k) ** 2
        W, Th = X[:, 0:2 * nn:2], X[:, 1:2 * nn:2]
        w1, w2, t1, t2 = W[:, :-1], W[:, 1:], Th[:, :-1], Th[:, 1:]
        terms = (_half_terms(s00, s01, s11, det, w1 + w2, t1 - t2, h)
                 + _half_terms(a00, a01, a11, det, w1 - w2, t1 + t2, h))
    else:
        t = k * mesh.piece_h
        xa, xb = X[:, :nn - 1], X[:, 1:nn]
        terms = [-S * k * np.tan(0.5 * t) * (xa * xa + xb * xb),
                 S * k / np.sin(t) * (xa - xb) ** 2]
    terms += [(kk * X[:, dof] ** 2)[:, None] for dof, kk in _node_terms(mesh, omega, False)]
    for j, (node, ab) in enumerate(mesh.absorbers):
        xq = X[:, mesh.n_line_dofs + j]
        terms += [(ab.stiffness * (X[:, dpn * node] - xq) ** 2)[:, None],
                  (-omega * omega * ab.mass * xq * xq)[:, None]]
    return (sum(tt.sum(axis=1) for tt in terms),
            sum(np.abs(tt).sum(axis=1) for tt in terms))


def _half_terms(k00, k01, k11, det, u0, u1, h) -> list[np.ndarray]:
    """Terms of u^T [[k00, k01], [k01, k11]] u (u0 a displacement, u1 a rotation, h the
    piece length, det the determinant in closed form). About the larger diagonal entry
    p (dimensions balanced by h), e.g. p = k00:

        u^T K u = k00 (u0 + (k01 / k00) u1)^2 + (det / k00) u1^2,

    exact algebra; unless no diagonal entry outweighs the coupling (no cancellation to
    avoid), where the three plain terms are kept."""
    d0, d1, c = np.abs(k00) * h * h, np.abs(k11), np.abs(k01) * h
    plain = np.maximum(d0, d1) <= c
    on0 = ~plain & (d0 >= d1)
    on1 = ~plain & ~on0
    with np.errstate(all="ignore"):
        first = np.where(on0, k00 * (u0 + (k01 / k00) * u1) ** 2,
                         np.where(on1, k11 * (u1 + (k01 / k11) * u0) ** 2, k00 * u0 * u0))
        second = np.where(on0, (det / k00) * u1 * u1,
                          np.where(on1, (det / k11) * u0 * u0, 2.0 * k01 * u0 * u1))
    return [first, second, np.where(plain, k11 * u1 * u1, 0.0)]


def _phase(mesh: Mesh) -> tuple[float, float]:
    """(c, a) of the Weyl count phi(w) = sum over pieces k h / pi = c w^a, about the
    number of natural frequencies (and of piece poles) below w."""
    _S, k1 = piece_wavenumbers(mesh, np.array([1.0]), damped=False)
    return float(np.sum(k1[0] * mesh.piece_h) / math.pi), (0.5 if mesh.dpn == 2 else 1.0)


def _pole_table(mesh: Mesh, w_max: float) -> tuple[np.ndarray, np.ndarray]:
    """(values rad/s, piece index) of every piece pole up to w_max, sorted: the natural
    frequencies of the pieces with both ends clamped, one entry per piece and mode."""
    line = mesh.line
    vals, owner = [], []
    for p, h in enumerate(mesh.piece_h):
        S, m = static_coefficients(line.kind, line.segments[mesh.piece_seg[p]])
        if mesh.dpn == 1:
            w1 = math.pi * math.sqrt(S / m) / h
            v = w1 * np.arange(1, int(w_max / w1) + 2)
        else:
            scale = math.sqrt(S / m) / (h * h)
            v = _cc_bending_roots(int(math.sqrt(w_max / scale) / math.pi) + 2) ** 2 * scale
        v = v[v <= w_max]
        vals.append(v)
        owner.append(np.full(v.size, p))
    vals, owner = np.concatenate(vals), np.concatenate(owner)
    order = np.argsort(vals, kind="stable")
    return vals[order], owner[order]


def _pole_residues(mesh: Mesh, vals: np.ndarray, owner: np.ndarray) -> np.ndarray:
    """g (n_pole, 2 dpn) with (p^2 - w^2) K_e(w) -> -g g^T at the pole p of piece K_e.

    R(rho) = -rho Im K_e(p^2 - i rho) = -g g^T + rho^2 K_reg' + O(rho^4) (K_e minus its
    pole term is analytic there); Richardson's extrapolation from rho = 1e-4 p^2 and half
    of it leaves O(1e-16) and the rounding of K_e next to its pole, ~eps / 1e-4. R has
    rank one: g is its largest diagonal entry's column over that entry's root."""
    line = mesh.line
    if vals.size == 0:
        return np.zeros((0, 2 * mesh.dpn))
    coef = np.array([static_coefficients(line.kind, sg) for sg in line.segments])
    S, m = coef[mesh.piece_seg[owner]].T
    h = mesh.piece_h[owner]

    def R(delta):
        w2 = vals ** 2 * (1.0 - 1j * delta)
        if mesh.dpn == 2:
            K = beam.piece_stiffness(S, beam.fourth_root(w2 * m / S), h)
        else:
            k = np.sqrt(w2 * m / S)
            k11, k12 = piece_stiffness(S, np.where(k.imag > 0.0, -k, k), h, True)
            K = np.stack([np.stack([k11, k12], -1), np.stack([k12, k11], -1)], -2)
        return -(delta * vals ** 2)[:, None, None] * K.imag

    Rx = (4.0 * R(0.5e-4) - R(1e-4)) / 3.0
    j = np.argmax(np.abs(np.einsum("pii->pi", Rx)), axis=1)
    i = np.arange(vals.size)
    return -Rx[i, :, j] / np.sqrt(-Rx[i, j, j])[:, None]


def _diag(v: np.ndarray) -> np.ndarray:
    """Stacked diagonal matrices (..., n, n) from (..., n)."""
    out = np.zeros(v.shape + v.shape[-1:])
    i = np.arange(v.shape[-1])
    out[..., i, i] = v
    return out


@dataclass(frozen=True, eq=False)
class _Poles:
    """Piece poles up to some frequency: values (rad/s, ascending), the free-DOF rows of
    their piece (n = a held DOF), the DOFs of their piece and residue vectors g,
    (n_pole, 2 dpn)."""

    vals: np.ndarray
    rows: np.ndarray
    dofs: np.ndarray
    g: np.ndarray

    @classmethod
    def of(cls, counter: _Counter, w_max: float) -> "_Poles":
        mesh, n = counter.mesh, counter.free.size
        vals, owner = _pole_table(mesh, w_max)
        where = np.full(mesh.n_dof, n)
        where[counter.free] = np.arange(n)
        dofs = mesh.dpn * owner[:, None] + np.arange(2 * mesh.dpn)[None, :]
        return cls(vals, where[dofs], dofs, _pole_residues(mesh, vals, owner))

    def window(self, omega: np.ndarray, size: int) -> np.ndarray:
        """Indices (len(omega), size) of ``size`` consecutive poles around each omega."""
        size = min(size, self.vals.size)
        start = np.clip(np.searchsorted(self.vals, omega) - size // 2, 0, self.vals.size - size)
        return start[:, None] + np.arange(size)[None, :]

    def couplings(self, n: int, win: np.ndarray) -> np.ndarray:
        """The residue vectors of the poles ``win`` (nb, P) on the n free DOFs, unscaled:
        G (nb, n, P). A piece's DOFs are distinct, so plain assignment serves (held DOFs
        all land on the dropped row n)."""
        nb, P = win.shape
        G = np.zeros((nb, n + 1, P))
        G[np.arange(nb)[:, None, None], self.rows[win], np.arange(P)[None, :, None]] = self.g[win]
        return G[:, :n]

    def couplings_all(self, n_dof: int, win: np.ndarray, held: np.ndarray) -> np.ndarray:
        """:meth:`couplings` on all n_dof DOFs, zero on the ``held`` ones."""
        nb, P = win.shape
        G = np.zeros((nb, n_dof, P))
        G[np.arange(nb)[:, None, None], self.dofs[win], np.arange(P)[None, :, None]] = self.g[win]
        G[:, held] = 0.0
        return G


def _border(T: np.ndarray, G: np.ndarray, dp: np.ndarray, held: np.ndarray) -> None:
    """Completes T(w^2) in place: T holds the scaled K on all N DOFs (nb, N + P, N + P);
    adds the P poles as DOFs (scaled couplings G (nb, N, P), zero on the held DOFs, and
    dp = p^2 - w^2 (nb, P)),

        T = [[K + sum g g^T / (p^2 - w^2), G], [G^T, diag(p^2 - w^2)]],
        B = -dT/d(w^2) = [[M - sum g g^T / (p^2 - w^2)^2, 0], [0, I]],

    and makes each held DOF an uncoupled unit row and column. The Schur complement of T
    on the line DOFs is K itself, whatever g and p, so T and K have the same singular
    points; but T is regular at the included poles."""
    nb, N, P = G.shape
    Gt = np.swapaxes(G, 1, 2)
    T[:, :N, :N] += (G / dp[:, None, :]) @ Gt
    T[:, :N, N:] = G
    T[:, N:, :N] = Gt
    i = np.arange(N, N + P)
    T[:, i, i] = dp
    T[:, held, :] = 0.0
    T[:, :, held] = 0.0
    T[:, held, held] = 1.0


def _regular_mass(Ms: np.ndarray, G: np.ndarray, dp: np.ndarray) -> np.ndarray:
    """The line block M - sum g g^T / (p^2 - w^2)^2 of B = -dT/d(w^2) (:func:`_border`)."""
    return Ms - (G / (dp * dp)[:, None, :]) @ np.swapaxes(G, 1, 2)


def _lower_solve(L: np.ndarray, X: np.ndarray, first: np.ndarray) -> np.ndarray:
    """L^-1 X for lower triangular L (nb, n, n) whose row i is zero left of column
    first[i] (a Cholesky factor keeps its matrix's envelope), X (nb, n, m): forward
    substitution row by row, O(n m) per row of a banded L instead of LU's O(n^3)."""
    Y = np.empty_like(X)
    piv = np.einsum("fii->fi", L)
    for i in range(X.shape[1]):
        j = first[i]
        if j < i:
            Y[:, i] = (X[:, i] - np.einsum("fj,fjm->fm", L[:, i, j:i], Y[:, j:i])) / piv[:, i, None]
        else:
            Y[:, i] = X[:, i] / piv[:, i, None]
    return Y


def _upper_solve(L: np.ndarray, u: np.ndarray, last: np.ndarray) -> np.ndarray:
    """L^-T u for lower triangular L (nb, n, n) and vectors u (nb, n), by back
    substitution; column i of L is zero below row last[i] (:func:`_lower_solve`)."""
    v = np.empty_like(u)
    piv = np.einsum("fii->fi", L)
    for i in range(u.shape[1] - 1, -1, -1):
        k = last[i] + 1
        if k > i + 1:
            v[:, i] = (u[:, i] - np.einsum("fk,fk->f", L[:, i + 1:k, i], v[:, i + 1:k])) / piv[:, i]
        else:
            v[:, i] = u[:, i] / piv[:, i]
    return v


def _estimates(counter: _Counter, targets: np.ndarray, w_top: float,
               poles: _Poles) -> tuple[np.ndarray, np.ndarray]:
    """Estimates (rad/s; NaN where none) of the target-th natural frequencies below w_top,
    and of their mode vectors on the free DOFs ((len(targets), n), unit length).

    About shifts s, one per _SHIFT_SPACING modes (Weyl count), K(w) is modelled by its
    value and slope at s plus the exact poles of the _POLES piece poles nearest s (the
    clamped-piece modes, as extra DOFs q of stiffness p^2 and unit mass, coupled by their
    residues g):

        K(w^2) ~ K(s) - (w^2 - s^2) M(s) - sum g g^T [1 / (p^2 - w^2) - 1 / (p^2 - s^2)
                 - (w^2 - s^2) / (p^2 - s^2)^2],

    a symmetric definite linear pencil whose r-th eigenvalue (r = 0, 1, ...) estimates the
    natural frequency numbered J0(s) - (included poles below s) + r + 1 (Sylvester's
    inertia, as in the count), valid between the nearest excluded poles. Each target
    takes the estimate nearest its shift, and that pencil's eigenvector."""
    mesh = counter.mesh
    c, a = _phase(mesh)
    n = counter.free.size
    npol = poles.vals.size
    n_s = max(1, int(math.ceil(c * w_top ** a / _SHIFT_SPACING)))
    ph_s = (np.arange(n_s) + 0.5) * (c * w_top ** a) / n_s
    if npol:
        # keep shifts off the poles (the pencil there is only as good as the residues):
        # of s and s -+ a quarter spacing, the one farthest from any pole
        ph_p = np.concatenate([[-np.inf], c * poles.vals ** a, [np.inf]])
        cand = ph_s[:, None] + np.array([0.0, -0.25, 0.25])[None, :] * _SHIFT_SPACING
        i = np.searchsorted(ph_p, cand)
        gap = np.minimum(cand - ph_p[i - 1], ph_p[i] - cand)
        # (a first shift below a quarter spacing must not move to phi <= 0)
        ph_s = np.maximum(cand[np.arange(n_s), np.argmax(gap, axis=1)], 1e-3 * ph_s)
    shifts = (ph_s / c) ** (1.0 / a)
    win = poles.window(shifts, _POLES)
    P = win.shape[1]
    # valid between the excluded poles next to the window
    ext = np.concatenate([[0.0], poles.vals, [np.inf]])
    first = win[:, 0] if P else np.searchsorted(poles.vals, shifts)
    zone_lo, zone_hi = ext[first], ext[first + P + 1]
    best_w2 = np.full(targets.size, np.nan)
    best_d = np.full(targets.size, np.inf)
    best_x = np.full((targets.size, n), np.nan)
    start = np.random.default_rng(7).standard_normal(n + P)
    for blk in _blocks(n_s, n + P):
        s = shifts[blk]
        w2 = s * s
        Ks, Ms, d = _free_pair(counter, s)
        G = poles.couplings(n, win[blk]) * d[:, :, None]
        p2 = poles.vals[win[blk]] ** 2
        dp = p2 - w2[:, None]
        B = _regular_mass(Ms, G, dp)
        # the linearised pencil A - w^2 [[B, 0], [0, I]], A = T(s^2) + s^2 B(s^2): its
        # pole block is diag(p^2), its coupling block G; reduced by the Cholesky factor
        # of the (diagonally scaled) line block of B, the pole block being I already
        A = Ks + (G / dp[:, None, :]) @ np.swapaxes(G, 1, 2) + w2[:, None, None] * B
        e = 1.0 / np.sqrt(np.einsum("sii->si", B))
        ee = e[:, :, None] * e[:, None, :]
        try:
            L = np.linalg.cholesky(B * ee)
        except np.linalg.LinAlgError:
            continue
        Y = _lower_solve(L, np.concatenate([A * ee, G * e[:, :, None]], axis=2), counter.first)
        C = np.empty((s.size, n + P, n + P))
        C11 = _lower_solve(L, np.swapaxes(Y[:, :, :n], 1, 2), counter.first)
        C[:, :n, :n] = 0.5 * (C11 + np.swapaxes(C11, 1, 2))
        C[:, :n, n:] = Y[:, :, n:]
        C[:, n:, :n] = np.swapaxes(Y[:, :, n:], 1, 2)
        C[:, n:, n:] = _diag(p2)
        lam = np.linalg.eigvalsh(C)                                    # w^2
        below = (poles.vals[win[blk]] < s[:, None]).sum(axis=1)
        mode = (_clamped_count(mesh, s) - below)[:, None].astype(int) + np.arange(1, n + P + 1)
        with np.errstate(invalid="ignore"):
            w = np.sqrt(lam)
            dist = np.abs(c * w ** a - ph_s[blk, None])
        valid = (lam > 0.0) & (w > zone_lo[blk, None]) & (w < zone_hi[blk, None])
        valid &= np.isin(mode, targets)
        rows = np.nonzero(valid)[0]
        k = np.searchsorted(targets, mode[valid])
        lam, dist = lam[valid], dist[valid]
        # the nearest shift wins (np.minimum.at, then the value that attains it)
        np.minimum.at(best_d, k, dist)
        win_k = np.flatnonzero(dist == best_d[k])
        kk, once = np.unique(k[win_k], return_index=True)
        iw, lw = rows[win_k[once]], lam[win_k[once]]
        best_w2[kk] = lw
        if kk.size:
            # its vector: one step of inverse iteration on the reduced pencil at its
            # eigenvalue (singular to working precision: the step gives the eigenvector),
            # back to the line DOFs (x = d e L^-T u)
            Cw = C[iw]
            i = np.arange(n + P)
            Cw[:, i, i] -= lw[:, None]
            u = _inverse_step(Cw, np.tile(start[:n + P], (iw.size, 1)))
            x = _upper_solve(L[iw], u[:, :n], counter.last) * (e[iw] * d[iw])
            best_x[kk] = x / np.linalg.norm(x, axis=1, keepdims=True)
    return np.sqrt(best_w2), best_x


def _clamped_count(mesh: Mesh, omega: np.ndarray) -> np.ndarray:
    """J0(w): natural frequencies of all pieces with both ends clamped below w."""
    S, k = piece_wavenumbers(mesh, omega, damped=False)
    t = k * mesh.piece_h
    if mesh.dpn == 2:
        return beam.clamped_count(t).sum(axis=1)
    return np.floor(t / math.pi).sum(axis=1)


def _refine(counter: _Counter, omega: np.ndarray, poles: _Poles,
            targets: np.ndarray | None = None, start: np.ndarray | None = None
            ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Nonlinear Rayleigh quotient iteration from estimates omega (rad/s), all at once,
    on T(w^2) of :func:`_border` with the two poles nearest each estimate (so a root
    close to a piece pole converges as well as any other):

        T(w_i) y = B z_i,   z_(i+1) = y / |y|,
        w_(i+1)^2 = w_i^2 + z^T T(w_i) z / z^T B z,

    inverse iteration for the null vector and a Newton step on the Rayleigh functional
    z^T T(w) z = 0, whose w^2-derivative is -z^T B(w) z < 0 (Schreiber, Nonlinear
    eigenvalue problems, TU Berlin thesis, 2008). B, the regular part of the mass, is
    renewed only while a step exceeds 1e-4 (it varies slowly; the poles are in T): the
    steps then still contract by ~1e-4, and only K(w) is assembled again; B is applied
    from the piece masses, never assembled. z^T T z is summed piece by piece without
    the cancellation of the assembled K (:func:`_energy`), so that a short, stiff piece
    does not bury the root in rounding (measured: 1e-6 before, 1e-13 after).
    The iteration stops when a step is below _RFI_TOL, or when two steps show a
    contraction that leaves less than ~4e-15, or at a few times the rounding level of
    the quotient (eps times the sum of its terms' magnitudes over z^T B z). A start
    vector (``start``) replaces the first of the two inverse iteration steps an
    arbitrary start takes at the estimate. With ``targets`` (ascending, one per
    estimate) every iterate is kept between the mid-points to the estimates of the
    neighbouring targets, so that an early step cannot carry it to a neighbour's root.
    ``start``: vectors on the free DOFs to start from (:func:`_estimates`). Returns
    (omega, converged, the last vectors on the free DOFs)."""
    w2 = np.asarray(omega, dtype=float) ** 2
    lo, hi = np.zeros(w2.size), np.full(w2.size, np.inf)
    if targets is not None and w2.size > 1:
        nb = np.diff(targets) == 1                       # consecutive targets
        mid = 0.5 * (w2[:-1] + w2[1:])
        lo[1:] = np.where(nb, mid, 0.0)
        hi[:-1] = np.where(nb, mid, np.inf)
    win = poles.window(np.sqrt(w2), 2)
    done = np.zeros(w2.size, dtype=bool)
    X = np.empty((w2.size, counter.free.size))
    for blk in _blocks(w2.size, counter.free.size + win.shape[1]):
        w2[blk], done[blk], X[blk] = _refine_block(counter, poles, w2[blk], lo[blk], hi[blk],
                                                   win[blk], None if start is None else start[blk])
    return np.sqrt(w2), done, X


def _refine_block(counter: _Counter, poles: _Poles, w2: np.ndarray, lo: np.ndarray,
                  hi: np.ndarray, win: np.ndarray, start: np.ndarray | None = None
                  ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """:func:`_refine` on one block of estimates w2 (rad^2/s^2) kept within [lo, hi],
    with pole windows ``win``, from the vectors ``start`` on the free DOFs (rows
    not finite: an arbitrary start): (w2, converged, the last vectors on the free
    DOFs, unit length)."""
    mesh, f = counter.mesh, counter.free
    N = mesh.n_dof
    held = np.setdiff1d(np.arange(N), f)
    w2 = w2.copy()
    P = win.shape[1]
    m_ = N + P
    # The iteration runs on all DOFs, a held DOF an uncoupled unit row and column of T
    # (its component stays exactly 0): T is assembled in place, scaled as it lands,
    # without gathering the free DOFs. A start with weight on the pole DOFs too: next
    # to a pole the mode is mostly that piece's clamped mode
    Z = np.tile(np.random.default_rng(7).standard_normal(m_), (w2.size, 1))
    Z[:, held] = 0.0
    done = np.zeros(w2.size, dtype=bool)
    alive = np.isfinite(w2) & (w2 > 0.0)
    eps = np.finfo(float).eps
    D = np.ones((w2.size, N))                        # the scaling, from M at the start
    last = np.full(w2.size, np.inf)                  # the previous step
    given = (np.zeros(w2.size, dtype=bool) if start is None
             else np.isfinite(start).all(axis=1)) & alive
    G0 = poles.couplings_all(N, win, held)           # unscaled
    p2 = poles.vals[win] ** 2
    # the piece masses (B's line block is applied from them), renewed only while the
    # steps are large: M(w) varies slowly (the poles are in T), and the steps still
    # contract by ~1e-4; B's pole terms are kept at the same w as M, since next to a pole
    # M holds its double pole and they cancel it
    Me = np.zeros((w2.size, mesh.n_nodes - 1, 2 * mesh.dpn, 2 * mesh.dpn))
    dpB = np.ones((w2.size, P))
    stale = np.ones(w2.size, dtype=bool)
    for it in range(_RFI_ITER):
        first = it == 0
        ib = np.flatnonzero(alive & ~done)
        if ib.size == 0:
            break
        w = np.sqrt(w2[ib])
        re = ib[stale[ib]]
        if re.size:
            Me[re] = _piece_masses(mesh, np.sqrt(w2[re]))
            dpB[re] = p2[re] - w2[re, None]
        if first:
            # a unit mass diagonal: balances forces against moments and absorber DOFs
            # against line DOFs (a diagonal congruence, kept for the whole iteration)
            D[ib[:, None], f[None, :]] = 1.0 / np.sqrt(_mass_diagonal(mesh, Me[ib])[:, f])
        d = D[ib]
        G = G0[ib] * d[:, :, None]
        dp = p2[ib] - w2[ib, None]
        T = np.zeros((ib.size, m_, m_))
        _stiffness_into(T, mesh, w, d)
        _border(T, G, dp, held)
        Mb, db = Me[ib], dpB[ib]

        def times_b(v):
            """B v in the scaled coordinates: [D M D v_x - G (G^T v_x) / dp^2, v_q] (0 on
            the held DOFs), at the w of the last renewal."""
            out = v.copy()
            gv = np.einsum("fip,fi->fp", G, v[:, :N]) / (db * db)
            out[:, :N] = _mass_times(mesh, Mb, v[:, :N] * d) * d - np.einsum("fip,fp->fi", G, gv)
            out[:, held] = 0.0
            return out

        if first:
            # from an arbitrary start, one more step at the estimate before the quotient
            # moves it, so that the vector belongs to the nearest root; the first with
            # the start itself on the right (B z can all but miss a mode that lies
            # mostly in a clamped piece: measured overlap 7e-6). A start vector x from
            # the estimate's pencil has that already; its pole DOFs are those of the
            # null vector of T, q = -G^T x / (p^2 - w^2)
            g = given[ib]
            if (~g).any():
                Z[ib[~g]] = _inverse_step(T[~g], Z[ib[~g]])
            if g.any():
                xs = np.zeros((g.sum(), N))
                xs[:, f] = start[ib[g]] / d[g][:, f]
                with np.errstate(divide="ignore", invalid="ignore"):
                    q = -np.einsum("fip,fi->fp", G[g], xs) / dp[g]
                Z[ib[g]] = np.concatenate([xs, np.where(np.isfinite(q), q, 0.0)], axis=1)
        y = _inverse_step(T, times_b(Z[ib]))
        den = np.einsum("fi,fi->f", y, times_b(y))
        # z^T T z = x^T K x + sum (g.x + (p^2 - w^2) q)^2 / (p^2 - w^2), K's part
        # summed term by term (:func:`_energy`)
        e, e_abs = _energy(mesh, w, y[:, :N] * d)
        r = np.einsum("fip,fi->fp", G, y[:, :N]) + dp * y[:, N:]
        num = e + (r * r / dp).sum(axis=1)
        num_abs = e_abs + (r * r / np.abs(dp)).sum(axis=1)
        step = num / den
        new = np.clip(w2[ib] + step, lo[ib], hi[ib])
        # held at a bound twice: heading for a neighbour's root; left to the fallback
        pinned = (new != w2[ib] + step) & (new == w2[ib])
        Z[ib] = y
        ok = np.isfinite(new) & (new > 0.0) & ~pinned
        alive[ib] &= ok
        conv = np.abs(step) <= _RFI_TOL * np.abs(new)
        # contracting by r = |step / last step| < 1/2: the error left after this step is
        # about r |step| / (1 - r); below ~4e-15 w^2 (2e-15 in w) the next step would
        # only confirm it
        r = np.abs(step) / last[ib]
        conv |= np.isfinite(last[ib]) & (r < 0.5) & (r * np.abs(step) <= 2e-15 * np.abs(new))
        last[ib] = np.abs(step)
        small = np.flatnonzero(ok & ~conv & (np.abs(step) <= 1e-9 * np.abs(new)))
        if small.size:
            # the rounding level of the quotient
            conv[small] = np.abs(step[small]) <= 8.0 * eps * num_abs[small] / den[small]
        done[ib] = ok & conv
        w2[ib] = np.where(ok, new, w2[ib])
        stale[ib] = np.abs(step) > 1e-4 * np.abs(w2[ib])
    X = (Z[:, :N] * D)[:, f]
    return w2, done & alive, X / np.linalg.norm(X, axis=1, keepdims=True)


def _certify(counter: _Counter, targets: np.ndarray, roots: np.ndarray) -> np.ndarray:
    """One stable Wittrick-Williams count at separators g: the geometric mid-point between
    the roots of consecutive targets and, at the ends of each run of consecutive
    targets, w (1 -+ s) with s a quarter of the run's neighbouring relative gap, or for
    a lone target of the mean relative spacing of the modes there (the Weyl count
    phi = c w^a rises by one per mode: dw / w = 1 / (a phi)), in [_CERTIFY, 0.5]: not
    closer than need be, since right at a poorly conditioned root the count is rounding
    noise. True where
    J(g below) = target - 1 and J(g above) = target, with the root strictly between:
    exactly one natural frequency lies between its separators, the target-th, and the
    converged root (a point where K(w) is singular) is it. ``targets`` ascending and
    distinct."""
    n = roots.size
    ok = np.isfinite(roots) & (roots > 0.0)
    w = np.where(ok, roots, 1.0)
    nxt = np.concatenate([np.diff(targets) == 1, [False]])       # target k + 1 follows
    # a run's neighbours must be distinct: closer than 2 _CERTIFY they are not separated
    sep = nxt.copy()
    sep[:-1] &= w[1:] > w[:-1] * (1.0 + 2.0 * _CERTIFY)
    mid = np.sqrt(w[:-1] * w[1:]) if n > 1 else np.zeros(0)
    prev = np.concatenate([[False], sep[:-1]])
    gap = np.clip(0.25 * (w[1:] / w[:-1] - 1.0), _CERTIFY, 0.5) if n > 1 else np.zeros(0)
    c, a = _phase(counter.mesh)
    lone = np.clip(0.25 / (a * c * w ** a), _CERTIFY, 0.5)
    s_hi = np.where(prev, np.concatenate([[0.0], gap]), lone)    # run end: the gap below
    s_lo = np.where(sep, np.concatenate([gap, [0.0]]), lone)     # run start: the gap above
    upper = np.where(sep, np.concatenate([mid, [0.0]]), w * (1.0 + s_hi))
    lower = np.where(prev, np.concatenate([[0.0], mid]), w * (1.0 - s_lo))
    pts = np.concatenate([upper, lower[~prev]])                  # shared mid-points once
    J = np.concatenate([counter.certified(pts[b]) for b in _blocks(pts.size, counter.free.size)])
    j_up = J[:n]
    j_lo = np.empty(n, dtype=J.dtype)
    j_lo[~prev] = J[n:]
    j_lo[prev] = j_up[:-1][sep[:-1]]
    ok &= (j_lo == targets - 1) & (j_up == targets) & (lower < w) & (w < upper)
    ok &= ~(nxt & ~sep) & ~np.concatenate([[False], (nxt & ~sep)[:-1]])
    return ok


def _find_roots(counter: _Counter, targets: np.ndarray, hi0: float,
                out: dict | None = None) -> np.ndarray:
    """The target-th natural frequency for every target (rad/s). With ``out`` (a dict),
    out["vectors"] receives the refinement's vectors on the free DOFs of the roots it
    certified, (len(targets), n_free), NaN rows for the others.

    1. Estimate every root from linearised eigenproblems about shifts between the
       piece poles (:func:`_estimates`), refine all at once by the nonlinear Rayleigh
       quotient iteration (:func:`_refine`).
    2. Certify the roots with one backward-stable Wittrick-Williams count at
       separators between them (:func:`_certify`): exactly one natural frequency
       between consecutive separators, the target-th.
    3. Roots that fail (no estimate, no convergence, a close or coincident neighbour)
       are found by the bracketing method of :func:`_bracketed_roots`, started from the
       certified neighbours' brackets: none is missed or doubled either way.
    """
    targets = np.asarray(targets, dtype=int)
    uniq, inverse = np.unique(targets, return_inverse=True)
    hi_w = hi0
    for _ in range(200):
        if counter(np.array([hi_w]))[0] >= uniq[-1]:
            break
        hi_w *= 2.0
    else:  # pragma: no cover - would need an infinitely stiff model
        raise ModelError("count", int(uniq[-1]), "", "could not bracket that many modes")
    # a tighter top (fewer shifts): the lowest of a few points below it that still counts
    grid = hi_w * np.geomspace(0.25, 1.0, 9)
    hi_w = float(grid[np.argmax(counter(grid) >= uniq[-1])])

    roots = np.full(uniq.size, np.nan)
    good = np.zeros(uniq.size, dtype=bool)
    vec = np.full((uniq.size, counter.free.size), np.nan)
    try:
        poles = _Poles.of(counter, 3.0 * hi_w)
        est, x_est = _estimates(counter, uniq, hi_w, poles)
        have = np.flatnonzero(np.isfinite(est))
        if have.size:
            roots[have], conv, vec[have] = _refine(counter, est[have], poles, uniq[have],
                                                   x_est[have])
            good[have] = conv
    except np.linalg.LinAlgError:
        good[:] = False
    lo = np.zeros(uniq.size)
    hi = np.full(uniq.size, hi_w)
    ig = np.flatnonzero(good)
    if ig.size:
        good[ig] = _certify(counter, uniq[ig], roots[ig])
    rest = np.flatnonzero(~good)
    if rest.size:
        # brackets from certified roots: J(w_j (1 + c)) = j below, J(w_j (1 - c)) = j - 1 above
        ig = np.flatnonzero(good)
        if ig.size:
            tg, wg = uniq[ig], roots[ig]
            below = np.searchsorted(tg, uniq[rest]) - 1       # nearest certified root below
            has_lo, has_hi = below >= 0, below + 1 < ig.size
            lo[rest[has_lo]] = wg[below[has_lo]] * (1.0 + _CERTIFY)
            hi[rest[has_hi]] = wg[below[has_hi] + 1] * (1.0 - _CERTIFY)
        roots[rest] = _bracketed_roots(counter, uniq[rest], lo[rest], hi[rest])
    if out is not None:
        vec[~good] = np.nan
        out["vectors"] = vec[inverse]
    return roots[inverse]


def _bracketed_roots(counter: _Counter, targets: np.ndarray, lo: np.ndarray,
                     hi: np.ndarray) -> np.ndarray:
    """The target-th natural frequencies (rad/s) inside brackets with J(lo) < target
    <= J(hi).

    1. Bisect on the fast LDL^T count to 1e-8 relative: without pivoting its sign
       pattern is only unreliable very near a root.
    2. Check each bracket with the backward-stable count (eigenvalues of the
       row-scaled matrix) and widen any that fails.
    3. Inside a bracket holding one root and no piece pole, one eigenvalue of
       K(w) crosses zero from above (the exact dynamic stiffness decreases with
       w): find that crossing by the Illinois variant of regula falsi to full
       precision. Brackets with a pole are finished by bisection on the stable count.
    """
    eps = np.finfo(float).eps
    lo, hi = _bisect(counter, targets, lo, hi, 1e-8)

    widen = 1e-7
    for _ in range(12):
        J_lo, _ev, J0_lo = counter.stable(lo)
        J_hi, _ev, J0_hi = counter.stable(hi)
        bad = (J_lo >= targets) | (J_hi < targets)
        if not bad.any():
            break
        lo[bad] = np.maximum(lo[bad] - widen * hi[bad], 0.0)
        hi[bad] = hi[bad] * (1.0 + widen)
        widen *= 10.0
    simple = (J_lo == targets - 1) & (J_hi == targets) & (J0_lo == J0_hi) & (lo > 0)
    root = 0.5 * (lo + hi)
    if (~simple).any():
        idx = np.flatnonzero(~simple)
        l2, h2 = _bisect(lambda w: counter.stable(w)[0], targets[idx], lo[idx], hi[idx], 4 * eps)
        root[idx] = 0.5 * (l2 + h2)
    idx = np.flatnonzero(simple)
    if idx.size:
        q = (J_lo - J0_lo)[idx]                      # index of the crossing eigenvalue
        a, b = lo[idx], hi[idx]
        fa = counter.crossing(a, q)
        fb = counter.crossing(b, q)
        side = np.zeros(idx.size, dtype=int)
        for _ in range(100):
            act = (b - a) > 4 * eps * b
            if not act.any():
                break
            x = b - fb * (b - a) / (fb - fa)
            inside = (x > a) & (x < b) & np.isfinite(x)
            x = np.where(inside, x, 0.5 * (a + b))
            fx = np.ones_like(x)
            fx[act] = counter.crossing(x[act], q[act])
            pos = act & (fx > 0)
            neg = act & (fx < 0)
            zero = act & (fx == 0)
            # Illinois: halve the retained end's value when the same end is kept twice
            fb = np.where(pos & (side == 1), 0.5 * fb, fb)
            fa = np.where(neg & (side == -1), 0.5 * fa, fa)
            a = np.where(pos, x, a)
            fa = np.where(pos, fx, fa)
            b = np.where(neg, x, b)
            fb = np.where(neg, fx, fb)
            side = np.where(pos, 1, np.where(neg, -1, side))
            a = np.where(zero, x, a)
            b = np.where(zero, x, b)
        root[idx] = 0.5 * (a + b)
    return root


@dataclass(frozen=True, eq=False)
class ModeSet:
    """Undamped natural frequencies and mass-normalised mode shapes.

    ``frequencies`` (Hz, ascending, rigid-body modes 0.0); ``shape(x)`` gives the
    shapes at positions x as an array (len(x), count). Mass normalisation:
    integral of m phi_i phi_j over the line plus point and absorber masses
    = delta_ij (for ducts m is the analogue compliance A / (rho c^2)).
    ``absorber_amplitudes`` holds the absorber masses' motion (count, n_absorbers).
    """

    line: Line
    frequencies: np.ndarray
    mesh: Mesh
    nodal: np.ndarray          # (count, n_dof): node values then absorber DOFs
    n_rigid: int

    @property
    def count(self) -> int:
        return len(self.frequencies)

    @property
    def omega(self) -> np.ndarray:
        return 2.0 * math.pi * self.frequencies

    def first(self, n: int) -> "ModeSet":
        """The lowest ``n`` modes of this set (no recomputation)."""
        if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or not 1 <= n <= self.count:
            raise ModelError("modes", n, "", f"must be a count from 1 to {self.count}")
        if int(n) == self.count:
            return self
        # the same subset object each time, so that what is cached on it (residual
        # shapes, damping eigenvalues) is reused
        firsts = self.__dict__.setdefault("_firsts", {})
        if int(n) not in firsts:
            firsts[int(n)] = ModeSet(line=self.line, frequencies=self.frequencies[:n],
                                     mesh=self.mesh, nodal=self.nodal[:n],
                                     n_rigid=min(self.n_rigid, int(n)))
        return firsts[int(n)]

    @property
    def absorber_amplitudes(self) -> np.ndarray:
        return self.nodal[:, self.mesh.n_line_dofs:]

    def shape(self, x, derivative: bool | int = False) -> np.ndarray:
        """Mode shapes at positions x: array (len(x), count). ``derivative`` = True or
        1 gives the slope; 2 and 3 (bending) the second and third derivatives."""
        from .. import checks
        xs = checks.positions(self.line, "x", x)
        top = 1 if self.mesh.dpn == 1 else 3
        if isinstance(derivative, (bool, np.bool_)):
            derivative = int(derivative)
        order = checks.whole("derivative", derivative, low=0, high=top)
        p, xi = self.mesh.locate(xs)
        return _field(self.mesh, self.omega, self.nodal, p, xi, order).T


def _field(mesh: Mesh, omega: np.ndarray, nodal: np.ndarray, p, xi, order: int) -> np.ndarray:
    """Real undamped mode fields (count, len(p)); rigid-body modes by static interpolation."""
    out = np.empty((omega.size, len(p)))
    rigid = omega == 0.0
    if (~rigid).any():
        S, k = piece_wavenumbers(mesh, omega[~rigid], damped=False)
        if mesh.dpn == 1:
            # real k: the sine form costs a quarter of the complex exponentials
            kk = k[:, p]
            h = mesh.piece_h[p]
            ua, ub = nodal[~rigid][:, p], nodal[~rigid][:, p + 1]
            s = np.sin(kk * h)
            if order == 0:
                out[~rigid] = (ua * np.sin(kk * (h - xi)) + ub * np.sin(kk * xi)) / s
            else:
                out[~rigid] = kk * (ub * np.cos(kk * xi) - ua * np.cos(kk * (h - xi))) / s
        else:
            out[~rigid] = interior_field(mesh, S, k, nodal[~rigid], p, xi, order).real
    if rigid.any():
        out[rigid] = static_field(mesh, nodal[rigid], p, xi, order)
    return out


def _series(t, coeffs, powers):
    return sum(c * t ** p for c, p in zip(coeffs, powers))


def _piece_mass_integrals(t: np.ndarray):
    """g1 = int A^2 / h and g2 = int A B / h for the exact piece shape functions
    A = sin k(h-x)/sin kh, B = sin kx/sin kh (t = k h); series for small t where
    the closed forms cancel."""
    t = np.asarray(t, dtype=float)
    s2 = np.sin(t) ** 2
    small = np.abs(t) < 0.1
    ts = np.where(small, t, 1.0)
    tl = np.where(small, 1.0, t)
    num1 = np.where(small,
                    _series(ts, [4 / 3, -4 / 15, 8 / 315, -4 / 2835, 4 / 155925], [3, 5, 7, 9, 11]),
                    2.0 * tl - np.sin(2.0 * tl))
    num2 = np.where(small,
                    _series(ts, [1 / 3, -1 / 30, 1 / 840, -1 / 45360, 1 / 3991680], [3, 5, 7, 9, 11]),
                    np.sin(tl) - tl * np.cos(tl))
    tt = np.where(t == 0.0, 1.0, t)
    s2 = np.where(t == 0.0, 1.0, s2)
    g1 = np.where(t == 0.0, 1 / 3, num1 / (4.0 * tt * s2))
    g2 = np.where(t == 0.0, 1 / 6, num2 / (2.0 * tt * s2))
    return g1, g2


def _mass_matrix(mesh: Mesh, omega: np.ndarray) -> np.ndarray:
    """Exact dynamic mass M(w) = -dK/d(w^2) of the undamped line, (n_freq, n_dof, n_dof).

    v^T M(w) u = integral of m phi_v phi_u over the line, plus point masses, rotary
    inertias and absorber masses, with phi_v the exact field of nodal values v at w
    (Richards and Leung, J. Sound Vib. 55, 1977; for ducts m is the analogue compliance
    A / (rho c^2)). Second order: m h [[g1, g2], [g2, g1]] per piece
    (:func:`_piece_mass_integrals`); bending: :func:`beam.piece_mass`."""
    omega = np.asarray(omega, dtype=float)
    line, dpn = mesh.line, mesh.dpn
    m_seg = np.array([static_coefficients(line.kind, s)[1] for s in line.segments])
    mp = m_seg[mesh.piece_seg]
    h = mesh.piece_h
    S, k = piece_wavenumbers(mesh, omega, damped=False)
    M = np.zeros((omega.size, mesh.n_dof, mesh.n_dof))
    if dpn == 2:
        Me = beam.piece_mass(S, mp, k, h)                       # (n_freq, n_piece, 4, 4)
        _add_pieces(M, [[Me[:, :, a, b] for b in range(4)] for a in range(4)])
    else:
        g1, g2 = _piece_mass_integrals(k * h)
        idx = np.arange(mesh.n_nodes - 1)
        M[:, idx, idx] += mp * h * g1
        M[:, idx + 1, idx + 1] += mp * h * g1
        M[:, idx, idx + 1] += mp * h * g2
        M[:, idx + 1, idx] += mp * h * g2
    for dof, mass in _point_masses(mesh):
        M[:, dof, dof] += mass
    return M


def _point_masses(mesh: Mesh) -> list[tuple[int, float]]:
    """(DOF, mass or rotary inertia) of the attachments, end tables and absorber masses."""
    line, dpn = mesh.line, mesh.dpn
    terms = [(node, mass, ri) for node, mass, _s, _c, ri, _rs in mesh.lumped]
    for side, ee in enumerate(line.ends):
        if not isinstance(ee, str):
            terms.append((0 if side == 0 else mesh.n_nodes - 1, ee.mass, ee.rot_inertia))
    out = []
    for node, mass, ri in terms:
        out.append((dpn * node, mass))
        if dpn == 2 and ri:
            out.append((2 * node + 1, ri))
    out += [(mesh.n_line_dofs + j, ab.mass) for j, (_node, ab) in enumerate(mesh.absorbers)]
    return out


def _mass_products(mesh: Mesh, omega: np.ndarray, V: np.ndarray, W: np.ndarray) -> np.ndarray:
    """Mass inner products <v_i, w_i> of nodal vectors V, W (count, n_dof) at omega (count,)."""
    return np.einsum("fi,fij,fj->f", V, _mass_matrix(mesh, omega), W)


def _piece_masses(mesh: Mesh, omega: np.ndarray) -> np.ndarray:
    """The exact dynamic mass of every piece, (n_freq, n_piece, 2 dpn, 2 dpn): the blocks
    :func:`_mass_matrix` assembles."""
    line = mesh.line
    m_p = np.array([static_coefficients(line.kind, sg)[1] for sg in line.segments])[mesh.piece_seg]
    h = mesh.piece_h
    S, k = piece_wavenumbers(mesh, omega, damped=False)
    if mesh.dpn == 2:
        return beam.piece_mass(S, m_p, k, h)
    g1, g2 = _piece_mass_integrals(k * h)
    Me = np.empty(g1.shape + (2, 2))
    Me[..., 0, 0] = Me[..., 1, 1] = m_p * h * g1
    Me[..., 0, 1] = Me[..., 1, 0] = m_p * h * g2
    return Me


def _mass_times(mesh: Mesh, Me: np.ndarray, X: np.ndarray) -> np.ndarray:
    """M(w) x for nodal vectors X (batch, n_dof), from the piece masses Me of
    :func:`_piece_masses` and the point masses, without assembling M."""
    dpn, npc = mesh.dpn, Me.shape[1]
    U = X[:, dpn * np.arange(npc)[:, None] + np.arange(2 * dpn)[None, :]]
    V = np.einsum("fpij,fpj->fpi", Me, U)
    out = np.zeros_like(X)
    for a in range(2 * dpn):
        out[:, a:a + dpn * npc:dpn] += V[:, :, a]
    for dof, mass in _point_masses(mesh):
        out[:, dof] += mass * X[:, dof]
    return out


def _mass_diagonal(mesh: Mesh, Me: np.ndarray) -> np.ndarray:
    """The diagonal of M(w), (batch, n_dof), from the piece masses Me."""
    dpn, npc = mesh.dpn, Me.shape[1]
    out = np.zeros((Me.shape[0], mesh.n_dof))
    for a in range(2 * dpn):
        out[:, a:a + dpn * npc:dpn] += Me[:, :, a, a]
    for dof, mass in _point_masses(mesh):
        out[:, dof] += mass
    return out


@functools.lru_cache(maxsize=16)
def _gauss(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Legendre nodes and weights on [-1, 1] (computed once per order)."""
    return np.polynomial.legendre.leggauss(n)


def _back_step(R: np.ndarray, b: np.ndarray) -> np.ndarray:
    """One inverse-iteration step R y = b (batched, R upper triangular (batch, n, n),
    b (batch, n)), normalised, by back substitution: a loop over the n DOFs, O(n^2) per
    matrix. A pivot below eps times the matrix scale is raised to it (a perturbation
    within rounding): the null direction then just dominates y, as inverse iteration
    wants."""
    n = R.shape[1]
    diag = np.einsum("fii->fi", R)
    floor = np.finfo(float).eps * np.abs(R).max(axis=(1, 2))[:, None]
    floor = np.where(floor > 0.0, floor, np.finfo(float).tiny)
    piv = np.where(np.abs(diag) < floor, np.where(diag < 0.0, -floor, floor), diag)
    b = b / np.abs(b).max(axis=1, keepdims=True)
    y = np.empty_like(b)
    for i in range(n - 1, -1, -1):
        y[:, i] = (b[:, i] - np.einsum("fj,fj->f", R[:, i, i + 1:], y[:, i + 1:])) / piv[:, i]
        # keep y finite: rescale the solved part (and b with it) should it grow large
        big = np.abs(y[:, i:]).max(axis=1)
        over = big > 1e150
        if over.any():
            y[over, i:] /= big[over, None]
            b[over] /= big[over, None]
    y /= np.abs(y).max(axis=1, keepdims=True)
    return y / np.linalg.norm(y, axis=1, keepdims=True)


def _mass_norms(mesh: Mesh, omega: np.ndarray, nodal: np.ndarray) -> np.ndarray:
    """v^T M(w) v for every mode (count,), summed piece by piece. Bending pieces within
    1e-3 of one of their clamped-clamped frequencies take the integral of m w^2 of the
    field from its basis coefficients, by Gauss quadrature, instead: there a mode lives
    mostly inside the piece, its end values are small, and the quadratic form of the
    piece's dynamic mass (entries ~ 1 / distance^2) cancels to ~1e7 times its value
    (measured 2e-9 at 2e-5 from the pole), where the quadrature keeps 1e-12."""
    if mesh.dpn != 2:
        return _mass_products(mesh, omega, nodal, nodal)
    line = mesh.line
    m_p = np.array([static_coefficients(line.kind, sg)[1] for sg in line.segments])[mesh.piece_seg]
    h_p = mesh.piece_h
    out = np.zeros(omega.size)
    for blk in _blocks(omega.size, 4 * len(h_p)):
        w, X = omega[blk], nodal[blk]
        S, beta = piece_wavenumbers(mesh, w, damped=False)
        U = X[:, 2 * np.arange(len(h_p))[:, None] + np.arange(4)[None, :]]      # (f, p, 4)
        terms = np.einsum("fpi,fpij,fpj->fp", U, beam.piece_mass(S, m_p, beta, h_p), U)
        lam = beta * h_p
        roots = _cc_bending_roots(int(lam.max(initial=0.0) / math.pi) + 2)
        i = np.clip(np.searchsorted(roots, lam), 1, roots.size - 1)
        near = np.minimum(np.abs(lam - roots[i - 1]), np.abs(lam - roots[i])) <= 1e-3 * lam
        near &= (w > 0.0)[:, None]
        km, pc = np.nonzero(near)                                 # (mode, piece) pairs
        if km.size:
            h, b = h_p[pc], beta[km, pc]
            c = beam.coefficients(S[km, pc], b.astype(complex), h, list(U[km, pc].T))
            nq = int(12 + np.ceil(1.2 * lam[km, pc].max()))
            t, wq = _gauss(nq)
            x = 0.5 * (t[None, :] + 1.0) * h[:, None]             # (pairs, nq)
            B = beam._basis(b[:, None].astype(complex), h[:, None], x, 0)
            field = sum(ci[:, None] * Bi for ci, Bi in zip(c, B)).real
            terms[km, pc] = m_p[pc] * 0.5 * h * (field ** 2 @ wq)
        out[blk] = terms.sum(axis=1)
    for dof, mass in _point_masses(mesh):
        out += mass * nodal[:, dof] ** 2
    return out


def _band_qr(A: np.ndarray, bw: int) -> tuple[np.ndarray, np.ndarray]:
    """A = Q R for banded A (nb, n, n), half-width bw, by one Householder reflection per
    column acting on the band only (Golub and Van Loan, Matrix Computations, 4th ed.,
    2013, 5.2 and 4.3): backward stable as any Householder QR, O(n bw^2) per matrix. A
    is overwritten by R (upper bandwidth 2 bw); returns the reflectors, V (nb, n, bw + 1)
    and beta (nb, n), with H_j = I - beta_j v_j v_j^T acting on rows j..j+bw and
    Q^T = H_(n-1) ... H_0 (:func:`_apply_qt`)."""
    nb, n, _ = A.shape
    m = bw + 1
    V = np.zeros((nb, n, m))
    beta = np.zeros((nb, n))
    for j in range(n):
        r1, c1 = min(n, j + m), min(n, j + 2 * bw + 1)
        v = A[:, j:r1, j].copy()
        norm = np.sqrt(np.einsum("fi,fi->f", v, v))
        alpha = np.where(v[:, 0] >= 0.0, -norm, norm)
        v[:, 0] -= alpha
        vv = np.einsum("fi,fi->f", v, v)
        b = np.where(vv > 0.0, 2.0 / np.where(vv > 0.0, vv, 1.0), 0.0)
        blk = A[:, j:r1, j + 1:c1]
        blk -= v[:, :, None] * (b[:, None] * np.einsum("fi,fic->fc", v, blk))[:, None, :]
        A[:, j, j] = np.where(vv > 0.0, alpha, A[:, j, j])
        A[:, j + 1:r1, j] = 0.0
        V[:, j, :r1 - j] = v
        beta[:, j] = b
    return V, beta


def _apply_qt(V: np.ndarray, beta: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Q^T x for the reflectors of :func:`_band_qr` and vectors x (nb, n)."""
    x = x.copy()
    n, m = V.shape[1], V.shape[2]
    for j in range(n):
        r1 = min(n, j + m)
        v = V[:, j, :r1 - j]
        x[:, j:r1] -= v * (beta[:, j] * np.einsum("fi,fi->f", v, x[:, j:r1]))[:, None]
    return x


def _mode_vectors(counter: _Counter, omega: np.ndarray, n_rigid: int,
                  start: np.ndarray | None = None) -> np.ndarray:
    """Mass-normalised nodal vectors (count, n_dof) at the natural frequencies omega.

    An isolated root: inverse iteration, K(w) y = x, all modes at once, through K = Q R
    (K(w) is singular to working precision, so y is its null vector to about
    eps |K| / gap, as from an eigensolver; LU's backward error grows with its
    multipliers: measured 2e-13 against 1e-16 by QR next to a piece pole). One step
    from ``start`` (count, n_free), the refinement's vector where finite rows (its
    error is then damped by eps |K| / gap), two from an arbitrary vector otherwise. It
    is the null vector of K at the computed w, not the mode at the exact root: the
    fields are evaluated at that w, and next to a piece pole only a vector consistent
    with it keeps them orthogonal to ~1e-13 (measured). Numerically coincident roots
    take their whole null space from eigenvectors."""
    mesh = counter.mesh
    free = counter.free
    count = omega.size
    nodal = np.zeros((count, mesh.n_dof))
    if n_rigid:
        nodal[:n_rigid] = _rigid_motions(mesh)[:n_rigid]
    el = np.arange(n_rigid, count)
    w = omega[el]
    # groups of (numerically) coincident frequencies take their whole null space
    rel = np.abs(np.diff(w)) <= 1e-9 * w[1:]
    in_group = np.zeros(el.size, dtype=bool)
    in_group[1:] |= rel
    in_group[:-1] |= rel
    single = np.flatnonzero(~in_group)
    n = free.size
    x0 = np.random.default_rng(7).standard_normal(n)
    # in the band order of the count (a narrow band for the QR)
    o = counter.order
    if start is None:
        start = np.full((count, n), np.nan)
    start = start[:, np.searchsorted(free, o)]
    for blk in _blocks(single.size, n):
        ib = single[blk]
        K, _J0 = _assemble(mesh, w[ib])
        # symmetric row-norm scaling, rows taken over all DOFs (held ones included): the
        # diagonal, or even the whole free row, can cancel to ~0 at a root. (A unit mass
        # diagonal would not do: a very short piece's node has a tiny mass and a huge
        # stiffness, and the null vector lost 5e-6 in mass-orthogonality, measured.)
        rowmax = np.maximum(K.max(axis=2), -K.min(axis=2))[:, o]
        d = 1.0 / (np.sqrt(np.maximum(rowmax, 1e-8 * rowmax.max(axis=1, keepdims=True))) + 1e-300)
        R = K[:, o[:, None], o[None, :]] * (d[:, :, None] * d[:, None, :])
        V, beta = _band_qr(R, counter.bw)
        # K y = x  <=>  R y = Q^T x; from an arbitrary x a second step from the first's y
        x = start[el[ib]] / d
        given = np.isfinite(x).all(axis=1)
        x[~given] = x0
        y = _back_step(R, _apply_qt(V, beta, x))
        again = np.flatnonzero(~given)
        if again.size:
            y[again] = _back_step(R[again], _apply_qt(V[again], beta[again], y[again]))
        nodal[el[ib][:, None], o[None, :]] = y * d
    grouped = np.flatnonzero(in_group)
    if grouped.size:
        wg = w[grouped]
        K, _ = _assemble(mesh, wg)
        Kf = K[:, free[:, None], free[None, :]]
        # symmetric row-norm scaling, rows taken over all DOFs (held ones included):
        # the diagonal, or even the whole free row, can cancel to ~0 at a root
        rowmax = np.abs(K[:, free, :]).max(axis=2)
        dg = np.sqrt(np.maximum(rowmax, 1e-8 * rowmax.max(axis=1, keepdims=True))) + 1e-300
        ev, vec = np.linalg.eigh(Kf / dg[:, :, None] / dg[:, None, :])
        order = np.argsort(np.abs(ev), axis=1)
        pos = np.zeros(grouped.size, dtype=int)
        for i in range(1, grouped.size):
            same = grouped[i] == grouped[i - 1] + 1 and abs(wg[i] - wg[i - 1]) <= 1e-9 * wg[i]
            pos[i] = pos[i - 1] + 1 if same else 0
        for i in range(grouped.size):
            nodal[el[grouped[i]], free] = vec[i][:, order[i, pos[i]]] / dg[i]
    # mass-normalise (Gram-Schmidt in the mass inner product inside coincident groups)
    nodal /= np.sqrt(_mass_norms(mesh, omega, nodal))[:, None]
    start = 0
    while start < count:
        stop = start + 1
        while stop < count and abs(omega[stop] - omega[start]) <= 1e-9 * max(omega[stop], 1e-300):
            stop += 1
        for a in range(start + 1, stop):
            for b in range(start, a):
                proj = _mass_products(mesh, omega[[a]], nodal[[a]], nodal[[b]])[0]
                nodal[a] -= proj * nodal[b]
            nodal[a] /= math.sqrt(_mass_products(mesh, omega[[a]], nodal[[a]], nodal[[a]])[0])
        start = stop
    # sign: the largest nodal value positive
    big = np.argmax(np.abs(nodal[:, :mesh.n_line_dofs:mesh.dpn]), axis=1) * mesh.dpn
    sgn = np.sign(nodal[np.arange(count), big])
    nodal *= np.where(sgn == 0, 1.0, sgn)[:, None]
    return nodal


def _solve_frequencies(line: Line, count: int):
    """Roots on the golden-split mesh; should one of them fall within 1e-6 of a piece
    pole (where the refinement and the null vector lose digits), again on a mesh split
    at another fraction, keeping the set whose roots lie farthest from any pole.
    Returns (counter, omega, n_rigid, the refinement's vectors (count, n_free), NaN rows
    where none)."""
    best = None
    for split in SPLITS:
        counter = _Counter(line, split)
        n_rigid = min(_rigid_count(counter.mesh, counter.free), count)
        omega = np.zeros(count)
        start = np.full((count, counter.free.size), np.nan)
        n_el = count - n_rigid
        if n_el:
            targets = np.arange(n_rigid + 1, count + 1)
            out: dict = {}
            omega[n_rigid:] = _find_roots(counter, targets, _omega_scale(line, count + 1), out)
            start[n_rigid:] = out["vectors"]
        d = pole_distance(counter.mesh, omega[n_rigid:])
        if best is None or d > best[0]:
            best = (d, counter, omega, n_rigid, start)
        if d >= 1e-6:
            break
    return best[1:]


def natural_frequencies(line: Line, count: int = 8) -> np.ndarray:
    """The lowest ``count`` undamped natural frequencies (Hz), ascending; rigid-body
    modes are 0.0. Attachments' masses and springs and absorbers are included;
    dashpots and all damping are left out."""
    from ..checks import solvable
    line = solvable(line)
    count = _check_count(count)
    _c, omega, _r, _x = _solve_frequencies(line, count)
    return omega / (2.0 * math.pi)


def modes(line: Line, count: int = 8) -> ModeSet:
    """Natural frequencies and mass-normalised mode shapes of the undamped line."""
    from ..checks import solvable
    line = solvable(line)
    count = _check_count(count)
    counter, omega, n_rigid, start = _solve_frequencies(line, count)
    nodal = _mode_vectors(counter, omega, n_rigid, start)
    return ModeSet(line=line, frequencies=omega / (2.0 * math.pi), mesh=counter.mesh,
                   nodal=nodal, n_rigid=n_rigid)
