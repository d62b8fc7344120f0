"""Argument checks shared by the public functions.

Every check raises :class:`dampline.ModelError` naming the argument (key), the value
and the unit or the accepted range, and suggests the nearest accepted word for a
misspelt one (``difflib``). The solvers call these at their entry, so that bad input
never reaches numpy as a silent NaN or a traceback from deep inside.

Frequencies (``freqs_hz``) follow one rule set (:func:`frequencies`):

* a real, finite, one-dimensional array (a scalar is one frequency); not text, not
  booleans, not complex;
* any order: results follow the order given (duplicates too); functions that need an
  ascending sweep (peak finding, truncation windows) say so;
* 0 Hz only where the static answer is finite: a line held against rigid-body motion
  (no 0 Hz mode), driven by a force, moment or volume-velocity source, and without
  Kirchhoff wall losses (whose wide-tube formula has no static limit);
* not so high that the line carries more than :data:`PHASE_MAX` radians of wave phase
  (the one-dimensional model and double precision both give out there: the phase
  k L itself carries a relative error of about k L times the rounding unit);
* on a line free to move as a rigid body, the exact solver is refused below the
  frequency where its dynamic stiffness still resolves the rigid-body inertia
  (rounding error below eps (L/h) / (k L)^2 for second-order kinds and
  50 eps (L/h)^3 / (k L)^4 for bending, measured); the modal sum, whose rigid-body terms
  are exact, takes them.
"""

from __future__ import annotations

import difflib
import math
import numbers
from typing import Any, Iterable, Sequence

import numpy as np

from .errors import ModelError
from .model.line import END_SNAP, EndTable, Line

__all__ = ["suggest", "word", "whole", "real", "line", "position", "positions",
           "frequency_array", "frequencies", "rescale", "ascending", "solvable", "undamped",
           "phase", "PHASE_MAX"]

EPS = float(np.finfo(float).eps)

#: most wave phase (rad) along the whole line a frequency may carry: sum of k L over
#: the segments (about 160,000 wavelengths)
PHASE_MAX = 1.0e6
#: phase below which a held line is at its static limit to far below rounding: lower
#: frequencies are computed there and scaled by the quantity's power of frequency
PHASE_STATIC = 1.0e-40
#: largest rounding error accepted for the exact solution of a line free to move as a
#: rigid body at low frequency, and for bending pieces much shorter than the line
RIGID_RTOL = 1.0e-7
SHORT_RTOL = 1.0e-5


# ----------------------------------------------------------------- words and numbers
def suggest(value: Any, choices: Iterable[str]) -> str:
    """'; did you mean 'x'?' for the closest accepted word (difflib), or ''."""
    choices = [str(c) for c in choices]
    if not isinstance(value, str):
        return ""
    low = {c.lower(): c for c in choices}
    if value.lower() in low:
        return f"; did you mean {low[value.lower()]!r}?"
    near = difflib.get_close_matches(value, choices, n=1, cutoff=0.6)
    if not near and len(value) >= 3:        # a clipped word: "loss" for "loss_factor"
        near = [c for c in choices if c.lower().startswith(value.lower())][:1]
    if not near:
        near = difflib.get_close_matches(value.lower(), list(low), n=1, cutoff=0.6)
        near = [low[n] for n in near]
    return f"; did you mean {near[0]!r}?" if near else ""


def word(key: str, value: Any, choices: Sequence[str], what: str = "") -> str:
    """``value`` must be one of ``choices`` (text); otherwise a ModelError listing them
    and suggesting the nearest."""
    if isinstance(value, str) and value in choices:
        return value
    lead = f"{what} " if what else ""
    raise ModelError(key, value, "", f"{lead}must be one of {', '.join(map(repr, choices))}"
                     f"{suggest(value, choices)}")


def whole(key: str, value: Any, *, low: int = 1, high: int | None = None,
          unit: str = "") -> int:
    """A whole number (int or numpy integer, not bool, not float) in [low, high]."""
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, (numbers.Integral,)):
        raise ModelError(key, value, unit, "must be a whole number")
    v = int(value)
    if v < low:
        raise ModelError(key, value, unit, f"must be at least {low}")
    if high is not None and v > high:
        raise ModelError(key, value, unit, f"must be at most {high}")
    return v


def real(key: str, value: Any, unit: str = "", *, low: float | None = None,
         high: float | None = None, low_open: bool = False) -> float:
    """A finite real number (not bool, not text) in the range given."""
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Real):
        raise ModelError(key, value, unit, "must be a real number")
    try:
        v = float(value)
    except OverflowError:
        raise ModelError(key, value, unit, "is too large") from None
    if not math.isfinite(v):
        raise ModelError(key, value, unit, "must be finite")
    if low is not None and (v <= low if low_open else v < low):
        raise ModelError(key, value, unit, f"must be {'above' if low_open else 'at least'} "
                         f"{low:g}")
    if high is not None and v > high:
        raise ModelError(key, value, unit, f"must be at most {high:g}")
    return v


def line(value: Any, key: str = "line") -> Line:
    """The line argument of a solver."""
    if not isinstance(value, Line):
        raise ModelError(key, type(value).__name__, "", "needs a dampline.Line "
                         "(dl.Line.from_dict(spec) or dl.load(path))")
    return value


def _numeric_array(key: str, value: Any, unit: str) -> np.ndarray:
    """A real float array from numbers only: text, booleans, complex numbers, None
    and nested tables are refused (numpy would turn "100" into 100.0 and True into 1.0)."""
    if isinstance(value, (str, bytes, bool, np.bool_)) or value is None:
        raise ModelError(key, value, unit, "must be a number or an array of numbers")
    try:
        arr = np.asarray(value) if not isinstance(value, np.ndarray) else value
    except (TypeError, ValueError, OverflowError):      # ragged nesting, odd objects
        raise ModelError(key, value, unit, "must be a number or an array of numbers") from None
    if arr.dtype == object:
        try:
            if any(isinstance(v, (str, bytes, bool, np.bool_)) or v is None
                   for v in np.ravel(arr)):
                raise TypeError
            arr = arr.astype(float)
        except (TypeError, ValueError, OverflowError):
            raise ModelError(key, value, unit, "must be a number or an array of "
                             "numbers") from None
    if arr.dtype.kind not in "iuf":
        raise ModelError(key, value, unit, "must be a number or an array of real numbers"
                         + (" (not complex)" if arr.dtype.kind == "c" else ""))
    return arr.astype(float)


def position(ln: Line, key: str, x: Any) -> float:
    """One position (m) on the line; within 1e-9 of the length of an end it is that end."""
    if isinstance(x, np.ndarray) and x.ndim == 0:
        x = x[()]
    if isinstance(x, (bool, np.bool_)) or not isinstance(x, numbers.Real):
        raise ModelError(key, x, "m", "must be one position (a real number, m)")
    return float(positions(ln, key, [float(x)])[0])


def positions(ln: Line, key: str, xs: Any) -> np.ndarray:
    """Positions (m) on the line: a number or a non-empty 1-D array of numbers."""
    from .solve.exact import check_position
    arr = _numeric_array(key, xs, "m")
    if arr.ndim > 1 or arr.size == 0:
        raise ModelError(key, xs, "m", "must be a position or a non-empty list of positions")
    return check_position(ln, key, arr)


# ----------------------------------------------------------------- frequencies
def frequency_array(freqs_hz: Any, key: str = "freqs_hz") -> np.ndarray:
    """Real, finite, non-negative, one-dimensional frequencies (Hz); a scalar is one."""
    f = _numeric_array(key, freqs_hz, "Hz")
    if f.ndim == 0:
        f = f.reshape(1)
    if f.ndim != 1:
        raise ModelError(key, f.shape, "Hz", "must be one-dimensional")
    if f.size == 0:
        raise ModelError(key, [], "Hz", "is empty")
    bad = ~np.isfinite(f)
    if bad.any():
        raise ModelError(key, f[bad][0], "Hz", "frequencies must be finite")
    if (f < 0).any():
        raise ModelError(key, f[f < 0][0], "Hz", "frequencies must be positive or zero")
    return f


def ascending(f: np.ndarray, key: str = "freqs_hz", why: str = "") -> np.ndarray:
    """The frequencies must rise (strictly) for a sweep-based analysis."""
    d = np.diff(f)
    if (d <= 0).any():
        i = int(np.flatnonzero(d <= 0)[0])
        raise ModelError(key, float(f[i + 1]), "Hz", f"must rise strictly (it follows "
                         f"{f[i]:g} Hz){': ' + why if why else ''}")
    return f


def _phase_coefficients(ln: Line) -> tuple[float, bool]:
    """(a, bending) with the total undamped wave phase sum(k_s L_s) = a w (second order)
    or a sqrt(w) (bending: k = (w^2 m / EI)^(1/4))."""
    from .families import static_coefficients
    a = 0.0
    for seg in ln.segments:
        S, m = static_coefficients(ln.kind, seg)
        a += seg.length * ((m / S) ** 0.25 if ln.kind == "bending" else math.sqrt(m / S))
    return a, ln.kind == "bending"


def phase(ln: Line, f: np.ndarray) -> np.ndarray:
    """Total undamped wave phase sum over the segments of k L (rad) at frequencies f (Hz)."""
    a, bend = _phase_coefficients(ln)
    w = 2.0 * math.pi * np.asarray(f, dtype=float)
    return a * np.sqrt(w) if bend else a * w


def _frequency_at_phase(ln: Line, target: float) -> float:
    a, bend = _phase_coefficients(ln)
    w = (target / a) ** 2 if bend else target / a
    return w / (2.0 * math.pi)


def _node_points(ln: Line) -> np.ndarray:
    """The distinct points the solver puts nodes at: segment ends and attachments."""
    L = ln.length
    pts = np.unique(np.array(list(ln.boundaries) + [a.at for a in ln.attachments]))
    keep = [pts[0]]
    for p in pts[1:]:
        if p - keep[-1] > END_SNAP * L:
            keep.append(p)
    return np.asarray(keep)


def _shortest_gap(ln: Line) -> float:
    pts = _node_points(ln)
    return float(np.diff(pts).min()) if pts.size > 1 else ln.length


def rigid_body_modes(ln: Line) -> int:
    """Number of 0 Hz modes of the undamped line (rigid-body motions the supports leave
    free; for ducts a uniform pressure in a duct closed, or treated as closed, at both
    ends)."""
    from .solve.mesh import build_mesh
    from .solve.modes import _rigid_motions
    return int(_rigid_motions(build_mesh(ln)).shape[0])


#: low-frequency power of w of each quantity, per drive, on a held line: the response
#: is that power of w times a finite static value
_STATIC_POWER = {
    "force": {"receptance": 0, "mobility": 1, "accelerance": 2},
    "moment": {"receptance": 0, "mobility": 1, "accelerance": 2},
    "volume_velocity": {"pressure": 1, "velocity": 0, "volume_velocity": 0},
}


def frequencies(ln: Line, freqs_hz: Any, *, drive: str = "force", quantity: str = "receptance",
                method: str = "exact", side: int | None = None
                ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Check the frequencies of a response request against the line (see the module
    docstring). Returns (f, f_solve, factor): solve at ``f_solve`` and multiply the
    values (n_freq, n_resp) by ``factor[:, None]``. They differ from (f, f, 1) only
    below the static limit of a held line, where f_solve is the frequency of
    :data:`PHASE_STATIC` and factor = (f / f_solve)^n, n the quantity's low-frequency
    power of w (0 Hz gives the static value, or exactly 0 for n > 0). ``side`` is the
    end an imposed velocity drives (it holds that end's translation)."""
    f = frequency_array(freqs_hz)
    ph = phase(ln, f)
    if ph.max() > PHASE_MAX:
        i = int(np.argmax(ph > PHASE_MAX))
        raise ModelError("freqs_hz", float(f[i]), "Hz",
                         f"puts {ph[i]:.3g} rad of wave phase (sum of k L) on the line, above "
                         f"{PHASE_MAX:.0e}: the one-dimensional model and double precision "
                         f"give out there; frequencies up to "
                         f"{_frequency_at_phase(ln, PHASE_MAX):.6g} Hz are accepted")
    f_solve = f.copy()
    factor = np.ones(f.size)
    if ln.kind == "duct" and ln.damping.wall_losses:
        _check_wall_layer(ln, f)
    low = ph < PHASE_STATIC
    if not low.any() and method != "exact":
        return f, f_solve, factor
    if rigid_body_modes(ln if side is None else _driven(ln, side)):
        if (f == 0.0).any():
            raise ModelError("freqs_hz", 0.0, "Hz", "the static response of this line is "
                             "infinite (" + ("its gas is enclosed: no end is open" if
                                             ln.kind == "duct" else
                                             "nothing holds it against rigid-body motion")
                             + "); give positive frequencies")
        if method == "exact":
            f_min = _rigid_floor(ln)
            if (f < f_min).any():
                i = int(np.argmax(f < f_min))
                raise ModelError("freqs_hz", float(f[i]), "Hz",
                                 "is too low for the exact solution of a line free to move "
                                 "as a rigid body: its dynamic stiffness no longer resolves "
                                 f"the rigid-body inertia to {RIGID_RTOL:g}; use "
                                 f"frequencies from {f_min:.4g} Hz, or method='modal' (its "
                                 "rigid-body terms are exact)")
        elif low.any():
            i = int(np.argmax(low))
            raise ModelError("freqs_hz", float(f[i]), "Hz", "is too low to compute: the "
                             "rigid-body response of this free line overflows")
        return f, f_solve, factor
    if not low.any():
        return f, f_solve, factor
    powers = _STATIC_POWER.get(drive)
    if powers is None:
        i = int(np.argmax(low))
        raise ModelError("freqs_hz", float(f[i]), "Hz", "an imposed velocity at (or "
                         "nearly at) 0 Hz is a steady drift whose displacement grows "
                         "without bound; give frequencies from "
                         f"{_frequency_at_phase(ln, PHASE_STATIC):.3g} Hz")
    n = powers.get(quantity, 0)
    fs = _frequency_at_phase(ln, PHASE_STATIC)
    f_solve[low] = fs
    factor[low] = (f[low] / fs) ** n
    return f, f_solve, factor


def _driven(ln: Line, side: int) -> Line:
    """The line with the end an imposed velocity drives held in translation (its
    rotational condition kept), for counting the rigid-body motions left."""
    e = ln.ends[side]
    if ln.kind == "duct":
        held = "closed"             # a piston: the homogeneous problem has a rigid wall
    elif ln.kind != "bending":
        held = "fixed"
    elif e in ("clamped", "sliding") or (isinstance(e, EndTable) and e.rot_spring > 0):
        held = "clamped"
    else:
        held = "pinned"
    ends = list(ln.ends)
    ends[side] = held
    return ln.replace(ends=tuple(ends))


def rescale(values: np.ndarray, factor: np.ndarray) -> np.ndarray:
    """values (n_freq, n_resp) times factor per frequency, touching only the rows below
    the static limit (a plain product would turn a complex inf into NaN)."""
    rows = factor != 1.0
    if rows.any():
        values = np.array(values, dtype=complex, copy=True)
        values[rows] = values[rows] * factor[rows, None]
    return values


def _rigid_floor(ln: Line) -> float:
    """Lowest frequency (Hz) at which the exact solution of a line with rigid-body
    modes keeps its rounding error below RIGID_RTOL. The dynamic stiffness of the
    shortest piece (h, at least 0.36 of the gap between nodes) is S/h (EI/h^3) while the
    rigid-body inertia seen is w^2 m L: the error, measured against the modal sum (whose
    rigid-body terms are exact), is below eps (L/h) / (k L)^2 for second-order kinds and
    50 eps (L/h)^3 / (k L)^4 for bending (free-free beams with gaps from 0.2 % to all of
    L, k L from 0.01 to 3)."""
    L = ln.length
    h = 0.36 * _shortest_gap(ln)
    if ln.kind == "bending":
        kl = (50.0 * EPS * (L / h) ** 3 / RIGID_RTOL) ** 0.25
    else:
        kl = math.sqrt(EPS * (L / h) / RIGID_RTOL)
    return _frequency_at_phase(ln, kl)


def _check_wall_layer(ln: Line, f: np.ndarray) -> None:
    """Kirchhoff's wall losses assume a viscous boundary layer sqrt(2 nu / w) thinner than
    the duct radius (first order in delta_v / a): refuse frequencies where it is not."""
    from .model.line import AIR
    worst = 0.0
    for seg in ln.segments:
        rho = seg.rho if seg.rho is not None else AIR["rho"]
        mu = seg.viscosity if seg.viscosity is not None else AIR["viscosity"]
        a = math.sqrt(seg.area / math.pi)
        # delta_v < a  <=>  w > 2 mu / (rho a^2)
        worst = max(worst, 2.0 * mu / (rho * a * a) / (2.0 * math.pi))
    if (f < worst).any():
        i = int(np.argmax(f < worst))
        raise ModelError("freqs_hz", float(f[i]), "Hz", "is below the range of Kirchhoff's "
                         "wall-loss model (the viscous boundary layer would be thicker than "
                         f"the duct radius); with wall_losses use frequencies from {worst:.4g} "
                         "Hz")


# ----------------------------------------------------------------- the line itself
def solvable(ln: Line) -> Line:
    """Refuse a bending line whose nodes crowd so closely that the solver cannot hold
    its precision: a piece of length h inside a line of length L has a stiffness
    EI/h^3 against EI/L^3, and the rounding error of the assembled dynamic stiffness
    grows as eps (L/h)^3 (measured: 1.1e-6 for a 1 mm piece in a 1.7 m cantilever,
    1e-3 at h/L = 6e-5; at h/L = 6e-6 the eigenvalue count fails to converge). The
    limit accepts errors up to SHORT_RTOL. Lifting it needs the short piece's stiffness
    assembled in relative (deformation) coordinates, or condensed into its neighbour
    through transfer matrices, so that EI/h^3 never meets EI/L^3 in one sum."""
    ln = line(ln)
    if ln.kind != "bending":
        return ln
    L = ln.length
    pts = _node_points(ln)
    gaps = np.diff(pts)
    i = int(np.argmin(gaps))
    h = float(gaps[i])
    if EPS * (L / h) ** 3 > SHORT_RTOL:
        h_min = L * (EPS / SHORT_RTOL) ** (1.0 / 3.0)
        a, b = float(pts[i]), float(pts[i + 1])
        seg_ends = set(ln.boundaries)
        what = []
        for x in (a, b):
            if x in seg_ends:
                what.append(f"segment end at {x:g} m")
            else:
                j = [k for k, att in enumerate(ln.attachments) if abs(att.at - x) <=
                     END_SNAP * L]
                what.append(f"attachments[{j[0]}] at {x:g} m" if j else f"{x:g} m")
        key, value = "segments", h
        for k, seg in enumerate(ln.segments):
            if abs(seg.length - h) <= END_SNAP * L:
                key, value = f"segments[{k}].length", seg.length
                break
        else:
            for k, att in enumerate(ln.attachments):
                if min(abs(att.at - a), abs(att.at - b)) <= END_SNAP * L:
                    key, value = f"attachments[{k}].at", att.at
                    break
        raise ModelError(key, value, "m",
                         f"{what[0]} and {what[1]} are {h:.3g} m apart: bending pieces "
                         f"shorter than {h_min:.3g} m in a {L:g} m line are beyond this "
                         f"solver's precision (rounding error about (L/h)^3 eps = "
                         f"{EPS * (L / h) ** 3:.2g}); merge the short piece with a neighbour "
                         "or move the point")
    return ln


def undamped(ln: Line) -> bool:
    """True when no mechanism of the line dissipates energy: no loss factor, Rayleigh
    or modal damping, no dashpot (ends, attachments, absorbers), no radiating or
    anechoic duct end and no wall losses. Such a line has real, infinite resonances."""
    d = ln.damping
    if d.model == "loss_factor":
        if (d.eta or 0.0) > 0 or any((s.eta or 0.0) > 0 for s in ln.segments):
            return False
    elif d.model == "rayleigh":
        if (d.alpha or 0.0) > 0 or (d.beta or 0.0) > 0:
            return False
    elif d.model == "modal":
        z = d.zeta
        if callable(z) or np.any(np.asarray(z, dtype=float) > 0):
            return False
    if ln.kind == "duct" and (d.wall_losses or any(e in ("anechoic", "unflanged", "flanged")
                                                   for e in ln.ends)):
        return False
    for e in ln.ends:
        if isinstance(e, EndTable) and e.dashpot > 0:
            return False
    for att in ln.attachments:
        if (att.dashpot or 0.0) > 0 or (att.absorber is not None and att.absorber.damping > 0):
            return False
    return True
