"""Exact FRF of many variants of one line in one batched solve (the engine of ``dl.sweep``).

:func:`dl.frf` assembles the exact dynamic stiffness of one line for all its
frequencies at once and solves the (n_freq) small systems in one batched call
(:mod:`dampline.solve.exact`). Here the batch axis is (variant, frequency):
variants that share the mesh topology (same node count, same pieces per
segment, same lumped and end terms, drive and response in the same pieces) are
stacked, so the elimination runs once over n_variant x n_freq systems -- the
tridiagonal elimination of :mod:`dampline.solve.banded` for second-order
kinds, one LAPACK batch per block of variants for bending lines.

Work that does not depend on the variant is done once: the frequency-dependent
coefficients of a segment (complex modulus, wave number), the exact stiffness of
a piece, the interior weights at a response point and the point stiffness of a
lumped element are computed once per distinct set of parameters and gathered
into the stack. A sweep of an attachment mass thus computes the pieces once and
only the point term and the elimination per variant; a sweep of a segment's
length recomputes only that segment's pieces; a sweep of the loss factor
recomputes everything but the Python work, which it shares.

Each variant gets the same mesh, the same formulas and the same elimination as
``dl.frf`` (Doyle, Wave Propagation in Structures, 1997; Banerjee, Computers &
Structures 63, 1997), so the results agree with it to round-off. A variant that
``dl.frf`` treats beyond the plain solve (a line without any damping, whose exact
resonances it settles; frequencies below the static limit of a held line, 0 Hz
included; an absorber without damping) is handed to ``dl.frf`` itself.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from ..families import segment_coefficients, segment_eta, static_coefficients
from ..model.line import END_SNAP, Line
from . import beam
from .banded import tridiagonal_solve
from .mesh import (SPLITS, Mesh, _lumped, build_mesh, end_terms, held_dofs, interior_weights,
                   mesh_avoiding_poles, piece_stiffness)

__all__ = ["exact_variants", "variant_bytes"]

#: (variant, frequency) systems per tridiagonal stack
_ROWS = 8192
#: complex entries per dense block of bending systems (variants x freq x n x n)
_BLOCK_ENTRIES = 2_000_000


# ------------------------------------------------------------------ planning
@dataclass
class _Plan:
    """One variant: its line, mesh and where the drive and responses fall."""

    line: Line
    mesh: Mesh
    drive: str
    quantity: str
    xd: float
    side: int | None
    xr: np.ndarray
    drive_node: int | None        # the drive acts at this node, or
    drive_piece: tuple[int, float] | None   # inside this piece at this local x
    pr: np.ndarray                # response pieces
    xir: np.ndarray               # local x of the responses (m)
    terms: list                   # [(dof, key, thunk)] point stiffnesses, in dl.frf's order

    def signature(self) -> tuple:
        m = self.mesh
        return (m.dpn, m.n_nodes, m.n_dof, tuple(m.piece_seg.tolist()), self.side,
                self.drive_node, None if self.drive_piece is None else self.drive_piece[0],
                tuple(self.pr.tolist()), tuple(dof for dof, _k, _t in self.terms),
                tuple(n for n, _a in m.absorbers))


def _damping_key(line: Line) -> tuple:
    d = line.damping
    return (d.model, d.alpha, d.beta)


def _segment_key(line: Line, j: int) -> tuple:
    """Everything the frequency-dependent coefficients of segment j depend on (not its
    length, which only the pieces see)."""
    s = line.segments[j]
    d = line.damping
    return (line.kind, s.E, s.G, s.rho, s.area, s.I, s.J, s.tension, s.mass_per_length, s.c,
            s.viscosity, s.gamma, s.prandtl, segment_eta(line, s), d.model, d.alpha, d.beta,
            d.wall_losses)


def _mesh(line: Line, omega: np.ndarray, splits: dict) -> Mesh:
    """The mesh dl.frf uses (``mesh_avoiding_poles``). Its split fraction depends only on
    the lengths, the attachment positions and the undamped (S, m) of each segment, so
    it is found once per geometry and reused for the variants that share it."""
    key = (line.kind, tuple((s.length,) + static_coefficients(line.kind, s) for s in line.segments),
           tuple(a.at for a in line.attachments))
    split = splits.get(key)
    if split is not None:
        return build_mesh(line, (), split)
    mesh = mesh_avoiding_poles(line, omega)
    for split in SPLITS:
        if np.array_equal(build_mesh(line, (), split).x, mesh.x):
            splits[key] = split
            break
    return mesh


def _terms(mesh: Mesh, replaced: tuple[bool, bool]) -> list:
    """Point stiffnesses (global DOF, cache key, thunk(omega)) in the order dl.frf adds
    them: lumped attachments, ends, then absorbers (condensed on second-order lines)."""
    line = mesh.line
    d = line.damping
    dk = _damping_key(line)
    out = []
    for node, m, s, c, ri, rs in mesh.lumped:
        out.append((mesh.dpn * node, ("lumped", m, s, c, dk),
                    lambda w, m=m, s=s, c=c: _lumped(w, m, s, c, d, True)))
        if mesh.dpn == 2 and (ri or rs):
            out.append((2 * node + 1, ("lumped", ri, rs, 0.0, dk),
                        lambda w, ri=ri, rs=rs: _lumped(w, ri, rs, 0.0, d, True)))
    for side in (0, 1):
        node = 0 if side == 0 else mesh.n_nodes - 1
        seg = line.segments[0 if side == 0 else -1]
        base = ("end", line.kind, side, line.ends[side], replaced[side], dk, seg.area, seg.rho,
                seg.c)
        probe = end_terms(line, side, np.ones(1), True, replaced[side])
        for i, (j, _v) in enumerate(probe):
            out.append((mesh.dpn * node + j, base + (i,),
                        lambda w, side=side, i=i: end_terms(line, side, w, True,
                                                            replaced[side])[i][1]))
    if mesh.dpn == 1:
        for node, ab in mesh.absorbers:
            def condensed(w, ab=ab):
                s = _lumped(w, 0.0, ab.stiffness, ab.damping, d, True)
                z = _lumped(w, ab.mass, 0.0, 0.0, d, True)
                return s * z / (s + z)
            out.append((node, ("absorber", ab.mass, ab.stiffness, ab.damping, dk), condensed))
    return out


def _plan(line: Line, omega: np.ndarray, drive_at, response_at, drive: str, quantity,
          splits: dict) -> _Plan:
    # the same checks, in the same order, as dl.frf
    from .exact import check_request
    try:
        from ..checks import positions as check_positions
    except ImportError:
        from .exact import check_position as check_positions
    if line.damping.model == "modal":
        from ..errors import ModelError
        raise ModelError("damping.model", "modal", "", "modal damping (zeta per mode) has no "
                         "exact distributed form; use method='modal'")
    drive, quantity, xd, side = check_request(line, drive, quantity, drive_at)
    xr = check_positions(line, "response_at", response_at)
    mesh = _mesh(line, omega, splits)
    replaced = (side == 0, side == 1)
    drive_node = drive_piece = None
    if drive == "velocity":
        drive_node = mesh.node_at(xd)
    else:
        p, xi = mesh.locate(np.array([xd]))
        p, xi = int(p[0]), float(xi[0])
        tol = END_SNAP * line.length
        if xi <= tol or xi >= mesh.piece_h[p] - tol:
            drive_node = p if xi <= tol else p + 1
        else:
            drive_piece = (p, xi)
    pr, xir = mesh.locate(xr)
    return _Plan(line, mesh, drive, quantity, xd, side, xr, drive_node, drive_piece, pr, xir,
                 _terms(mesh, replaced))


def variant_bytes(line: Line, n_freq: int, n_resp: int) -> int:
    """Rough bytes of temporaries per variant in :func:`exact_variants` (for chunking)."""
    n_seg = len(line.segments) + len(line.attachments)
    n_nodes = 2 * n_seg + 1
    if line.kind == "bending":
        n = 2 * n_nodes + len(line.attachments)
        per = 4 * n * n + 24 * n_nodes + 12 * n_resp + 32
    else:
        per = 12 * n_nodes + 6 * (n_nodes - 1) + 8 * n_resp + 16
    return 16 * n_freq * per


# ------------------------------------------------------------------ tables
class _Table:
    """Arrays computed once per distinct key, stacked as columns (n_freq, n_unique)."""

    def __init__(self) -> None:
        self.index: dict = {}
        self.items: list = []

    def id(self, key, item) -> int:
        i = self.index.get(key)
        if i is None:
            i = self.index[key] = len(self.items)
            self.items.append(item)
        return i


def _segments(plans: list[_Plan], omega: np.ndarray):
    """Per-segment (S, k) columns, each distinct segment once, and each variant's
    column ids. k as dl.frf's piece_wavenumbers: sqrt(w^2 m / S) with Im k <= 0,
    or beta = (w^2 m / EI)^(1/4) for bending."""
    table = _Table()
    ids = np.empty((len(plans), len(plans[0].line.segments)), dtype=int)
    cols_S, cols_W = [], []
    for v, pl in enumerate(plans):
        line = pl.line
        keys = [_segment_key(line, j) for j in range(len(line.segments))]
        coef = None
        for j, key in enumerate(keys):
            if key not in table.index:
                if coef is None:
                    coef = segment_coefficients(line, omega, damped=True)
                cols_S.append(coef[0][:, j])
                cols_W.append(coef[1][:, j])
            ids[v, j] = table.id(key, None)
    S = np.stack(cols_S, axis=1)
    W2M = np.stack(cols_W, axis=1)
    if plans[0].mesh.dpn == 2:
        k = beam.fourth_root(W2M / S)
    else:
        k = np.sqrt(W2M / S)
        k = np.where(k.imag > 0.0, -k, k)
    return S, k, ids


#: complex entries per elementwise operation when building the tables: the
#: temporaries of the transcendental functions stay in cache
_CACHE_ENTRIES = 16384


def _by_columns(fn, n: int, n_out: int, n_freq: int, width: int = 1) -> tuple:
    """``fn(cols)`` -> ``n_out`` arrays (n_freq, len(cols), ...), over blocks of the n
    distinct columns of about _CACHE_ENTRIES values each (``width`` values per column
    and frequency), concatenated along the column axis: the values of one call on all
    columns, computed in pieces whose temporaries stay in cache."""
    step = max(1, _CACHE_ENTRIES // max(1, n_freq * width))
    parts = [fn(np.arange(a, min(n, a + step))) for a in range(0, n, step)]
    return tuple(np.concatenate([p[i] for p in parts], axis=1) for i in range(n_out))


def _gather(cols: np.ndarray, idx: np.ndarray) -> np.ndarray:
    """cols (n_freq, n_unique, ...) gathered by idx (n_var, m) -> (n_var, n_freq, m, ...)."""
    return np.moveaxis(cols[:, idx], 0, 1)


def _drive_pieces(plans: list[_Plan], sid: np.ndarray, H: np.ndarray):
    """The piece holding an interior drive, split at the load, over the variants: (piece
    index, each variant's load position in it, each variant's row into the distinct
    (segment column, position, length) triples, and those triples as three arrays)."""
    pl_ = plans[0].drive_piece[0]
    xl = np.array([pl.drive_piece[1] for pl in plans])
    didx, dkeys = _unique_rows(list(zip(sid[:, pl_].tolist(), xl.tolist(),
                                        H[:, pl_].tolist())))
    ds, dx, dh = (np.array([q[i] for q in dkeys]) for i in range(3))
    return pl_, xl, didx, ds, dx, dh


def _unique_rows(keys: list) -> tuple[np.ndarray, list]:
    """Index of each key into the list of distinct keys (first-seen order)."""
    table = _Table()
    idx = np.array([table.id(k, k) for k in keys], dtype=int)
    return idx, table.items


# ------------------------------------------------------------------ public entry
def exact_variants(lines: Sequence[Line], freqs_hz, drive_at, response_at, drive: str = "force",
                   quantity: str | None = None) -> np.ndarray:
    """Exact FRF of every line in ``lines``: complex (n_var, n_freq, n_resp).

    Slice i equals ``np.asarray(dl.frf(lines[i], freqs_hz, drive_at, response_at, drive,
    quantity))`` to round-off. Variants of the same mesh topology are solved in one
    stack; the others in as many stacks as there are topologies.
    """
    f = frequencies(freqs_hz)
    omega = 2.0 * math.pi * f
    splits: dict = {}
    plans = [_plan(line, omega, drive_at, response_at, drive, quantity, splits) for line in lines]
    nr = plans[0].xr.size if plans else 0
    out = np.empty((len(plans), f.size, nr), dtype=complex)
    groups: dict = {}
    for i, pl in enumerate(plans):
        if _own_treatment(pl, f):
            from .exact import frf
            out[i] = np.asarray(frf(pl.line, f, drive_at=drive_at, response_at=response_at,
                                    drive=drive, quantity=quantity))
            continue
        groups.setdefault(pl.signature(), []).append(i)
    for idx in groups.values():
        group = [plans[i] for i in idx]
        if group[0].mesh.dpn == 1:
            # stacks of about _ROWS systems: big enough to share the Python work, small
            # enough that the elimination's rows stay in cache
            tables = _second_order_tables(group, omega)
            per = max(1, _ROWS // f.size)
            for a in range(0, len(idx), per):
                out[idx[a:a + per]] = _second_order(group, omega, tables, slice(a, a + per))
        else:
            # dense bending systems: blocks of variants keep the stack near _BLOCK_ENTRIES
            n = group[0].mesh.n_dof
            tables = _bending_tables(group, omega)
            per = max(1, _BLOCK_ENTRIES // (f.size * n * n))
            for a in range(0, len(idx), per):
                out[idx[a:a + per]] = _bending(group, omega, tables, slice(a, a + per))
    return out


def frequencies(freqs_hz) -> np.ndarray:
    """The frequency array (Hz) as dl.frf checks it."""
    try:
        from ..checks import frequency_array
    except ImportError:
        from .exact import check_frequencies as frequency_array
    return frequency_array(freqs_hz)


def _own_treatment(plan: _Plan, f: np.ndarray) -> bool:
    """True when dl.frf treats this variant beyond the plain exact solve -- frequencies
    below the static limit of a held line (0 Hz included), resonances of a line without
    any damping, the frequency of an absorber without damping -- or refuses the
    request. Such a variant is solved by dl.frf itself (which raises its ModelError),
    so the sweep equals dl.frf whatever that treatment is."""
    try:
        from .. import checks
        from . import resonance
    except ImportError:
        return False
    line = plan.line
    checks.solvable(line)
    _f, f_solve, factor = checks.frequencies(line, f, drive=plan.drive, quantity=plan.quantity,
                                             method="exact", side=plan.side)
    if not np.array_equal(f_solve, f) or np.any(factor != 1.0):
        return True
    if checks.undamped(line):
        return True
    return resonance.absorber_hits(line, f)[0].size > 0


def _warn_infinite(f_bad: np.ndarray) -> None:
    # the warning class dl.frf uses for the same event
    from .. import errors
    warnings.warn(f"undamped resonance exactly at {f_bad[:5].tolist()} Hz: the response "
                  "there is infinite (returned as inf)",
                  getattr(errors, "ResonanceWarning", RuntimeWarning), stacklevel=4)


def _point_terms(plans: list[_Plan], omega: np.ndarray):
    """Slots of point stiffnesses in dl.frf's order: (dof, distinct terms (n_unique,
    n_freq), each variant's row (n_var,))."""
    table = _Table()
    thunks = []
    ids = np.empty((len(plans), len(plans[0].terms)), dtype=int)
    for v, pl in enumerate(plans):
        for t, (_dof, key, thunk) in enumerate(pl.terms):
            i = table.id(key, None)
            if i == len(thunks):
                thunks.append(thunk)
            ids[v, t] = i
    if not thunks:
        return []
    T = np.stack([np.broadcast_to(np.asarray(th(omega), dtype=complex), omega.shape)
                  for th in thunks])          # (n_unique, n_freq)
    return [(dof, T, ids[:, t]) for t, (dof, _k, _th) in enumerate(plans[0].terms)]


# ------------------------------------------------------------------ second order
def _second_order_tables(plans: list[_Plan], omega: np.ndarray) -> dict:
    """Everything of a group of second-order variants that is computed once per distinct
    parameter set: segment (S, k), piece stiffnesses, point terms, the split piece of an
    interior drive, the interior weights at the response points; with each variant's
    index into them."""
    nv = len(plans)
    p0 = plans[0]
    mesh0 = p0.mesh
    npc = mesh0.n_nodes - 1
    S, k, seg_ids = _segments(plans, omega)
    sid = seg_ids[:, mesh0.piece_seg]                  # (nv, npc) segment column of each piece
    H = np.stack([pl.mesh.piece_h for pl in plans])    # (nv, npc) piece lengths (m)
    pidx, pkeys = _unique_rows(list(zip(sid.ravel().tolist(), H.ravel().tolist())))
    us = np.array([q[0] for q in pkeys])
    uh = np.array([q[1] for q in pkeys])
    k11_u, k12_u = _by_columns(lambda c: piece_stiffness(S[:, us[c]], k[:, us[c]], uh[c], True),
                               us.size, 2, S.shape[0])
    t = {"S": S, "k": k, "sid": sid, "H": H, "pidx": pidx.reshape(nv, npc).T,
         "k11": np.ascontiguousarray(k11_u.T), "k12": np.ascontiguousarray(k12_u.T),
         "terms": _point_terms(plans, omega), "XI": np.stack([pl.xir for pl in plans])}
    if p0.drive != "velocity" and p0.drive_node is None:
        pl_, xl, didx, ds, dx, dh = _drive_pieces(plans, sid, H)
        a11, a12 = _by_columns(lambda c: piece_stiffness(S[:, ds[c]], k[:, ds[c]], dx[c], True),
                               ds.size, 2, S.shape[0])
        b11, b12 = _by_columns(lambda c: piece_stiffness(S[:, ds[c]], k[:, ds[c]],
                                                         dh[c] - dx[c], True),
                               ds.size, 2, S.shape[0])
        t["split"] = (pl_, xl, didx, a11.T, a12.T, b11.T, b12.T)
    order = 0 if p0.quantity in ("receptance", "mobility", "accelerance", "pressure") else 1
    t["order"] = order
    weights = []
    for r, p in enumerate(p0.pr.tolist()):
        ridx, rkeys = _unique_rows(list(zip(sid[:, p].tolist(), H[:, p].tolist(),
                                            t["XI"][:, r].tolist())))
        rs = np.array([q[0] for q in rkeys])
        rh = np.array([q[1] for q in rkeys])
        rx = np.array([q[2] for q in rkeys])
        A, Bw = _by_columns(lambda c: interior_weights(k[:, rs[c]], rh[c], rx[c], order),
                            rs.size, 2, k.shape[0])
        extra = None
        if "split" in t and p == t["split"][0]:
            # the clamped-piece particular solution of the interior drive, seen from
            # the response point: weight of the drive's displacement u_x
            xl = t["split"][1]
            x = t["XI"][:, r]
            left = x < xl
            length = np.where(left, xl, H[:, p] - xl)
            loc = np.where(left, x, x - xl)
            eidx, ekeys = _unique_rows(list(zip(sid[:, p].tolist(), length.tolist(),
                                                loc.tolist(), left.tolist())))
            es = np.array([q[0] for q in ekeys])
            eh = np.array([q[1] for q in ekeys])
            ex = np.array([q[2] for q in ekeys])
            Ap, Bp = _by_columns(lambda c: interior_weights(k[:, es[c]], eh[c], ex[c], order),
                                 es.size, 2, k.shape[0])
            el = np.array([q[3] for q in ekeys])
            extra = (eidx, np.ascontiguousarray(np.where(el[None, :], Bp, Ap).T))
        weights.append((ridx, np.ascontiguousarray(A.T), np.ascontiguousarray(Bw.T), extra))
    t["weights"] = weights
    return t


def _second_order(plans: list[_Plan], omega: np.ndarray, t: dict, sl: slice) -> np.ndarray:
    """Stacked tridiagonal solve of the variants ``plans[sl]`` of a second-order group
    (axial, torsion, string, duct), from the shared tables ``t``.

    Arrays are node-major, (n_nodes, n_var, n_freq), so that every step of the
    elimination works on contiguous rows of (variant, frequency) systems."""
    group = plans[sl]
    nv, nf = len(group), omega.size
    p0 = group[0]
    mesh0 = p0.mesh
    nn = mesh0.n_nodes
    S = t["S"]
    sid = t["sid"][sl]
    pidx = t["pidx"][:, sl]
    K11 = t["k11"][pidx]                               # (npc, nv, nf)
    off = t["k12"][pidx]
    diag = np.zeros((nn, nv, nf), dtype=complex)
    diag[:-1] += K11
    diag[1:] += K11
    for dof, T, ids in t["terms"]:
        diag[dof] += T[ids[sl]]

    # right-hand side: as exact._point_load / the imposed-velocity branch of exact._exact
    rhs = np.zeros((nn, nv, nf), dtype=complex)
    U = np.zeros((nn, nv, nf), dtype=complex)
    particular = None
    held = set(held_dofs(mesh0, (p0.side == 0, p0.side == 1)))
    if p0.drive == "velocity":
        node = p0.drive_node
        if p0.line.kind == "duct":
            area = np.array([pl.line.segments[0 if p0.side == 0 else -1].area for pl in group])
            rhs[node] = 1j * omega[None, :] * area[:, None] * (1.0 if p0.side == 0 else -1.0)
        else:
            value = 1.0 / (1j * omega)
            held.add(node)
            U[node] = value
            nb = 1 if node == 0 else nn - 2
            rhs[nb] -= off[min(node, nb)] * value
    else:
        amp = 1j * omega if p0.drive == "volume_velocity" else np.ones(nf)
        if p0.drive_node is not None:
            rhs[p0.drive_node] += amp
        else:
            pl_, xl, didx, a11, a12, b11, b12 = t["split"]
            d = didx[sl]
            with np.errstate(all="ignore"):
                ux = amp / (a11[d] + b11[d])
            rhs[pl_] -= a12[d] * ux
            rhs[pl_ + 1] -= b12[d] * ux
            particular = (pl_, None, ux)

    lo = 1 if 0 in held else 0
    hi = nn - 1 if (nn - 1) in held else nn
    if hi > lo:
        m, B = hi - lo, nv * nf
        sub = off[lo:hi - 1].reshape(m - 1, B).T
        # the engine's own elimination, so every variant matches dl.frf to the last bit
        with np.errstate(all="ignore"):
            sol = tridiagonal_solve(sub, diag[lo:hi].reshape(m, B).T, sub,
                                    rhs[lo:hi].reshape(m, B).T)
        U[lo:hi] = sol.T.reshape(m, nv, nf)
    bad = ~np.isfinite(U).all(axis=0)                  # (nv, nf)
    if bad.any():
        U[:, bad] = complex(np.inf, np.inf)
        _warn_infinite(np.broadcast_to(omega / (2 * math.pi), bad.shape)[bad])

    # response from the exact interior solution
    q, order = p0.quantity, t["order"]
    pr = p0.pr
    out = np.empty((nv, nf, pr.size), dtype=complex)
    for r, (ridx, A, Bw, extra) in enumerate(t["weights"]):
        p = int(pr[r])
        ri = ridx[sl]
        u = A[ri] * U[p] + Bw[ri] * U[p + 1]           # (nv, nf)
        if extra is not None:
            u += extra[1][extra[0][sl]] * particular[2]
        if q == "mobility":
            u = 1j * omega * u
        elif q == "accelerance":
            u = -omega * omega * u
        elif order == 1:
            N = S.T[sid[:, p]] * u                    # internal force S u'
            if q in ("velocity", "volume_velocity"):
                u = 1j * N / omega                     # volume velocity from N = -i w U
                if q == "velocity":
                    area = np.array([pl.line.segments[pl.mesh.piece_seg[p]].area for pl in group])
                    u = u / area[:, None]
            else:
                u = N
        out[:, :, r] = u
    return out


# ------------------------------------------------------------------ bending
def _dense_solve(A: np.ndarray, b: np.ndarray) -> np.ndarray:
    try:
        return np.linalg.solve(A, b[..., None])[..., 0]
    except np.linalg.LinAlgError:
        out = np.empty_like(b)
        for i in np.ndindex(A.shape[:-2]):
            try:
                out[i] = np.linalg.solve(A[i], b[i])
            except np.linalg.LinAlgError:
                out[i] = complex(np.inf, np.inf)
        return out


def _bending_tables(plans: list[_Plan], omega: np.ndarray) -> dict:
    """The parts of a group of bending variants computed once per distinct parameter
    set: segment (EI, beta), exact 4x4 pieces, point terms, the split piece of an
    interior drive, the basis functions at the response points."""
    nv = len(plans)
    p0 = plans[0]
    mesh0 = p0.mesh
    npc = mesh0.n_nodes - 1
    S, k, seg_ids = _segments(plans, omega)
    sid = seg_ids[:, mesh0.piece_seg]
    H = np.stack([pl.mesh.piece_h for pl in plans])
    pidx, pkeys = _unique_rows(list(zip(sid.ravel().tolist(), H.ravel().tolist())))
    us = np.array([q[0] for q in pkeys])
    uh = np.array([q[1] for q in pkeys])
    Ke = np.ascontiguousarray(np.moveaxis(
        _by_columns(lambda c: (beam.piece_stiffness(S[:, us[c]], k[:, us[c]], uh[c]),),
                    us.size, 1, S.shape[0], width=16)[0], 1, 0))
    t = {"S": S, "k": k, "sid": sid, "H": H, "pidx": pidx.reshape(nv, npc), "Ke": Ke,
         "terms": _point_terms(plans, omega), "XI": np.stack([pl.xir for pl in plans])}
    if p0.drive != "velocity" and p0.drive_node is None:
        # exact._point_load: the piece split at the load, both parts clamped
        j = 1 if p0.drive == "moment" else 0
        pl_, xl, didx, ds, dx, dh = _drive_pieces(plans, sid, H)
        Sd, kd = S[:, ds].T, k[:, ds].T                          # (nud, nf)
        A = beam.piece_stiffness(Sd, kd, dx[:, None])            # (nud, nf, 4, 4)
        Bm = beam.piece_stiffness(Sd, kd, (dh - dx)[:, None])
        F = np.zeros(A.shape[:2] + (2,), dtype=complex)
        F[:, :, j] = 1.0
        ux = _dense_solve(A[..., 2:, 2:] + Bm[..., :2, :2], F)  # (nud, nf, 2)
        left_load = np.einsum("vfij,vfj->vfi", A[..., :2, 2:], ux)
        right_load = np.einsum("vfij,vfj->vfi", Bm[..., 2:, :2], ux)
        t["split"] = (pl_, xl, didx, ds, dx, dh, ux, left_load, right_load)
    q = p0.quantity
    order = {"rotation": 1, "moment": 2, "stress": 2}.get(q, 3)
    if q in ("receptance", "mobility", "accelerance"):
        order = 0
    t["order"] = order
    return t


def _bending(plans: list[_Plan], omega: np.ndarray, t: dict, sl: slice) -> np.ndarray:
    """Stacked dense solve of the bending variants ``plans[sl]`` (exact 4x4 pieces,
    Euler-Bernoulli) from the shared tables ``t``: one LAPACK batch."""
    group = plans[sl]
    nv, nf = len(group), omega.size
    p0 = group[0]
    mesh0 = p0.mesh
    nn, n = mesh0.n_nodes, mesh0.n_dof
    S, k = t["S"], t["k"]
    sid, H, XI = t["sid"][sl], t["H"][sl], t["XI"][sl]
    pidx = t["pidx"][sl]
    K = np.zeros((nv, nf, n, n), dtype=complex)
    for p in range(nn - 1):
        K[:, :, 2 * p:2 * p + 4, 2 * p:2 * p + 4] += t["Ke"][pidx[:, p]]
    for dof, T, ids in t["terms"]:
        K[:, :, dof, dof] += T[ids[sl]]
    for j, (node, _ab) in enumerate(mesh0.absorbers):
        q = mesh0.n_line_dofs + j
        dof = 2 * node
        spring = np.stack([_lumped(omega, 0.0, pl.mesh.absorbers[j][1].stiffness,
                                   pl.mesh.absorbers[j][1].damping, pl.line.damping, True)
                           for pl in group])
        mass = np.stack([_lumped(omega, pl.mesh.absorbers[j][1].mass, 0.0, 0.0, pl.line.damping,
                                 True) for pl in group])
        K[:, :, dof, dof] += spring
        K[:, :, q, q] += spring + mass
        K[:, :, dof, q] -= spring
        K[:, :, q, dof] -= spring

    rhs = np.zeros((nv, nf, n), dtype=complex)
    U = np.zeros((nv, nf, n), dtype=complex)
    held = held_dofs(mesh0, (p0.side == 0, p0.side == 1))
    if p0.drive == "velocity":
        dof = 2 * p0.drive_node
        value = 1.0 / (1j * omega)
        held = held + [dof]
        U[:, :, dof] = value
        rhs -= K[:, :, :, dof] * value[None, :, None]
    elif p0.drive_node is not None:
        rhs[:, :, 2 * p0.drive_node + (1 if p0.drive == "moment" else 0)] += 1.0
    else:
        pl_, _xl, didx, _ds, _dx, _dh, _ux, left_load, right_load = t["split"]
        d = didx[sl]
        rhs[:, :, 2 * pl_:2 * pl_ + 2] -= left_load[d]
        rhs[:, :, 2 * pl_ + 2:2 * pl_ + 4] -= right_load[d]
    held_set = set(held)
    free = np.array([i for i in range(n) if i not in held_set], dtype=int)
    Kf = K[:, :, free[:, None], free[None, :]]
    U[:, :, free] = _dense_solve(Kf, rhs[:, :, free])
    bad = ~np.isfinite(U).all(axis=2)
    if bad.any():
        U[bad] = complex(np.inf, np.inf)
        _warn_infinite(np.broadcast_to(omega / (2 * math.pi), bad.shape)[bad])

    # response: exact.interior_field of the bending path, per (variant, frequency) row
    q, order = p0.quantity, t["order"]
    pr = p0.pr
    used = np.unique(pr)
    where = np.searchsorted(used, pr)
    Su = np.moveaxis(S[:, sid[:, used]], 0, 1)            # (nv, nf, nu)
    ku = np.moveaxis(k[:, sid[:, used]], 0, 1).astype(complex)
    uu = (U[:, :, 2 * used], U[:, :, 2 * used + 1], U[:, :, 2 * used + 2], U[:, :, 2 * used + 3])
    c = beam.coefficients(Su, ku, H[:, used][:, None, :], uu)
    Bs = beam._basis(ku[:, :, where], H[:, pr][:, None, :], XI[:, None, :], order)
    out = sum(ci[:, :, where] * Bi for ci, Bi in zip(c, Bs))
    if "split" in t:
        pl_, xl_all, didx, *_rest = t["split"]
        ux = t["split"][6][didx[sl]]                       # (nv, nf, 2)
        xl = xl_all[sl]
        zero = np.zeros_like(ux[..., 0])
        Sl = S[:, sid[:, pl_]].T
        kl = k[:, sid[:, pl_]].T.astype(complex)
        for r in np.flatnonzero(pr == pl_):
            x = XI[:, r]
            left = x < xl
            for sel, nodal in ((left, "right"), (~left, "left")):
                if not sel.any():
                    continue
                length = (xl if nodal == "right" else H[:, pl_] - xl)[sel][:, None]
                loc = (x if nodal == "right" else x - xl)[sel][:, None]
                u = ((zero, zero, ux[..., 0], ux[..., 1]) if nodal == "right"
                     else (ux[..., 0], ux[..., 1], zero, zero))
                u = tuple(v[sel] for v in u)
                out[sel, :, r] += beam.interior(Sl[sel], kl[sel], length, loc, u, order)
    w = omega[None, :, None]
    if q == "mobility":
        return 1j * w * out
    if q == "accelerance":
        return -w * w * out
    if order == 0 or q == "rotation":
        return out
    Sp = np.moveaxis(S[:, sid[:, pr]], 0, 1)
    if q in ("moment", "stress"):
        M = Sp * out
        if q == "moment":
            return M
        ratio = np.array([[pl.line.segments[s].fibre / pl.line.segments[s].I
                           for s in pl.mesh.piece_seg[pr]] for pl in group])
        return M * ratio[:, None, :]
    return -Sp * out
