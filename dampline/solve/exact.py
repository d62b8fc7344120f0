"""Exact frequency response by dynamic stiffness, batched over frequency.

For all frequencies at once: assemble the exact piece stiffnesses and point
stiffnesses (ends, attachments, absorbers condensed exactly) into K(w),
tridiagonal for second-order lines and banded (kl = ku = 3) for bending lines,
solve K(w) u = f(w) by batched elimination with partial pivoting
(:mod:`dampline.solve.banded`), then evaluate the exact interior solution of each
piece at the response points (Doyle 1997; Banerjee 1997).
"""

from __future__ import annotations

import math
import warnings
from typing import Literal

import numpy as np

from .. import checks
from ..errors import ModelError, ResonanceWarning
from ..families import FAMILIES
from ..model.line import END_SNAP, Line
from ..results import FRF
from .banded import banded_solve_inplace, tridiagonal_solve
from . import beam, resonance
from .mesh import (BENDING_BAND, Mesh, absorber_ratio, assemble, assemble_banded,
                   assemble_tridiagonal, free_dofs, held_dofs, interior_field,
                   interior_weights, mesh_avoiding_poles, piece_stiffness, piece_wavenumbers)

__all__ = ["frf", "Drive", "Quantity"]

Drive = Literal["force", "moment", "velocity", "volume_velocity"]
Quantity = Literal["receptance", "mobility", "accelerance", "force",
                   "pressure", "velocity", "volume_velocity"]

_DRIVES = {"duct": ("volume_velocity", "velocity"), "bending": ("force", "moment", "velocity")}
_STRUCT_DRIVES = ("force", "velocity")
_QUANTITIES = {
    "duct": ("pressure", "velocity", "volume_velocity"),
    "bending": ("receptance", "mobility", "accelerance", "rotation", "moment", "shear",
                "force", "stress"),
}
_STRUCT_QUANTITIES = ("receptance", "mobility", "accelerance", "force")


def check_frequencies(freqs_hz) -> np.ndarray:
    try:
        f = np.asarray(freqs_hz, dtype=float)
    except (TypeError, ValueError):
        raise ModelError("freqs_hz", freqs_hz, "Hz", "must be an array of numbers") from None
    if f.ndim == 0:
        f = f.reshape(1)
    if f.ndim != 1:
        raise ModelError("freqs_hz", f.shape, "Hz", "must be one-dimensional")
    if f.size == 0:
        raise ModelError("freqs_hz", [], "Hz", "is empty")
    bad = ~np.isfinite(f)
    if bad.any():
        raise ModelError("freqs_hz", f[bad][0], "Hz", "frequencies must be finite")
    if (f <= 0).any():
        raise ModelError("freqs_hz", f[f <= 0][0], "Hz", "frequencies must be positive")
    return f


def check_position(line: Line, key: str, x) -> np.ndarray:
    try:
        xs = np.atleast_1d(np.asarray(x, dtype=float))
    except (TypeError, ValueError):
        raise ModelError(key, x, "m", "must be a position or a list of positions") from None
    if xs.ndim != 1 or xs.size == 0:
        raise ModelError(key, x, "m", "must be a position or a non-empty list of positions")
    L = line.length
    tol = END_SNAP * L
    bad = ~np.isfinite(xs) | (xs < -tol) | (xs > L + tol)
    if bad.any():
        raise ModelError(key, float(xs[bad][0]), "m", f"is off the line (0 to {L:g} m)")
    # positions within END_SNAP * L of an end are that end
    xs = np.where(xs <= tol, 0.0, np.where(xs >= L - tol, L, xs))
    return np.clip(xs, 0.0, L)


def quantity_unit(kind: str, quantity: str, drive: str) -> str:
    fam = FAMILIES[kind]
    if kind == "duct":
        num = {"pressure": "Pa", "velocity": "m/s", "volume_velocity": "m^3/s"}[quantity]
        den = {"volume_velocity": "m^3/s", "velocity": "m/s"}[drive]
        return f"{num}/({den})"
    u = fam.unit
    num = {"receptance": u, "mobility": f"{u}/s", "accelerance": f"{u}/s^2",
           "force": fam.force_unit, "rotation": "rad", "moment": "N m", "shear": "N",
           "stress": "Pa"}[quantity]
    den = {"force": fam.force_unit, "velocity": f"{u}/s", "moment": "N m"}[drive]
    return f"{num}/({den})" if (" " in den or "/" in den) else f"{num}/{den}"


def check_request(line: Line, drive: str, quantity: str | None, drive_at) -> tuple[str, str, float, int | None]:
    """Validate drive, quantity and drive point; returns (drive, quantity, x, end side)."""
    duct = line.kind == "duct"
    drives = _DRIVES.get(line.kind, _STRUCT_DRIVES)
    if drive == "moment" and line.kind != "bending":
        raise ModelError("drive", drive, "", f"a moment drives bending lines; kind {line.kind!r} "
                         f"takes {', '.join(drives)}")
    if drive not in drives:
        raise ModelError("drive", drive, "", f"kind {line.kind!r} takes {', '.join(drives)}"
                         f"{checks.suggest(drive, drives)}")
    quantities = _QUANTITIES.get(line.kind, _STRUCT_QUANTITIES)
    if quantity is None:
        quantity = "pressure" if duct else "receptance"
    if quantity not in quantities:
        raise ModelError("quantity", quantity, "", f"kind {line.kind!r} gives "
                         f"{', '.join(quantities)}{checks.suggest(quantity, quantities)}")
    if quantity == "stress":
        for i, seg in enumerate(line.segments):
            if seg.fibre is None:
                raise ModelError(f"segments[{i}].section", None, "",
                                 "bending stress needs the outer-fibre distance: give the "
                                 "segment a section (circle, tube or rectangle)")
    xd = checks.position(line, "drive_at", drive_at)
    side = None
    L = line.length
    if drive == "velocity":
        if xd <= END_SNAP * L:
            side = 0
        elif xd >= L - END_SNAP * L:
            side = 1
        else:
            raise ModelError("drive_at", drive_at, "m", "an imposed velocity acts at an end "
                             f"(0 or {L:g} m)")
        xd = 0.0 if side == 0 else L
    return drive, quantity, xd, side


#: complex entries per frequency chunk of one response (n_freq x n_resp): a long request
#: (say 100,000 frequencies x 1,000 points) is solved chunk by chunk into one output
#: array, so the temporaries stay at tens of MB whatever the request's size
CHUNK_ENTRIES = 2_000_000


def by_frequency_chunks(fn, f: np.ndarray, width: int) -> np.ndarray:
    """fn(f_chunk) -> (len(f_chunk), width) complex, evaluated over chunks of ``f`` and
    written into one (len(f), width) array (a loop over chunks, not frequencies)."""
    step = max(64, CHUNK_ENTRIES // max(int(width), 1))
    if f.size <= 2 * step:          # up to twice the budget: one piece, no copy
        return fn(f)
    step = -(-f.size // -(-f.size // step))        # equal chunks, none a sliver
    out = None
    for a in range(0, f.size, step):
        part = fn(f[a:a + step])
        if out is None:
            out = np.empty((f.size,) + part.shape[1:], dtype=part.dtype)
        out[a:a + step] = part
    return out


def frf(line: Line, freqs_hz, drive_at: float = 0.0, response_at=(0.0,), drive: str = "force",
        quantity: str | None = None, method: str = "exact", **options) -> FRF:
    """Frequency response of ``line`` at ``response_at`` for one drive at ``drive_at``.

    Parameters
    ----------
    line : Line
    freqs_hz : array_like
        Frequencies (Hz), finite and not negative, in any order (the rows follow it).
        0 Hz only where the static response is finite (a held line driven by a
        force, moment or volume-velocity source; see :mod:`dampline.checks`).
    drive_at : float
        Drive position (m from the left end); for ``drive="velocity"`` an end.
    response_at : float or sequence of float
        Response positions (m).
    drive : {"force", "velocity", "volume_velocity", "moment"}
        Point force (torque for torsion); unit velocity imposed at an end (its
        own condition is replaced); volume-velocity point source (ducts).
    quantity : str, optional
        Structures: "receptance" (default), "mobility", "accelerance", "force"
        (internal force, tension positive). Ducts: "pressure" (default),
        "velocity" (particle), "volume_velocity".
    method : {"exact", "modal"}

    Returns
    -------
    FRF
        ``np.asarray`` of it is complex, shape (n_freq, n_resp); e^{+i w t}.
    """
    line = checks.solvable(line)
    method = checks.word("method", method, ("exact", "modal"))
    drive, quantity, xd, side = check_request(line, drive, quantity, drive_at)
    xr = checks.positions(line, "response_at", response_at)
    # f as given (any order); f_solve and factor differ from it only below a held
    # line's static limit (0 Hz included), see dampline.checks.frequencies
    f, f_solve, factor = checks.frequencies(line, freqs_hz, drive=drive, quantity=quantity,
                                            method=method, side=side)
    if method == "modal":
        from .modal import modal_frf, resolve_modes
        allowed = ("modes", "coupling", "residual")
        for key in options:
            if key not in allowed:
                raise ModelError(key, options[key], "", "unknown option for method 'modal' "
                                 f"(use {', '.join(allowed)}){checks.suggest(key, allowed)}")
        coupling = checks.word("coupling", options.get("coupling", "full"), ("full", "diagonal"))
        ms = options.get("modes")
        if drive != "velocity":
            ms = resolve_modes(line, ms)

        def run(fc):
            return modal_frf(line, fc, xd, xr, drive, quantity, ms, coupling,
                             options.get("residual", True))

        values = checks.rescale(resonance.modal_response(
            line, getattr(ms, "frequencies", ()), f_solve, run), factor)
        return FRF(frequencies=f, values=values, quantity=quantity,
                   unit=quantity_unit(line.kind, quantity, drive), drive=drive, drive_at=xd,
                   response_at=xr, method="modal", kind=line.kind)
    if options:
        key = next(iter(options))
        raise ModelError(key, options[key], "", "unknown option for method 'exact'")
    if line.damping.model == "modal":
        raise ModelError("damping.model", "modal", "", "modal damping (zeta per mode) has no "
                         "exact distributed form; use method='modal'")

    def run(fc):
        return by_frequency_chunks(lambda c: _exact(line, c, xd, xr, drive, quantity, side),
                                   fc, xr.size + 16)

    values = checks.rescale(resonance.exact_response(line, f_solve, side, run), factor)
    return FRF(frequencies=f, values=values, quantity=quantity,
               unit=quantity_unit(line.kind, quantity, drive), drive=drive, drive_at=xd,
               response_at=xr, method="exact", kind=line.kind)


def _exact(line: Line, f: np.ndarray, xd: float, xr: np.ndarray, drive: str, quantity: str,
           side: int | None) -> np.ndarray:
    omega = 2.0 * math.pi * f
    # an imposed velocity replaces the driven end's own (translational) condition
    replaced = (side == 0, side == 1)
    mesh = mesh_avoiding_poles(line, omega)
    nf = omega.size
    particular = None
    prescribed = None
    rhs = np.zeros((nf, mesh.n_dof), dtype=complex)
    if drive == "velocity":
        node = mesh.node_at(xd)
        if line.kind == "duct":                 # piston at an end, velocity along +x
            area = line.segments[0 if side == 0 else -1].area
            rhs[:, node] = 1j * omega * area * (1.0 if side == 0 else -1.0)
        else:                                   # structure: imposed displacement 1/(i w)
            prescribed = (mesh.dpn * node, 1.0 / (1j * omega))
    else:
        amp = 1j * omega if drive == "volume_velocity" else np.ones(nf)   # duct: i w Q
        particular = _point_load(mesh, omega, xd, 1 if drive == "moment" else 0, amp, rhs)
    solve = _solve_second_order if mesh.dpn == 1 else _solve_banded
    U, S, k = solve(mesh, omega, rhs, prescribed, replaced)
    bad = ~np.isfinite(U).all(axis=1)
    if bad.any():
        # exactly singular only at an undamped resonance hit to the last bit:
        # the physics is infinite there, and we say so
        U[bad] = complex(np.inf, np.inf)
        warnings.warn(f"undamped resonance exactly at {f[bad][:5].tolist()} Hz: the response "
                      "there is infinite (returned as inf)", ResonanceWarning, stacklevel=3)
    return _response(mesh, omega, S, k, U, xr, quantity, particular)


def _point_load(mesh: Mesh, omega, x: float, j: int, amp, rhs):
    """Load a unit point force (j = 0) or moment (j = 1) of amplitude ``amp`` at x into
    ``rhs``. At a node it is a nodal load. Inside a piece it is not given a node of its
    own (a node a hair from another would make a piece so short, with a stiffness
    ~ S/h or EI/h^3, that it swamps the rest of the matrix): the piece is split there
    only locally, both parts clamped at the piece's ends, and the clamped response
    u_x = (K_left,22 + K_right,11)^-1 F — a well-conditioned 1x1 or 2x2 solve —
    gives the equivalent nodal loads (the clamps' reactions, reversed) and the
    particular solution inside the piece that the nodal solution is added to
    (exact dynamic stiffness with interior loads: Doyle, Wave Propagation in
    Structures). Returns (piece, x_local, u_x) or None."""
    L = mesh.line.length
    p, xi = mesh.locate(np.array([x]))
    p, xi = int(p[0]), float(xi[0])
    h = mesh.piece_h[p]
    dpn = mesh.dpn
    tol = END_SNAP * L
    if xi <= tol or xi >= h - tol:
        node = p if xi <= tol else p + 1
        rhs[:, dpn * node + j] += amp
        return None
    S, k = piece_wavenumbers(mesh, omega, True)
    S, k = S[:, p], k[:, p]
    if dpn == 1:
        a11, a12 = piece_stiffness(S, k, xi, True)
        b11, b12 = piece_stiffness(S, k, h - xi, True)
        with np.errstate(all="ignore"):
            ux = amp / (a11 + b11)
        rhs[:, p] -= a12 * ux
        rhs[:, p + 1] -= b12 * ux
        return p, xi, ux[:, None]
    A = beam.piece_stiffness(S, k, xi)
    B = beam.piece_stiffness(S, k, h - xi)
    Ksub = A[:, 2:, 2:] + B[:, :2, :2]
    F = np.zeros((omega.size, 2), dtype=complex)
    F[:, j] = amp
    ux = _dense_solve(Ksub, F)
    rhs[:, 2 * p:2 * p + 2] -= np.einsum("fij,fj->fi", A[:, :2, 2:], ux)
    rhs[:, 2 * p + 2:2 * p + 4] -= np.einsum("fij,fj->fi", B[:, 2:, :2], ux)
    return p, xi, ux


def _solve_second_order(mesh: Mesh, omega, rhs, prescribed, replaced):
    """Tridiagonal path: absorbers condensed, held nodes only at the ends."""
    nn, nf = mesh.n_nodes, omega.size
    diag, off, S, k = assemble_tridiagonal(mesh, omega, replaced=replaced)
    U = np.zeros((nf, nn), dtype=complex)
    rhs = rhs[:, :nn].copy()
    held = set(held_dofs(mesh, replaced))
    if prescribed is not None:                   # imposed end displacement
        node, value = prescribed
        held.add(node)
        U[:, node] = value
        nb = 1 if node == 0 else nn - 2
        rhs[:, nb] -= off[:, min(node, nb)] * value
    # held nodes can only be the two ends: the free ones are a contiguous run
    lo = 1 if 0 in held else 0
    hi = nn - 1 if (nn - 1) in held else nn
    if hi > lo:
        with np.errstate(all="ignore"):
            U[:, lo:hi] = tridiagonal_solve(off[:, lo:hi - 1], diag[:, lo:hi], off[:, lo:hi - 1],
                                            rhs[:, lo:hi])
    return U, S, k


#: complex entries per dense block (block x n x n): small enough to stay warm in memory,
#: large enough that the per-block Python work is negligible
_BLOCK_ENTRIES = 2_000_000


def _solve_dense(mesh: Mesh, omega, rhs, prescribed, replaced):
    """Bending path: dense blocks of frequencies, one batched LAPACK solve per block."""
    nf, n = omega.size, mesh.n_dof
    U = np.zeros((nf, n), dtype=complex)
    held = held_dofs(mesh, replaced)
    if prescribed is not None:
        held = held + [prescribed[0]]
    free = free_dofs(mesh, held)
    S_all, k_all = [], []
    block = max(64, _BLOCK_ENTRIES // (n * n))
    for a in range(0, nf, block):
        w = omega[a:a + block]
        K, _ = assemble(mesh, w, damped=True, replaced=replaced)
        b = rhs[a:a + block].copy()
        if prescribed is not None:
            dof, value = prescribed
            U[a:a + block, dof] = value[a:a + block]
            b -= K[:, :, dof] * value[a:a + block, None]
        Kf = K[:, free[:, None], free[None, :]]
        U[a:a + block, free] = _dense_solve(Kf, b[:, free])
        S, k = piece_wavenumbers(mesh, w, True)
        S_all.append(S)
        k_all.append(k)
    return U, np.concatenate(S_all), np.concatenate(k_all)


#: complex entries per band block (n_line_dofs x band width x block of frequencies):
#: bounds the work array (32 MB); larger blocks cost fewer Python steps per frequency
_BAND_ENTRIES = 2_000_000


def _solve_banded(mesh: Mesh, omega, rhs, prescribed, replaced):
    """Bending path: the node DOFs' band (kl = ku = 3, absorbers condensed onto their
    node), solved by batched banded elimination with partial pivoting
    (:func:`dampline.solve.banded.banded_solve_inplace`, LAPACK gbtrf/gbtrs) in blocks of
    frequencies. Held and imposed DOFs keep their place as an identity row and column
    (u = 0, the imposed value moved to the right-hand side first): exactly the
    elimination of the system without them, since a zero column never wins a pivot
    search and a zero row never changes another. Frequencies where it gives no finite
    answer (an exactly singular system, or an undamped absorber exactly at its own
    frequency, where the condensed stiffness divides by zero) are solved again by the
    dense path, which keeps the absorber's DOF."""
    nf, n, kb = omega.size, mesh.n_line_dofs, BENDING_BAND
    U = np.zeros((nf, mesh.n_dof), dtype=complex)
    fixed = held_dofs(mesh, replaced)
    if prescribed is not None:
        fixed = fixed + [prescribed[0]]
    S = k = None
    block = max(64, _BAND_ENTRIES // (n * (3 * kb + 1)))
    # the band's 2x2-block pattern (node q's two rows reach the DOFs of nodes q -+ 1),
    # less the held DOFs: their rows and columns hold only the identity's 1
    node0 = 2 * (np.arange(n) // 2)
    first, last = np.maximum(node0 - 2, 0), np.minimum(node0 + 3, n - 1)
    for i in range(n):
        if i in fixed:
            first[i] = last[i] = i
            continue
        while first[i] in fixed:
            first[i] += 1
        while last[i] in fixed:
            last[i] -= 1
    for a in range(0, nf, block):
        sl = slice(a, a + block)
        work, Sb, kbk = assemble_banded(mesh, omega[sl], replaced=replaced)
        if S is None:
            S = np.empty((nf,) + Sb.shape[1:], dtype=Sb.dtype)
            k = np.empty((nf,) + kbk.shape[1:], dtype=kbk.dtype)
        S[sl], k[sl] = Sb, kbk
        b = np.array(rhs[sl, :n].T, order="C")
        if prescribed is not None:
            dof, value = prescribed
            for i in range(max(0, dof - kb), min(n, dof + kb + 1)):
                b[i] -= work[i, dof - i + kb] * value[sl]
        for h in fixed:
            work[h] = 0.0
            for i in range(max(0, h - kb), min(n, h + kb + 1)):
                work[i, h - i + kb] = 0.0
            work[h, kb] = 1.0
            b[h] = 0.0
        U[sl, :n] = banded_solve_inplace(work, b, kb, kb, first=first, last=last).T
    if prescribed is not None:
        U[:, prescribed[0]] = prescribed[1]
    if mesh.absorbers:
        nodes = [2 * node for node, _ab in mesh.absorbers]
        with np.errstate(all="ignore"):
            U[:, n:] = absorber_ratio(mesh, omega) * U[:, nodes]
    bad = np.flatnonzero(~np.isfinite(U).all(axis=1))
    if bad.size:
        pre = None if prescribed is None else (prescribed[0], prescribed[1][bad])
        U[bad] = _solve_dense(mesh, omega[bad], rhs[bad], pre, replaced)[0]
    return U, S, k


def _dense_solve(A: np.ndarray, b: np.ndarray) -> np.ndarray:
    try:
        return np.linalg.solve(A, b[..., None])[..., 0]
    except np.linalg.LinAlgError:
        # an exactly singular block (undamped resonance to the last bit): solve the
        # others one at a time and leave inf where the physics is infinite
        out = np.empty_like(b)
        for i in range(A.shape[0]):
            try:
                out[i] = np.linalg.solve(A[i], b[i])
            except np.linalg.LinAlgError:
                out[i] = complex(np.inf, np.inf)
        return out


def _field(mesh: Mesh, S, k, U, p, xi, particular, order: int) -> np.ndarray:
    """Interior field from the nodal solution, plus the clamped-piece particular solution
    of an interior point load in the pieces that hold one."""
    if order < mesh.dpn:
        # the field a node's own DOF holds (displacement or pressure; a beam's rotation)
        # at points that are nodes -- response points are made nodes of the mesh, so
        # this is the usual case -- read directly: the clamped-piece particular solution
        # vanishes at the piece ends with its slope
        left, right = xi == 0.0, xi == mesh.piece_h[p]
        if np.all(left | right):
            node = np.where(left, p, p + 1)
            return U[:, mesh.dpn * node + order].copy()
    out = interior_field(mesh, S, k, U, p, xi, order)
    if particular is None:
        return out
    pl, xl, ux = particular
    cols = np.flatnonzero(p == pl)
    if cols.size == 0:
        return out
    h = mesh.piece_h[pl]
    Sl, kl = S[:, [pl] * cols.size], k[:, [pl] * cols.size]
    x = xi[cols]
    left = x < xl
    zero = np.zeros_like(ux[:, 0])
    for sel, length, offset, nodal in ((left, xl, 0.0, "right"), (~left, h - xl, xl, "left")):
        if not sel.any():
            continue
        c = cols[sel]
        loc = x[sel] - offset
        if mesh.dpn == 1:
            A, B = interior_weights(kl[:, sel], length, loc, order)
            out[:, c] += (B if nodal == "right" else A) * ux[:, :1]
        else:
            u = ((zero, zero, ux[:, 0], ux[:, 1]) if nodal == "right"
                 else (ux[:, 0], ux[:, 1], zero, zero))
            u = tuple(v[:, None] for v in u)
            out[:, c] += beam.interior(Sl[:, sel], kl[:, sel], length, loc, u, order)
    return out


def _response(mesh: Mesh, omega: np.ndarray, S: np.ndarray, k: np.ndarray, U: np.ndarray,
              xr: np.ndarray, quantity: str, particular=None) -> np.ndarray:
    """The requested quantity at the response points from the exact interior solution."""
    p, xi = mesh.locate(xr)
    w = omega[:, None]
    Sp = S[:, p]

    if quantity in ("receptance", "mobility", "accelerance", "pressure"):
        u = _field(mesh, S, k, U, p, xi, particular, 0)
        if quantity == "mobility":
            return 1j * w * u
        if quantity == "accelerance":
            return -w * w * u
        return u
    if mesh.dpn == 2:
        if quantity == "rotation":
            return _field(mesh, S, k, U, p, xi, particular, 1)
        if quantity in ("moment", "stress"):
            M = Sp * _field(mesh, S, k, U, p, xi, particular, 2)      # M = EI w''
            if quantity == "moment":
                return M
            segs = [mesh.line.segments[s] for s in mesh.piece_seg[p]]
            return M * np.array([sg.fibre / sg.I for sg in segs])   # sigma = M c / I
        return -Sp * _field(mesh, S, k, U, p, xi, particular, 3)     # shear V = -EI w'''
    N = Sp * _field(mesh, S, k, U, p, xi, particular, 1)
    if quantity == "force":
        return N
    Q = 1j * N / w                          # volume velocity from N = -i w U
    if quantity == "volume_velocity":
        return Q
    area = np.array([mesh.line.segments[s].area for s in mesh.piece_seg[p]])
    return Q / area
