"""Exact frequency response by dynamic stiffness, batched over frequency.

For all frequencies at once: assemble the exact piece stiffnesses and point
stiffnesses (ends, attachments, absorbers condensed exactly) into the
tridiagonal K(w), solve K(w) u = f(w) by batched elimination with partial
pivoting (:mod:`dampline.solve.banded`), then evaluate the exact interior solution of each
piece at the response points (Doyle 1997; Banerjee 1997).
"""

from __future__ import annotations

import math
import warnings
from typing import Literal, Sequence

import numpy as np

from ..errors import ModelError
from ..families import FAMILIES
from ..model.line import END_SNAP, Line
from ..results import FRF
from .banded import tridiagonal_solve
from .mesh import Mesh, assemble_tridiagonal, build_mesh, dirichlet_nodes

__all__ = ["frf", "Drive", "Quantity"]

Drive = Literal["force", "moment", "velocity", "volume_velocity"]
Quantity = Literal["receptance", "mobility", "accelerance", "force",
                   "pressure", "velocity", "volume_velocity"]

_STRUCT_DRIVES = ("force", "velocity")
_DUCT_DRIVES = ("volume_velocity", "velocity")
_STRUCT_QUANTITIES = ("receptance", "mobility", "accelerance", "force")
_DUCT_QUANTITIES = ("pressure", "velocity", "volume_velocity")


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
    for v in xs:
        if not np.isfinite(v) or v < -tol or v > L + tol:
            raise ModelError(key, float(v), "m", f"is off the line (0 to {L:g} m)")
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
           "force": fam.force_unit}[quantity]
    den = {"force": fam.force_unit, "velocity": f"{u}/s"}[drive]
    return f"{num}/({den})" if (" " in den or "/" in den) else f"{num}/{den}"


def check_request(line: Line, drive: str, quantity: str | None, drive_at) -> tuple[str, str, float, int | None]:
    """Validate drive, quantity and drive point; returns (drive, quantity, x, end side)."""
    duct = line.kind == "duct"
    drives = _DUCT_DRIVES if duct else _STRUCT_DRIVES
    if drive == "moment":
        raise ModelError("drive", drive, "", f"a moment drives bending lines; kind {line.kind!r} "
                         f"takes {', '.join(drives)}")
    if drive not in drives:
        raise ModelError("drive", drive, "", f"kind {line.kind!r} takes {', '.join(drives)}")
    quantities = _DUCT_QUANTITIES if duct else _STRUCT_QUANTITIES
    if quantity is None:
        quantity = "pressure" if duct else "receptance"
    if quantity not in quantities:
        raise ModelError("quantity", quantity, "", f"kind {line.kind!r} gives "
                         f"{', '.join(quantities)}")
    try:
        xd = float(drive_at)
    except (TypeError, ValueError):
        raise ModelError("drive_at", drive_at, "m", "must be one position") from None
    xd = float(check_position(line, "drive_at", xd)[0])
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


def frf(line: Line, freqs_hz, drive_at: float = 0.0, response_at=(0.0,), drive: str = "force",
        quantity: str | None = None, method: str = "exact", **options) -> FRF:
    """Frequency response of ``line`` at ``response_at`` for one drive at ``drive_at``.

    Parameters
    ----------
    line : Line
    freqs_hz : array_like
        Frequencies (Hz), positive and finite.
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
    if not isinstance(line, Line):
        raise ModelError("line", type(line).__name__, "", "needs a dampline.Line")
    if method not in ("exact", "modal"):
        raise ModelError("method", method, "", "use 'exact' or 'modal'")
    f = check_frequencies(freqs_hz)
    drive, quantity, xd, side = check_request(line, drive, quantity, drive_at)
    xr = check_position(line, "response_at", response_at)
    if method == "modal":
        raise ModelError("method", method, "", "modal superposition is not available in this "
                         "version; use method='exact'")
    if options:
        key = next(iter(options))
        raise ModelError(key, options[key], "", "unknown option for method 'exact'")
    if line.damping.model == "modal":
        raise ModelError("damping.model", "modal", "", "modal damping (zeta per mode) has no "
                         "exact distributed form; use method='modal'")
    values = _exact(line, f, xd, xr, drive, quantity, side)
    return FRF(frequencies=f, values=values, quantity=quantity,
               unit=quantity_unit(line.kind, quantity, drive), drive=drive, drive_at=xd,
               response_at=xr, method="exact", kind=line.kind)


def _exact(line: Line, f: np.ndarray, xd: float, xr: np.ndarray, drive: str, quantity: str,
           side: int | None) -> np.ndarray:
    omega = 2.0 * math.pi * f
    duct = line.kind == "duct"
    mesh = build_mesh(line, extra=(xd,))
    nn = mesh.n_nodes
    # an imposed velocity replaces the driven end's own condition
    replaced = (side == 0, side == 1)
    diag, off, S, k = assemble_tridiagonal(mesh, omega, ends=(not replaced[0], not replaced[1]))
    nf = omega.size
    U = np.zeros((nf, nn), dtype=complex)
    rhs = np.zeros((nf, nn), dtype=complex)
    node_d = mesh.node_at(xd)
    held = set(i % nn for i in dirichlet_nodes(line, replaced))
    if drive == "force":
        rhs[:, node_d] = 1.0
    elif drive == "volume_velocity":
        rhs[:, node_d] = 1j * omega              # analogue load of a source Q: i w Q
    elif duct:                                   # piston at an end, velocity along +x
        area = line.segments[0 if side == 0 else -1].area
        rhs[:, node_d] = 1j * omega * area * (1.0 if side == 0 else -1.0)
    else:                                        # structure: imposed displacement 1/(i w)
        held.add(node_d)
        U[:, node_d] = 1.0 / (1j * omega)
        nb = 1 if node_d == 0 else nn - 2
        rhs[:, nb] -= off[:, min(node_d, nb)] * U[:, node_d]
    # held nodes can only be the two ends: the free ones are a contiguous run
    lo = 1 if 0 in held else 0
    hi = nn - 1 if (nn - 1) in held else nn
    if hi > lo:
        U[:, lo:hi] = _solve(off[:, lo:hi - 1], diag[:, lo:hi], rhs[:, lo:hi], f)
    return _interior(mesh, omega, S, k, U, xr, quantity)


def _solve(off: np.ndarray, diag: np.ndarray, rhs: np.ndarray, f: np.ndarray) -> np.ndarray:
    x = tridiagonal_solve(off, diag, off, rhs)
    bad = ~np.isfinite(x).all(axis=1)
    if bad.any():
        # exactly singular only at an undamped resonance hit to the last bit:
        # the physics is infinite there, and we say so
        x[bad] = complex(np.inf, np.inf)
        warnings.warn(f"undamped resonance exactly at {f[bad][:5].tolist()} Hz: the response "
                      "there is infinite (returned as inf)", RuntimeWarning, stacklevel=4)
    return x


def interior_weights(S, k, h, xi, derivative: bool):
    """Exact interior solution of a piece: u(xi) = A u_a + B u_b (or u', with
    ``derivative``), in scaled exponential form (Im k <= 0) so that a large
    imaginary k h cannot overflow."""
    den = -np.expm1(-2j * k * h)
    ea = np.exp(-1j * k * xi)
    eb = np.exp(-1j * k * (h - xi))
    if not derivative:
        A = ea * (-np.expm1(-2j * k * (h - xi))) / den
        B = eb * (-np.expm1(-2j * k * xi)) / den
        return A, B
    A = -1j * k * (ea + ea * eb * eb) / den
    B = 1j * k * (eb + eb * ea * ea) / den
    return A, B


def _interior(mesh: Mesh, omega: np.ndarray, S: np.ndarray, k: np.ndarray, Un: np.ndarray,
              xr: np.ndarray, quantity: str) -> np.ndarray:
    p, xi = mesh.locate(xr)
    S, k = S[:, p], k[:, p]
    h = mesh.piece_h[p]
    ua, ub = Un[:, p], Un[:, p + 1]
    w = omega[:, None]
    if quantity in ("receptance", "mobility", "accelerance", "pressure"):
        A, B = interior_weights(S, k, h, xi, derivative=False)
        u = A * ua + B * ub
        if quantity == "mobility":
            return 1j * w * u
        if quantity == "accelerance":
            return -w * w * u
        return u
    A, B = interior_weights(S, k, h, xi, derivative=True)
    N = S * (A * ua + B * ub)
    if quantity == "force":
        return N
    U = 1j * N / w                          # volume velocity from N = -i w U
    if quantity == "volume_velocity":
        return U
    area = np.array([mesh.line.segments[s].area for s in mesh.piece_seg[p]])
    return U / area
