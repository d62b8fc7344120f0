"""Nodes, pieces and degrees of freedom of a line, and the batched assembly of
its exact dynamic stiffness.

Every uniform piece between two nodes carries the exact (spectral) dynamic
stiffness of the second-order wave equation (Doyle, Wave Propagation in
Structures, 2nd ed., 1997; Banerjee, Computers & Structures 63, 1997)::

    K_e = S k / sin(k h) * [[cos(k h), -1], [-1, cos(k h)]]

written in exponentially scaled form so that a large imaginary k h (damped,
high frequency) never overflows: with E = exp(-i k h), Im k <= 0, |E| <= 1,

    S k cot(k h) = i S k (1 + E^2) / (1 - E^2),   S k / sin(k h) = 2 i S k E / (1 - E^2),

and 1 - E^2 = -expm1(-2 i k h) keeps full accuracy as k h -> 0.

Each user segment is split once more at the golden fraction, so no node sits
where a mode of a uniform line has a node of its own: the natural frequencies
of uniform and symmetric lines fall on the clamped-piece frequencies of the
user's segments, where the piece stiffness has a pole, but not on those of the
split pieces.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field

import numpy as np

from ..families import radiation_end_correction, segment_coefficients, static_coefficients
from . import beam
from .banded import band_workspace
from ..model.line import AIR, END_SNAP, Absorber, EndTable, Line

GOLDEN = 0.5 * (math.sqrt(5.0) - 1.0)


@dataclass(frozen=True, eq=False)
class Mesh:
    """Nodes and pieces of a line. DOFs: ``dpn`` per node in node order (bending:
    displacement then slope), then one per absorber mass."""

    line: Line
    x: np.ndarray             # node positions (m)
    piece_seg: np.ndarray     # segment index of each piece
    piece_x0: np.ndarray      # left end of each piece (m)
    piece_h: np.ndarray       # piece length (m)
    absorbers: tuple[tuple[int, Absorber], ...]
    # (node, mass, spring, dashpot, rot_inertia, rot_spring)
    lumped: tuple[tuple[int, float, float, float, float, float], ...]
    dpn: int = 1
    n_dof: int = field(init=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "n_dof", self.dpn * len(self.x) + len(self.absorbers))

    @property
    def n_nodes(self) -> int:
        return len(self.x)

    @property
    def n_line_dofs(self) -> int:
        return self.dpn * len(self.x)

    def node_at(self, x: float) -> int:
        i = int(np.argmin(np.abs(self.x - x)))
        if abs(self.x[i] - x) > END_SNAP * self.line.length:
            raise AssertionError(f"no node at x = {x}")
        return i

    def locate(self, xs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Piece index and local coordinate of each x (the piece to the right of a node,
        the last piece at the right end)."""
        xs = np.asarray(xs, dtype=float)
        p = np.searchsorted(self.piece_x0, xs, side="right") - 1
        p = np.clip(p, 0, len(self.piece_h) - 1)
        xi = np.clip(xs - self.piece_x0[p], 0.0, self.piece_h[p])
        return p, xi


#: split fractions tried in turn when a piece pole falls too close to a frequency of interest
SPLITS = (GOLDEN, math.sqrt(2.0) - 1.0, 0.5 * (3.0 - math.sqrt(3.0)), 1.0 / math.e, 0.5773502691896258)


def build_mesh(line: Line, extra: tuple[float, ...] = (), split: float = GOLDEN) -> Mesh:
    """Nodes at segment ends, attachments and ``extra`` points, each interval split
    at the fraction ``split`` (the golden fraction unless a pole must be moved)."""
    L = line.length
    tol = END_SNAP * L
    bounds = np.array(line.boundaries)
    pts = list(bounds) + [a.at for a in line.attachments] + [float(e) for e in extra]
    pts = np.sort(np.asarray(pts, dtype=float))
    keep = [pts[0]]
    for p in pts[1:]:
        if p - keep[-1] > tol:
            keep.append(p)
        else:
            keep[-1] = keep[-1] if keep[-1] in bounds else p
    keep[0], keep[-1] = 0.0, L
    user = np.asarray(keep)
    xs, seg_of, = [user[0]], []
    for a, b in zip(user[:-1], user[1:]):
        mid = 0.5 * (a + b)
        s = int(np.clip(np.searchsorted(bounds, mid, side="right") - 1, 0, len(line.segments) - 1))
        xs += [a + split * (b - a), b]
        seg_of += [s, s]
    x = np.asarray(xs)
    x[-1] = L
    lumped: dict[int, list[float]] = {}
    absorbers = []
    for att in line.attachments:
        n = int(np.argmin(np.abs(x - att.at)))
        acc = lumped.setdefault(n, [0.0] * 5)
        for j, k in enumerate(("mass", "spring", "dashpot", "rot_inertia", "rot_spring")):
            acc[j] += getattr(att, k) or 0.0
        if att.absorber is not None:
            absorbers.append((n, att.absorber))
    return Mesh(line=line, x=x, piece_seg=np.asarray(seg_of, dtype=int),
                piece_x0=x[:-1].copy(), piece_h=np.diff(x),
                absorbers=tuple(absorbers),
                lumped=tuple((n, *v) for n, v in sorted(lumped.items())),
                dpn=2 if line.kind == "bending" else 1)


# --------------------------------------------------------------------- ends
_HELD = {"fixed": (0,), "open": (0,), "free": (), "closed": (), "clamped": (0, 1),
         "pinned": (0,), "sliding": (1,)}


def held_dofs(mesh: Mesh, replaced: tuple[bool, bool] = (False, False)) -> list[int]:
    """Global DOFs held at zero by the ends. An end replaced by an imposed velocity
    keeps only its rotational condition (a clamped base that moves stays clamped)."""
    line = mesh.line
    out = []
    for side in (0, 1):
        e = line.ends[side]
        if isinstance(e, EndTable):
            continue
        node = 0 if side == 0 else mesh.n_nodes - 1
        for j in _HELD.get(e, ()):
            if replaced[side] and j == 0:
                continue
            out.append(mesh.dpn * node + j)
    return out


def end_terms(line: Line, side: int, omega: np.ndarray, damped: bool,
              replaced: bool = False) -> list[tuple[int, np.ndarray]]:
    """(local DOF, point dynamic stiffness) an end adds to its node. Radiating duct ends
    give the analogue stiffness i w / Z; an end replaced by an imposed velocity keeps
    only its rotational elements."""
    e = line.ends[side]
    d = line.damping
    if isinstance(e, EndTable):
        out = []
        if not replaced:
            out.append((0, _lumped(omega, e.mass, e.spring, e.dashpot, d, damped)))
        if line.kind == "bending" and (e.rot_spring or e.rot_inertia):
            out.append((1, _lumped(omega, e.rot_inertia, e.rot_spring, 0.0, d, damped)))
        return out
    if replaced or e in _HELD:
        return []
    return [(0, end_stiffness(line, side, omega, damped))]


def end_stiffness(line: Line, side: int, omega: np.ndarray, damped: bool) -> np.ndarray:
    """Point dynamic stiffness of a radiating or anechoic duct end: the analogue
    stiffness i w / Z of its acoustic impedance Z = p / U_out."""
    e = line.ends[side]
    w = omega
    seg = line.segments[0 if side == 0 else -1]
    area = seg.area
    rho = seg.rho if seg.rho is not None else AIR["rho"]
    c = seg.c if seg.c is not None else AIR["c"]
    if e == "anechoic":
        # Z = rho c / A, a pure resistance: an analogue dashpot A/(rho c)
        return (1j * w * area / (rho * c)) if damped else np.zeros_like(w)
    delta = radiation_end_correction(e, area)
    if not damped:
        return np.full_like(w, area / (rho * delta))    # inertance of the end correction
    a = math.sqrt(area / math.pi)
    kk = w / c
    factor = {"unflanged": 0.25, "flanged": 0.5}[e]
    z = (rho * c / area) * (factor * (kk * a) ** 2 + 1j * kk * delta)
    return 1j * w / z


def _lumped(w, mass, spring, dashpot, d, damped):
    if not damped:
        return spring - w * w * mass
    k = spring * (1.0 + 1.0j * w * (d.beta or 0.0)) if d.model == "rayleigh" else spring + 0j
    mw = -w * w * mass + (1j * w * (d.alpha or 0.0) * mass if d.model == "rayleigh" else 0.0)
    return k + mw + 1j * w * dashpot


# ------------------------------------------------------------ piece physics
def piece_wavenumbers(mesh: Mesh, omega: np.ndarray, damped: bool):
    """(S, k) of every piece: arrays (n_freq, n_piece). Second order: k = sqrt(w^2 m / S),
    Im k <= 0 when damped. Bending: S = EI and k = beta = (w^2 m / EI)^(1/4).
    Computed once per segment; pieces of a segment share it."""
    S, W2M = segment_coefficients(mesh.line, omega, damped=damped)
    if mesh.dpn == 2:
        k = beam.fourth_root(W2M / S)
        if not damped:
            k = k.real
    else:
        k = np.sqrt(W2M / S)
        if damped:
            k = np.where(k.imag > 0.0, -k, k)
    return S[:, mesh.piece_seg], k[:, mesh.piece_seg]


def piece_stiffness(S, k, h, damped: bool):
    """Diagonal and off-diagonal entries of the exact second-order piece stiffness."""
    if damped:
        z = k * h
        e1 = np.exp(-1j * z)
        den = -np.expm1(-2j * z)
        k11 = 1j * S * k * (1.0 + e1 * e1) / den
        k12 = -2j * S * k * e1 / den
        return k11, k12
    t = k * h
    s = np.sin(t)
    return S * k * np.cos(t) / s, -S * k / s


def _node_terms(mesh: Mesh, omega: np.ndarray, damped: bool, replaced=(False, False)):
    """(global DOF, point stiffness) of attachments and ends."""
    d = mesh.line.damping
    out = []
    for node, m, s, c, ri, rs in mesh.lumped:
        out.append((mesh.dpn * node, _lumped(omega, m, s, c, d, damped)))
        if mesh.dpn == 2 and (ri or rs):
            out.append((2 * node + 1, _lumped(omega, ri, rs, 0.0, d, damped)))
    for side in (0, 1):
        node = 0 if side == 0 else mesh.n_nodes - 1
        for j, kk in end_terms(mesh.line, side, omega, damped, replaced[side]):
            out.append((mesh.dpn * node + j, kk))
    return out


def assemble(mesh: Mesh, omega: np.ndarray, *, damped: bool = True,
             replaced: tuple[bool, bool] = (False, False)) -> tuple[np.ndarray, np.ndarray]:
    """Full dynamic stiffness (n_freq, n_dof, n_dof) of all node and absorber DOFs.

    Held DOFs are not removed here (see :func:`held_dofs`). Returns (K, J0) with J0
    the clamped-piece count of Wittrick and Williams (meaningful for ``damped=False``).
    """
    omega = np.asarray(omega, dtype=float)
    nf, n, nn, dpn = omega.size, mesh.n_dof, mesh.n_nodes, mesh.dpn
    K = np.zeros((nf, n, n), dtype=complex if damped else float)
    S, k = piece_wavenumbers(mesh, omega, damped)
    J0 = np.zeros(nf)
    if dpn == 1:
        k11, k12 = piece_stiffness(S, k, mesh.piece_h, damped)
        idx = np.arange(nn - 1)
        K[:, idx, idx] += k11
        K[:, idx + 1, idx + 1] += k11
        K[:, idx, idx + 1] += k12
        K[:, idx + 1, idx] += k12
        if not damped:
            J0 = np.floor(k * mesh.piece_h / math.pi).sum(axis=1)
    else:
        Ke = beam.piece_stiffness(S, k, mesh.piece_h)          # (nf, np, 4, 4)
        if not damped:
            Ke = Ke.real
            J0 = beam.clamped_count(k * mesh.piece_h).sum(axis=1)
        for p in range(nn - 1):
            K[:, 2 * p:2 * p + 4, 2 * p:2 * p + 4] += Ke[:, p]
    for dof, kk in _node_terms(mesh, omega, damped, replaced):
        K[:, dof, dof] += kk
    d = mesh.line.damping
    for j, (node, ab) in enumerate(mesh.absorbers):
        q = mesh.n_line_dofs + j
        dof = dpn * node
        spring = _lumped(omega, 0.0, ab.stiffness, ab.damping, d, damped)
        K[:, dof, dof] += spring
        K[:, q, q] += spring + _lumped(omega, ab.mass, 0.0, 0.0, d, damped)
        K[:, dof, q] -= spring
        K[:, q, dof] -= spring
    return K, J0


def free_dofs(mesh: Mesh, held: list[int]) -> np.ndarray:
    held_set = set(held)
    return np.array([i for i in range(mesh.n_dof) if i not in held_set], dtype=int)


def assemble_tridiagonal(mesh: Mesh, omega: np.ndarray, *, replaced: tuple[bool, bool] = (False, False)
                         ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Damped dynamic stiffness of the nodes of a second-order line as
    (diag (n_freq, n), off (n_freq, n-1)), with the pieces' (S, k) for the interior.

    Absorbers are condensed exactly onto their node: with s = k + i w c the
    spring-dashpot and z = -w^2 m the mass term, the node sees s z / (s + z).
    """
    line = mesh.line
    omega = np.asarray(omega, dtype=float)
    nf, nn = omega.size, mesh.n_nodes
    S, k = piece_wavenumbers(mesh, omega, True)
    k11, k12 = piece_stiffness(S, k, mesh.piece_h, True)
    diag = np.zeros((nf, nn), dtype=complex)
    diag[:, :-1] += k11
    diag[:, 1:] += k11
    for dof, kk in _node_terms(mesh, omega, True, replaced):
        diag[:, dof] += kk
    d = line.damping
    for node, ab in mesh.absorbers:
        s = _lumped(omega, 0.0, ab.stiffness, ab.damping, d, True)
        z = _lumped(omega, ab.mass, 0.0, 0.0, d, True)
        diag[:, node] += s * z / (s + z)
    return diag, k12, S, k


#: sub- and super-diagonals of a bending line's node DOFs (w, theta per node, in node
#: order): a piece couples the four DOFs of its two nodes
BENDING_BAND = 3


def absorber_ratio(mesh: Mesh, omega: np.ndarray) -> np.ndarray:
    """(n_freq, n_absorber) ratio u_absorber / u_node = s / (s + z) of each absorber
    mass's motion to its node's (no force acts on the mass), s = k + i w c, z = -w^2 m."""
    d = mesh.line.damping
    out = np.empty((np.size(omega), len(mesh.absorbers)), dtype=complex)
    for j, (_node, ab) in enumerate(mesh.absorbers):
        s = _lumped(omega, 0.0, ab.stiffness, ab.damping, d, True)
        z = _lumped(omega, ab.mass, 0.0, 0.0, d, True)
        with np.errstate(all="ignore"):
            out[:, j] = s / (s + z)
    return out


def assemble_banded(mesh: Mesh, omega: np.ndarray, *, replaced: tuple[bool, bool] = (False, False)
                    ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Damped dynamic stiffness of the node DOFs of a bending line in band storage, with
    the pieces' (S, k) (n_freq, n_piece) for the interior.

    The band is the row-oriented, frequency-last layout of
    :func:`dampline.solve.banded.band_workspace` with kl = ku = :data:`BENDING_BAND`:
    ``work[i, c - i + 3, f] = K[f, i, c]``, shape (n_line_dofs, 10, n_freq), written
    straight from the 4x4 piece matrices (no dense n x n array). Absorbers are condensed
    exactly onto their node's displacement: with s = k + i w c the spring-dashpot and
    z = -w^2 m the mass term, the node sees s z / (s + z). Held DOFs are left in (see
    :func:`held_dofs`).
    """
    omega = np.asarray(omega, dtype=float)
    nf, n, npc = omega.size, mesh.n_line_dofs, mesh.piece_h.size
    kb = BENDING_BAND
    S, k = piece_wavenumbers(mesh, omega, True)
    Ke = beam.piece_entries(S.T, k.T, mesh.piece_h[:, None])      # 4 x 4 of (n_piece, nf)
    work = band_workspace(n, kb, kb, nf)
    # entry (a, b) of piece p sits at row 2p + a, column 2p + b: place b - a + kb. Only
    # a node's own 2x2 block takes two pieces (the right-node block of piece p - 1 and
    # the left-node block of piece p): the others are written, those two added
    for a in range(4):
        rows = slice(a, a + 2 * npc, 2)
        for b in range(4):
            if a < 2 or b < 2:
                work[rows, b - a + kb] = Ke[a][b]
    for a in (2, 3):
        rows = slice(a, a + 2 * npc, 2)
        for b in (2, 3):
            work[rows, b - a + kb] += Ke[a][b]
    for dof, kk in _node_terms(mesh, omega, True, replaced):
        work[dof, kb] += kk
    d = mesh.line.damping
    for node, ab in mesh.absorbers:
        s = _lumped(omega, 0.0, ab.stiffness, ab.damping, d, True)
        z = _lumped(omega, ab.mass, 0.0, 0.0, d, True)
        with np.errstate(all="ignore"):
            work[2 * node, kb] += s * z / (s + z)
    return work, S, k


# ------------------------------------------------------------ interior field
def interior_weights(k, h, xi, order: int):
    """Exact interior solution of a second-order piece: u(xi) = A u_a + B u_b (or u'
    for ``order`` 1), in scaled exponential form (Im k <= 0), so that a large
    imaginary k h cannot overflow and k h -> 0 keeps its digits (expm1)."""
    k = k.astype(complex)
    den = -np.expm1(-2j * k * h)
    ea = np.exp(-1j * k * xi)
    eb = np.exp(-1j * k * (h - xi))
    if order == 0:
        A = ea * (-np.expm1(-2j * k * (h - xi))) / den
        B = eb * (-np.expm1(-2j * k * xi)) / den
        return A, B
    if order == 1:
        A = -1j * k * (ea + ea * eb * eb) / den
        B = 1j * k * (eb + eb * ea * ea) / den
        return A, B
    raise ValueError(order)


def interior_field(mesh: Mesh, S: np.ndarray, k: np.ndarray, U: np.ndarray,
                   p: np.ndarray, xi: np.ndarray, order: int) -> np.ndarray:
    """The ``order``-th x-derivative of the exact solution inside pieces ``p`` at local
    coordinates ``xi``, for nodal values U (n_freq, n_dof) and piece (S, k) (n_freq,
    n_piece). Returns (n_freq, len(p)), complex."""
    h = mesh.piece_h[p]
    kp = k[:, p]
    if mesh.dpn == 1:
        A, B = interior_weights(kp, h, xi, order)
        return A * U[:, p] + B * U[:, p + 1]
    # coefficients once per piece (they do not depend on x), then gathered to the points
    used = np.unique(p)
    u = (U[:, 2 * used], U[:, 2 * used + 1], U[:, 2 * used + 2], U[:, 2 * used + 3])
    c = beam.coefficients(S[:, used], k[:, used].astype(complex), mesh.piece_h[used], u)
    where = np.searchsorted(used, p)
    B = beam._basis(kp.astype(complex), h, xi, order)
    return sum(ci[:, where] * Bi for ci, Bi in zip(c, B))


def static_field(mesh: Mesh, U: np.ndarray, p: np.ndarray, xi: np.ndarray,
                 order: int) -> np.ndarray:
    """Interior field at zero frequency (rigid-body modes): linear for second-order
    pieces, the cubic Hermite interpolant for bending pieces."""
    h = mesh.piece_h[p]
    s = xi / h
    if mesh.dpn == 1:
        ua, ub = U[:, p], U[:, p + 1]
        return ua + (ub - ua) * s if order == 0 else (ub - ua) / h + 0 * ua
    w1, t1, w2, t2 = U[:, 2 * p], U[:, 2 * p + 1], U[:, 2 * p + 2], U[:, 2 * p + 3]
    if order == 0:
        N = (1 - 3 * s ** 2 + 2 * s ** 3, h * (s - 2 * s ** 2 + s ** 3),
             3 * s ** 2 - 2 * s ** 3, h * (-s ** 2 + s ** 3))
    elif order == 1:
        N = ((-6 * s + 6 * s ** 2) / h, 1 - 4 * s + 3 * s ** 2, (6 * s - 6 * s ** 2) / h,
             -2 * s + 3 * s ** 2)
    elif order == 2:
        N = ((-6 + 12 * s) / h ** 2, (-4 + 6 * s) / h, (6 - 12 * s) / h ** 2, (-2 + 6 * s) / h)
    else:
        N = (12 / h ** 3, 6 / h ** 2, -12 / h ** 3, 6 / h ** 2)
    return N[0] * w1 + N[1] * t1 + N[2] * w2 + N[3] * t2


@functools.lru_cache(maxsize=256)
def _cc_bending_roots(n: int) -> np.ndarray:
    """First n roots of cos(l) cosh(l) = 1 (l > 0): clamped-clamped beam (Blevins),
    by Newton on cos(l) - sech(l) from the asymptote (2j + 1) pi / 2. Cached (read-only):
    every piece of every trial mesh asks for a handful of the same few counts."""
    lam = (2.0 * np.arange(1, n + 1) + 1.0) * math.pi / 2.0
    for _ in range(6):
        sech = 1.0 / np.cosh(np.minimum(lam, 700.0))
        f = np.cos(lam) - sech
        df = -np.sin(lam) + sech * np.tanh(np.minimum(lam, 700.0))
        lam = lam - f / df
    lam.flags.writeable = False
    return lam


def piece_poles(mesh: Mesh, omega_max: float) -> np.ndarray:
    """Sorted angular frequencies (up to omega_max) at which an undamped piece with both
    ends clamped resonates: where its exact dynamic stiffness has a pole."""
    line = mesh.line
    out = []
    for p, h in enumerate(mesh.piece_h):
        S, m = static_coefficients(line.kind, line.segments[mesh.piece_seg[p]])
        if mesh.dpn == 1:
            w1 = math.pi * math.sqrt(S / m) / h
            n = int(omega_max / w1) + 1
            out.append(w1 * np.arange(1, n + 1))
        else:
            scale = math.sqrt(S / m) / (h * h)
            n = int(math.sqrt(omega_max / scale) / math.pi) + 2
            out.append(_cc_bending_roots(n) ** 2 * scale)
    poles = np.sort(np.concatenate(out)) if out else np.zeros(0)
    return poles[poles <= omega_max * 1.01]


def pole_distance(mesh: Mesh, omega: np.ndarray) -> float:
    """Smallest relative distance between the given frequencies and the piece poles."""
    omega = np.asarray(omega, dtype=float)
    if omega.size == 0:
        return math.inf
    poles = piece_poles(mesh, float(omega.max()))
    if poles.size == 0:
        return math.inf
    i = np.clip(np.searchsorted(poles, omega), 1, poles.size - 1) if poles.size > 1 else \
        np.zeros(omega.size, dtype=int)
    d = np.minimum(np.abs(omega - poles[i]), np.abs(omega - poles[np.maximum(i - 1, 0)]))
    return float(np.min(d / np.maximum(omega, 1e-300)))


def mesh_avoiding_poles(line: Line, omega: np.ndarray, extra: tuple[float, ...] = (),
                        margin: float = 1e-4) -> Mesh:
    """The golden-split mesh, unless one of its piece poles lies within ``margin``
    (relative) of a frequency of interest; then the split fraction that keeps them
    farthest apart. (Near such a pole an undamped piece's stiffness is huge and the
    response loses digits in proportion; the physical response is regular there.)"""
    best, best_d = None, -1.0
    for split in SPLITS:
        mesh = build_mesh(line, extra, split)
        d = pole_distance(mesh, omega)
        if d >= margin:
            return mesh
        if d > best_d:
            best, best_d = mesh, d
    return best
