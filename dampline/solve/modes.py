"""Natural frequencies and mass-normalised modes of the undamped line.

Roots are bracketed by the Wittrick-Williams algorithm (Q. J. Mech. Appl.
Math. 24, 1971, 263-284): the number of natural frequencies below w is

    J(w) = sum over pieces of J0 + s{K(w)},

where J0 counts the natural frequencies of each piece with both ends clamped
(floor(k h / pi) for a second-order piece) and s{K} is the number of negative
pivots of the real dynamic stiffness in an LDL^T factorisation (Sylvester's law
of inertia). Every root is then isolated and bisected on J itself, for all
modes at once, so none is missed or doubled, close pairs included. Rigid-body
modes are the null space of the static stiffness and are reported as 0.0 Hz.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import ModelError
from ..families import static_coefficients
from ..model.line import Line
from .mesh import (Mesh, assemble, build_mesh, dirichlet_nodes, free_dofs,
                   piece_wavenumbers, static_stiffness)

__all__ = ["natural_frequencies", "modes", "ModeSet"]


def _check_count(count) -> int:
    if isinstance(count, bool) or not isinstance(count, (int, np.integer)):
        raise ModelError("count", count, "", "must be a whole number of modes")
    if count < 1:
        raise ModelError("count", count, "", "must be at least 1")
    if count > 100_000:
        raise ModelError("count", count, "", "is unreasonably large (at most 100000)")
    return int(count)


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


class _Counter:
    """J(w) of a line: Wittrick-Williams count of natural frequencies below w."""

    def __init__(self, line: Line):
        self.mesh = build_mesh(line)
        self.free = free_dofs(self.mesh, dirichlet_nodes(line))
        # absorber DOFs couple to their node only: bandwidth from the assembled pattern
        order = self._band_order()
        self.order = order
        pattern = np.abs(assemble(self.mesh, np.array([1.0]), damped=False)[0][0]) > 0
        pattern = pattern[np.ix_(order, order)]
        ii, jj = np.nonzero(pattern)
        self.bw = int(np.max(np.abs(ii - jj))) if ii.size else 0

    def _band_order(self) -> np.ndarray:
        m = self.mesh
        nn = m.n_nodes
        free = set(self.free.tolist())
        seq = []
        by_node: dict[int, list[int]] = {}
        for j, (node, _ab) in enumerate(m.absorbers):
            by_node.setdefault(node, []).append(nn + j)
        for i in range(nn):
            if i in free:
                seq.append(i)
            seq += by_node.get(i, [])
        return np.asarray(seq, dtype=int)

    def __call__(self, omega: np.ndarray) -> np.ndarray:
        omega = np.asarray(omega, dtype=float)
        K, J0 = assemble(self.mesh, omega, damped=False)
        o = self.order
        A = K[:, o[:, None], o[None, :]]
        return (J0 + _negcount(A, self.bw)).astype(int)


def _rigid_count(mesh: Mesh, free: np.ndarray) -> int:
    K0 = static_stiffness(mesh)[np.ix_(free, free)]
    if K0.size == 0:
        return 0
    ev = np.linalg.eigvalsh(K0)
    return int(np.sum(np.abs(ev) <= 1e-10 * np.abs(ev).max()))


def _omega_scale(line: Line) -> float:
    """pi c / L of the whole line with its slowest speed: a first-mode scale."""
    t = sum(s.length / math.sqrt(np.divide(*static_coefficients(line.kind, s)))
            for s in line.segments)
    return math.pi / t


def _bisect_all(counter: _Counter, targets: np.ndarray, hi0: float) -> tuple[np.ndarray, np.ndarray]:
    """Bracket [lo, hi] with J(lo) < target <= J(hi) for every target, shrunk to rounding."""
    hi_w = hi0
    for _ in range(200):
        if counter(np.array([hi_w]))[0] >= targets.max():
            break
        hi_w *= 2.0
    else:  # pragma: no cover - would need an infinitely stiff model
        raise ModelError("count", int(targets.max()), "", "could not bracket that many modes")
    lo = np.zeros(targets.size)
    hi = np.full(targets.size, hi_w)
    for _ in range(2000):
        active = (hi - lo) > 4.0 * np.finfo(float).eps * hi
        if not active.any():
            break
        mid = 0.5 * (lo[active] + hi[active])
        # targets that share a bracket share the evaluation
        um, inv = np.unique(mid, return_inverse=True)
        J = counter(um)[inv]
        up = J >= targets[active]
        ia = np.flatnonzero(active)
        hi[ia[up]] = mid[up]
        lo[ia[~up]] = mid[~up]
    return lo, hi


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

    @property
    def absorber_amplitudes(self) -> np.ndarray:
        return self.nodal[:, self.mesh.n_nodes:]

    def shape(self, x, derivative: bool = False) -> np.ndarray:
        """Mode shapes (or their x-derivatives) at positions x: array (len(x), count)."""
        from .exact import check_position
        xs = check_position(self.line, "x", x)
        m = self.mesh
        p, xi = m.locate(xs)
        w = self.omega
        S, k = piece_wavenumbers(m, w, damped=False)        # (count, n_piece)
        h = m.piece_h[p][None, :]
        kk = k[:, p]
        ua = self.nodal[:, p]
        ub = self.nodal[:, p + 1]
        out = np.empty((self.count, xs.size))
        rigid = w == 0.0
        el = ~rigid
        if el.any():
            t = kk[el] * h
            s = np.sin(t)
            if not derivative:
                out[el] = (ua[el] * np.sin(kk[el] * (h - xi)) + ub[el] * np.sin(kk[el] * xi)) / s
            else:
                out[el] = kk[el] * (-ua[el] * np.cos(kk[el] * (h - xi))
                                    + ub[el] * np.cos(kk[el] * xi)) / s
        if rigid.any():
            if not derivative:
                out[rigid] = ua[rigid] + (ub[rigid] - ua[rigid]) * (xi / h)
            else:
                out[rigid] = (ub[rigid] - ua[rigid]) / h
        return out.T


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


def _mass_products(mesh: Mesh, omega: np.ndarray, V: np.ndarray, W: np.ndarray) -> np.ndarray:
    """Mass inner products <v_i, w_i> of nodal vectors V, W (count, n_dof) at omega (count,)."""
    line = mesh.line
    m_seg = np.array([static_coefficients(line.kind, s)[1] for s in line.segments])
    mp = m_seg[mesh.piece_seg]
    h = mesh.piece_h
    _, k = piece_wavenumbers(mesh, omega, damped=False)
    g1, g2 = _piece_mass_integrals(k * h)
    va, vb, wa, wb = V[:, :-1], V[:, 1:], W[:, :-1], W[:, 1:]
    va, vb = V[:, :mesh.n_nodes - 1], V[:, 1:mesh.n_nodes]
    wa, wb = W[:, :mesh.n_nodes - 1], W[:, 1:mesh.n_nodes]
    total = (mp * h * (g1 * (va * wa + vb * wb) + g2 * (va * wb + vb * wa))).sum(axis=1)
    for node, mass, _s, _c in mesh.lumped:
        total += mass * V[:, node] * W[:, node]
    for ee, side in ((line.ends[0], 0), (line.ends[1], 1)):
        if not isinstance(ee, str):
            node = 0 if side == 0 else mesh.n_nodes - 1
            total += ee.mass * V[:, node] * W[:, node]
    for j, (_node, ab) in enumerate(mesh.absorbers):
        q = mesh.n_nodes + j
        total += ab.mass * V[:, q] * W[:, q]
    return total


def _mode_vectors(counter: _Counter, omega: np.ndarray, n_rigid: int) -> np.ndarray:
    mesh = counter.mesh
    free = counter.free
    count = omega.size
    nodal = np.zeros((count, mesh.n_dof))
    if n_rigid:
        K0 = static_stiffness(mesh)[np.ix_(free, free)]
        _ev, vec = np.linalg.eigh(K0)
        nodal[:n_rigid, free] = vec[:, :n_rigid].T
    el = np.arange(n_rigid, count)
    if el.size:
        w = omega[el]
        K, _ = assemble(mesh, w, damped=False)
        Kf = K[:, free[:, None], free[None, :]]
        # symmetric row-norm scaling, rows taken over all DOFs (held ones included):
        # the diagonal, or even the whole free row, can cancel to ~0 at a root
        rowmax = np.abs(K[:, free, :]).max(axis=2)
        d = np.sqrt(np.maximum(rowmax, 1e-8 * rowmax.max(axis=1, keepdims=True))) + 1e-300
        Ks = Kf / d[:, :, None] / d[:, None, :]
        ev, vec = np.linalg.eigh(Ks)
        order = np.argsort(np.abs(ev), axis=1)
        # groups of (numerically) coincident frequencies take their whole null space
        rel = np.abs(np.diff(w)) <= 1e-9 * w[1:]
        pos = np.zeros(el.size, dtype=int)
        for i in range(1, el.size):
            pos[i] = pos[i - 1] + 1 if rel[i - 1] else 0
        for i in range(el.size):
            v = vec[i][:, order[i, pos[i]]] / d[i]
            nodal[el[i], free] = v
    # mass-normalise (Gram-Schmidt in the mass inner product inside coincident groups)
    norms = _mass_products(mesh, omega, nodal, nodal)
    nodal /= np.sqrt(norms)[:, None]
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
    big = np.argmax(np.abs(nodal[:, :mesh.n_nodes]), axis=1)
    sgn = np.sign(nodal[np.arange(count), big])
    nodal *= np.where(sgn == 0, 1.0, sgn)[:, None]
    return nodal


def _solve_frequencies(line: Line, count: int):
    counter = _Counter(line)
    n_rigid = min(_rigid_count(counter.mesh, counter.free), count)
    omega = np.zeros(count)
    n_el = count - n_rigid
    if n_el:
        targets = np.arange(n_rigid + 1, count + 1)
        lo, hi = _bisect_all(counter, targets, _omega_scale(line) * (count + 1))
        omega[n_rigid:] = 0.5 * (lo + hi)
    return counter, omega, n_rigid


def natural_frequencies(line: Line, count: int = 8) -> np.ndarray:
    """The lowest ``count`` undamped natural frequencies (Hz), ascending; rigid-body
    modes are 0.0. Attachments' masses and springs and absorbers are included;
    dashpots and all damping are left out."""
    if not isinstance(line, Line):
        raise ModelError("line", type(line).__name__, "", "needs a dampline.Line")
    count = _check_count(count)
    _c, omega, _r = _solve_frequencies(line, count)
    return omega / (2.0 * math.pi)


def modes(line: Line, count: int = 8) -> ModeSet:
    """Natural frequencies and mass-normalised mode shapes of the undamped line."""
    if not isinstance(line, Line):
        raise ModelError("line", type(line).__name__, "", "needs a dampline.Line")
    count = _check_count(count)
    counter, omega, n_rigid = _solve_frequencies(line, count)
    nodal = _mode_vectors(counter, omega, n_rigid)
    return ModeSet(line=line, frequencies=omega / (2.0 * math.pi), mesh=counter.mesh,
                   nodal=nodal, n_rigid=n_rigid)
