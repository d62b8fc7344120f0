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

import math
from dataclasses import dataclass, field

import numpy as np

from ..families import radiation_end_correction, segment_coefficients, static_coefficients
from ..model.line import AIR, END_SNAP, Absorber, EndTable, Line

GOLDEN = 0.5 * (math.sqrt(5.0) - 1.0)


@dataclass(frozen=True, eq=False)
class Mesh:
    """Nodes and pieces of a line; DOF 0..n_nodes-1 are the nodes in order,
    absorber masses follow as DOFs n_nodes, n_nodes+1, ..."""

    line: Line
    x: np.ndarray             # node positions (m)
    piece_seg: np.ndarray     # segment index of each piece
    piece_x0: np.ndarray      # left end of each piece (m)
    piece_h: np.ndarray       # piece length (m)
    absorbers: tuple[tuple[int, Absorber], ...]
    lumped: tuple[tuple[int, float, float, float], ...]  # (node, mass, spring, dashpot)
    n_dof: int = field(init=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "n_dof", len(self.x) + len(self.absorbers))

    @property
    def n_nodes(self) -> int:
        return len(self.x)

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


def build_mesh(line: Line, extra: tuple[float, ...] = ()) -> Mesh:
    """Nodes at segment ends, attachments and ``extra`` points, each interval split
    at the golden fraction."""
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
        xs += [a + GOLDEN * (b - a), b]
        seg_of += [s, s]
    x = np.asarray(xs)
    x[-1] = L
    lumped: dict[int, list[float]] = {}
    absorbers = []

    def node(pos: float) -> int:
        return int(np.argmin(np.abs(x - pos)))

    for att in line.attachments:
        n = node(att.at)
        acc = lumped.setdefault(n, [0.0, 0.0, 0.0])
        acc[0] += att.mass or 0.0
        acc[1] += att.spring or 0.0
        acc[2] += att.dashpot or 0.0
        if att.absorber is not None:
            absorbers.append((n, att.absorber))
    return Mesh(line=line, x=x, piece_seg=np.asarray(seg_of, dtype=int),
                piece_x0=x[:-1].copy(), piece_h=np.diff(x),
                absorbers=tuple(absorbers),
                lumped=tuple((n, *v) for n, v in sorted(lumped.items())))


# --------------------------------------------------------------------- ends
def end_condition(line: Line, side: int) -> str:
    """'dirichlet', 'none' or 'point' for end 0 (left) or 1 (right)."""
    e = line.ends[side]
    if isinstance(e, EndTable):
        return "point"
    if e in ("fixed", "open"):
        return "dirichlet"
    if e in ("free", "closed"):
        return "none"
    return "point"   # anechoic, unflanged, flanged


def end_stiffness(line: Line, side: int, omega: np.ndarray, damped: bool) -> np.ndarray:
    """Point dynamic stiffness an end adds to its node (analogue stiffness i w / Z for
    radiating duct ends)."""
    e = line.ends[side]
    w = omega
    d = line.damping
    if isinstance(e, EndTable):
        return _lumped(w, e.mass, e.spring, e.dashpot, d, damped)
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
    """(S, k) of every piece: arrays (n_freq, n_piece); Im k <= 0 when damped.
    Computed once per segment; pieces of a segment share it."""
    S, W2M = segment_coefficients(mesh.line, omega, damped=damped)
    k = np.sqrt(W2M / S)
    if damped:
        k = np.where(k.imag > 0.0, -k, k)
    return S[:, mesh.piece_seg], k[:, mesh.piece_seg]


def piece_stiffness(S, k, h, damped: bool):
    """Diagonal and off-diagonal entries of the exact piece dynamic stiffness."""
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


def assemble(mesh: Mesh, omega: np.ndarray, *, damped: bool = True,
             ends: tuple[bool, bool] = (True, True)) -> tuple[np.ndarray, np.ndarray]:
    """Full dynamic stiffness (n_freq, n_dof, n_dof) of all nodes and absorber DOFs.

    Dirichlet ends are not removed here (see :func:`free_dofs`); point ends are
    added unless ``ends[side]`` is False (an end replaced by an imposed velocity).
    Returns (K, J0) with J0 the clamped-piece count of Wittrick and Williams
    (only meaningful for ``damped=False``).
    """
    line = mesh.line
    omega = np.asarray(omega, dtype=float)
    nf, n, nn = omega.size, mesh.n_dof, mesh.n_nodes
    K = np.zeros((nf, n, n), dtype=complex if damped else float)
    S, k = piece_wavenumbers(mesh, omega, damped)
    k11, k12 = piece_stiffness(S, k, mesh.piece_h, damped)
    idx = np.arange(nn - 1)
    K[:, idx, idx] += k11
    K[:, idx + 1, idx + 1] += k11
    K[:, idx, idx + 1] += k12
    K[:, idx + 1, idx] += k12
    J0 = np.zeros(nf)
    if not damped:
        J0 = np.floor(k * mesh.piece_h / math.pi).sum(axis=1)
    d = line.damping
    for node, m, s, c in mesh.lumped:
        K[:, node, node] += _lumped(omega, m, s, c, d, damped)
    for j, (node, ab) in enumerate(mesh.absorbers):
        q = nn + j
        spring = _lumped(omega, 0.0, ab.stiffness, ab.damping, d, damped)
        K[:, node, node] += spring
        K[:, q, q] += spring + _lumped(omega, ab.mass, 0.0, 0.0, d, damped)
        K[:, node, q] -= spring
        K[:, q, node] -= spring
    for side in (0, 1):
        if ends[side] and end_condition(line, side) == "point":
            node = 0 if side == 0 else nn - 1
            K[:, node, node] += end_stiffness(line, side, omega, damped)
    return K, J0


def dirichlet_nodes(line: Line, replaced: tuple[bool, bool] = (False, False)) -> list[int]:
    """Nodes held at zero by fixed or ideally open ends (an end replaced by an imposed
    velocity is excluded)."""
    out = []
    nn_last = -1
    for side in (0, 1):
        if not replaced[side] and end_condition(line, side) == "dirichlet":
            out.append(0 if side == 0 else nn_last)
    return out


def free_dofs(mesh: Mesh, held: list[int]) -> np.ndarray:
    held_idx = {h % mesh.n_nodes for h in held}
    return np.array([i for i in range(mesh.n_dof) if i not in held_idx], dtype=int)


def static_stiffness(mesh: Mesh) -> np.ndarray:
    """The w -> 0 limit of the real dynamic stiffness (rigid-body counting)."""
    line = mesh.line
    n, nn = mesh.n_dof, mesh.n_nodes
    K = np.zeros((n, n))
    for p in range(nn - 1):
        s0, _ = static_coefficients(line.kind, line.segments[mesh.piece_seg[p]])
        kk = s0 / mesh.piece_h[p]
        K[p, p] += kk
        K[p + 1, p + 1] += kk
        K[p, p + 1] -= kk
        K[p + 1, p] -= kk
    zero = np.zeros(1)
    for node, _m, s, _c in mesh.lumped:
        K[node, node] += s
    for j, (node, ab) in enumerate(mesh.absorbers):
        q = nn + j
        K[node, node] += ab.stiffness
        K[q, q] += ab.stiffness
        K[node, q] -= ab.stiffness
        K[q, node] -= ab.stiffness
    for side in (0, 1):
        if end_condition(line, side) == "point":
            node = 0 if side == 0 else nn - 1
            K[node, node] += float(end_stiffness(line, side, zero, damped=False)[0])
    return K


def assemble_tridiagonal(mesh: Mesh, omega: np.ndarray, *, ends: tuple[bool, bool] = (True, True)
                         ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Damped dynamic stiffness of the line nodes as (diag (n_freq, n), off (n_freq, n-1)),
    with the pieces' (S, k) for the interior solution.

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
    d = line.damping
    for node, m, s, c in mesh.lumped:
        diag[:, node] += _lumped(omega, m, s, c, d, True)
    for node, ab in mesh.absorbers:
        s = _lumped(omega, 0.0, ab.stiffness, ab.damping, d, True)
        z = _lumped(omega, ab.mass, 0.0, 0.0, d, True)
        diag[:, node] += s * z / (s + z)
    for side in (0, 1):
        if ends[side] and end_condition(line, side) == "point":
            diag[:, 0 if side == 0 else nn - 1] += end_stiffness(line, side, omega, True)
    return diag, k12, S, k
