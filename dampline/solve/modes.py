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
from ..model.line import EndTable, Line
from .mesh import (GOLDEN, SPLITS, Mesh, assemble, build_mesh, free_dofs, held_dofs,
                   interior_field, pole_distance,
                   piece_wavenumbers, static_field)

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
        K, J0 = assemble(self.mesh, omega, damped=False)
        o = self.order
        A = K[:, o[:, None], o[None, :]]
        return (J0 + _negcount(A, self.bw)).astype(int)

    def _scaled(self, omega: np.ndarray):
        K, J0 = assemble(self.mesh, np.asarray(omega, dtype=float), damped=False)
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


def _find_roots(counter: _Counter, targets: np.ndarray, hi0: float) -> np.ndarray:
    """The target-th natural frequency for every target (rad/s).

    1. Bracket by bisection on the fast LDL^T count to 1e-8 relative: without
       pivoting its sign pattern is only unreliable very near a root.
    2. Check each bracket with the backward-stable count (eigenvalues of the
       row-scaled matrix) and widen any that fails.
    3. Inside a bracket holding one root and no piece pole, one eigenvalue of
       K(w) crosses zero from above (the exact dynamic stiffness decreases with
       w): find that crossing by the Illinois variant of regula falsi to full
       precision. Brackets with a pole are finished by bisection on the stable count.
    """
    eps = np.finfo(float).eps
    hi_w = hi0
    for _ in range(200):
        if counter(np.array([hi_w]))[0] >= targets.max():
            break
        hi_w *= 2.0
    else:  # pragma: no cover - would need an infinitely stiff model
        raise ModelError("count", int(targets.max()), "", "could not bracket that many modes")
    lo, hi = _bisect(counter, targets, np.zeros(targets.size), np.full(targets.size, hi_w), 1e-8)

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
        return ModeSet(line=self.line, frequencies=self.frequencies[:n], mesh=self.mesh,
                       nodal=self.nodal[:n], n_rigid=min(self.n_rigid, int(n)))

    @property
    def absorber_amplitudes(self) -> np.ndarray:
        return self.nodal[:, self.mesh.n_line_dofs:]

    def shape(self, x, derivative: bool | int = False) -> np.ndarray:
        """Mode shapes at positions x: array (len(x), count). ``derivative`` = True or
        1 gives the slope; 2 and 3 (bending) the second and third derivatives."""
        from .exact import check_position
        xs = check_position(self.line, "x", x)
        order = int(derivative)
        if order > (1 if self.mesh.dpn == 1 else 3) or order < 0:
            raise ModelError("derivative", derivative, "", "is out of range for this kind")
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


def _mass_products(mesh: Mesh, omega: np.ndarray, V: np.ndarray, W: np.ndarray) -> np.ndarray:
    """Mass inner products <v_i, w_i> of nodal vectors V, W (count, n_dof) at omega (count,)."""
    line = mesh.line
    m_seg = np.array([static_coefficients(line.kind, s)[1] for s in line.segments])
    mp = m_seg[mesh.piece_seg]
    h = mesh.piece_h
    if mesh.dpn == 2:
        return _mass_products_beam(mesh, omega, V, W, mp)
    _, k = piece_wavenumbers(mesh, omega, damped=False)
    g1, g2 = _piece_mass_integrals(k * h)
    va, vb, wa, wb = V[:, :-1], V[:, 1:], W[:, :-1], W[:, 1:]
    va, vb = V[:, :mesh.n_nodes - 1], V[:, 1:mesh.n_nodes]
    wa, wb = W[:, :mesh.n_nodes - 1], W[:, 1:mesh.n_nodes]
    total = (mp * h * (g1 * (va * wa + vb * wb) + g2 * (va * wb + vb * wa))).sum(axis=1)
    return total + _point_mass_products(mesh, V, W)


def _point_mass_products(mesh: Mesh, V: np.ndarray, W: np.ndarray) -> np.ndarray:
    """Point masses and rotary inertias of attachments and end tables, absorber masses."""
    line, dpn = mesh.line, mesh.dpn
    total = np.zeros(V.shape[0])
    terms = [(node, mass, ri) for node, mass, _s, _c, ri, _rs in mesh.lumped]
    for side, ee in enumerate(line.ends):
        if not isinstance(ee, str):
            terms.append((0 if side == 0 else mesh.n_nodes - 1, ee.mass, ee.rot_inertia))
    for node, mass, ri in terms:
        total += mass * V[:, dpn * node] * W[:, dpn * node]
        if dpn == 2 and ri:
            total += ri * V[:, 2 * node + 1] * W[:, 2 * node + 1]
    for j, (_node, ab) in enumerate(mesh.absorbers):
        q = mesh.n_line_dofs + j
        total += ab.mass * V[:, q] * W[:, q]
    return total


def _mass_products_beam(mesh: Mesh, omega, V, W, mp) -> np.ndarray:
    """Bending: integral of m v w over every piece by Gauss-Legendre quadrature of the
    exact shapes, with enough points for the piece's beta h (the integrand is entire:
    the error falls like (beta h / 2)^(2n) / (2n)!)."""
    h = mesh.piece_h
    _, beta = piece_wavenumbers(mesh, omega, damped=False)
    nq = int(min(400, max(12, np.ceil(1.2 * np.max(beta * h, initial=0.0)) + 12)))
    t, wq = np.polynomial.legendre.leggauss(nq)
    npc = len(h)
    p = np.repeat(np.arange(npc), nq)
    xi = (0.5 * (t + 1.0))[None, :] * h[:, None]
    xi = xi.ravel()
    weights = (0.5 * wq[None, :] * h[:, None] * mp[:, None]).ravel()
    fv = _field(mesh, omega, V, p, xi, 0)
    fw = fv if W is V else _field(mesh, omega, W, p, xi, 0)
    return (fv * fw) @ weights + _point_mass_products(mesh, V, W)


def _mode_vectors(counter: _Counter, omega: np.ndarray, n_rigid: int) -> np.ndarray:
    mesh = counter.mesh
    free = counter.free
    count = omega.size
    nodal = np.zeros((count, mesh.n_dof))
    if n_rigid:
        nodal[:n_rigid] = _rigid_motions(mesh)[:n_rigid]
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
    big = np.argmax(np.abs(nodal[:, :mesh.n_line_dofs:mesh.dpn]), axis=1) * mesh.dpn
    sgn = np.sign(nodal[np.arange(count), big])
    nodal *= np.where(sgn == 0, 1.0, sgn)[:, None]
    return nodal


def _solve_frequencies(line: Line, count: int):
    """Roots on the golden-split mesh; should one of them fall within 1e-6 of a piece
    pole (where the refinement and the null vector lose digits), again on a mesh split
    at another fraction, keeping the set whose roots lie farthest from any pole."""
    best = None
    for split in SPLITS:
        counter = _Counter(line, split)
        n_rigid = min(_rigid_count(counter.mesh, counter.free), count)
        omega = np.zeros(count)
        n_el = count - n_rigid
        if n_el:
            targets = np.arange(n_rigid + 1, count + 1)
            omega[n_rigid:] = _find_roots(counter, targets, _omega_scale(line, count + 1))
        d = pole_distance(counter.mesh, omega[n_rigid:])
        if best is None or d > best[0]:
            best = (d, counter, omega, n_rigid)
        if d >= 1e-6:
            break
    return best[1], best[2], best[3]


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
