"""The model: a line of uniform segments with ends, attachments and damping.

Plain validated data in SI units. Every object is frozen; edits return new
objects (``Line.replace``, ``dataclasses.replace``). Validation happens on
construction, so a ``Line`` that exists is a line the solvers can use, and
every bad value raises :class:`dampline.ModelError` naming key, value, unit.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field
from typing import Any, Callable, Literal, Mapping, Union

from ..errors import ModelError
from .sections import SHAPES, Section

__all__ = [
    "KINDS", "AIR", "Segment", "EndTable", "Absorber", "Attachment", "Damping", "Line",
]

Kind = Literal["axial", "torsion", "string", "duct", "bending"]
KINDS: tuple[str, ...] = ("axial", "torsion", "string", "duct", "bending")

#: gas properties of air at 20 C (common practice); duct segments default to these
AIR = {"rho": 1.204, "c": 343.2, "viscosity": 1.81e-5, "gamma": 1.4, "prandtl": 0.71}

#: positions within this fraction of the line's length from an end are that end
END_SNAP = 1e-9

_SEGMENT_REQUIRED = {
    "axial": ("length", "E", "rho", "area"),
    "torsion": ("length", "G", "rho", "J"),
    "string": ("length", "tension", "mass_per_length"),
    "duct": ("length", "area"),
    "bending": ("length", "E", "rho", "area", "I"),
}
_SEGMENT_OPTIONAL = {
    "axial": ("eta", "section"),
    "torsion": ("eta", "section"),
    "string": ("eta",),
    "duct": ("rho", "c", "eta", "viscosity", "gamma", "prandtl", "section"),
    "bending": ("eta", "section"),
}
SEGMENT_KEYS = ("length", "E", "G", "rho", "area", "I", "J", "tension",
                "mass_per_length", "c", "eta", "viscosity", "gamma", "prandtl")
#: section shapes each kind accepts, and the properties a section fills in
_SECTION_SHAPES = {"axial": tuple(SHAPES), "bending": tuple(SHAPES),
                   "torsion": ("circle", "tube"), "duct": ("circle",)}
_SECTION_FILLS = {"axial": ("area",), "bending": ("area", "I"), "torsion": ("J",),
                  "duct": ("area",)}

END_WORDS = {
    "axial": ("fixed", "free"),
    "torsion": ("fixed", "free"),
    "string": ("fixed", "free"),
    "duct": ("closed", "open", "anechoic", "unflanged", "flanged"),
    "bending": ("clamped", "pinned", "free", "sliding"),
}
#: keys of an end table, and of point attachments, per kind
_END_TABLE_KEYS = {k: ("spring", "mass", "dashpot") for k in END_WORDS}
_END_TABLE_KEYS["bending"] = ("spring", "mass", "dashpot", "rot_spring", "rot_inertia")
_ATTACHMENT_KEYS = {k: ("at", "mass", "spring", "dashpot", "absorber") for k in END_WORDS}
_ATTACHMENT_KEYS["bending"] = _ATTACHMENT_KEYS["axial"] + ("rot_spring", "rot_inertia")
_DEFAULT_ENDS = {
    "axial": ("free", "free"),
    "torsion": ("free", "free"),
    "string": ("fixed", "fixed"),
    "duct": ("closed", "closed"),
    "bending": ("clamped", "free"),
}
DAMPING_MODELS = ("none", "modal", "rayleigh", "loss_factor")
_DAMPING_KEYS = {
    "none": (),
    "modal": ("zeta",),
    "rayleigh": ("alpha", "beta", "pairs"),
    "loss_factor": ("eta",),
}


_UNITS = {
    "length": "m", "at": "m", "E": "Pa", "G": "Pa", "rho": "kg/m^3",
    "area": "m^2", "I": "m^4", "J": "m^4", "tension": "N",
    "mass_per_length": "kg/m", "c": "m/s", "eta": "(loss factor)",
    "viscosity": "Pa s", "gamma": "(ratio of specific heats)",
    "prandtl": "(Prandtl number)", "zeta": "(damping ratio)",
    "alpha": "1/s", "beta": "s",
    "mass": "kg", "spring": "N/m", "dashpot": "N s/m", "stiffness": "N/m", "damping": "N s/m",
    "rot_spring": "N m/rad", "rot_inertia": "kg m^2",
}
#: the point values of a torsion line are rotary
_UNITS_TORSION = {**_UNITS, "mass": "kg m^2", "spring": "N m/rad", "dashpot": "N m s/rad",
                  "stiffness": "N m/rad", "damping": "N m s/rad"}


def unit_of(key: str, kind: str = "axial") -> str:
    """SI unit of a model key for a kind, as shown in messages and tables."""
    units = _UNITS_TORSION if kind == "torsion" else _UNITS
    return units.get(key.split(".")[-1].split("[")[0], "")


def _suggest(value: Any, choices) -> str:
    """'; did you mean ...?' for a misspelt word (difflib; see dampline.checks.suggest)."""
    from ..checks import suggest
    return suggest(value, choices)


#: nonzero SI magnitudes a model value may take: wider than any real part, narrow enough
#: that products of a few of them (E I, w^2 m, S / h^3) stay far from overflow
MAGNITUDE = (1.0e-30, 1.0e30)
#: the largest loss factor accepted (no engineering material comes near it; a larger
#: number is most likely a percentage)
ETA_MAX = 10.0


def _number(key: str, value: Any, kind: str, *, positive: bool = True,
            allow_zero: bool = False) -> float:
    if type(value) is float and positive and not allow_zero:
        # the common case, checked first without building the message parts
        if MAGNITUDE[0] <= value <= MAGNITUDE[1] and (value <= ETA_MAX
                                                      or key.rsplit(".", 1)[-1] != "eta"):
            return value
    unit = unit_of(key, kind)
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        try:
            import numpy as _np  # numpy scalars are fine
            if isinstance(value, _np.generic) and _np.isrealobj(value):
                value = float(value)
            else:
                raise TypeError
        except TypeError:
            raise ModelError(key, value, unit, "must be a real number") from None
    try:
        v = float(value)
    except OverflowError:
        raise ModelError(key, value, unit, "is too large a number") from None
    if not math.isfinite(v):
        raise ModelError(key, value, unit, "must be finite")
    if positive and not allow_zero and v <= 0.0:
        raise ModelError(key, value, unit, "must be positive")
    if allow_zero and v < 0.0:
        raise ModelError(key, value, unit, "must not be negative")
    # a tiny value where zero is allowed (a lumped element, a loss factor) is as good as
    # zero; a tiny length or modulus is not
    low = MAGNITUDE[0] if positive and not allow_zero else 0.0
    if (positive or allow_zero) and not low <= v <= MAGNITUDE[1]:
        raise ModelError(key, value, unit, f"is outside the range {MAGNITUDE[0]:g} to "
                         f"{MAGNITUDE[1]:g} (SI units) this solver accepts")
    if key.split(".")[-1] == "eta" and v > ETA_MAX:
        raise ModelError(key, value, unit, f"must be at most {ETA_MAX:g} (a loss factor, not "
                         "a percentage)")
    return v


def _check_keys(where: str, given: Mapping[str, Any], allowed: tuple[str, ...], kind: str) -> None:
    if not isinstance(given, Mapping):
        raise ModelError(where, given, "", "must be a table (dict)")
    for k in given:
        if k not in allowed:
            near = [a for a in allowed if a.lower() == str(k).lower()]
            hint = _suggest(k, allowed)
            # a case slip ("e" for "E") still shows the unit the value was meant in
            raise ModelError(f"{where}.{k}", given[k], unit_of(near[0] if near else str(k), kind),
                             f"unknown key for kind {kind!r} (allowed: {', '.join(allowed)}){hint}")


@dataclass(frozen=True)
class Segment:
    """One uniform piece of the line. Only the properties of the line's kind are set."""

    length: float
    E: float | None = None
    G: float | None = None
    rho: float | None = None
    area: float | None = None
    I: float | None = None
    J: float | None = None
    tension: float | None = None
    mass_per_length: float | None = None
    c: float | None = None
    eta: float | None = None
    viscosity: float | None = None
    gamma: float | None = None
    prandtl: float | None = None
    section: Section | None = None

    @property
    def fibre(self) -> float | None:
        """Outer-fibre distance (m) when a section gives it."""
        return self.section.fibre if self.section is not None else None

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {}
        derived = ()
        if self.section is not None:
            derived = ("area", "I", "J")
        for f in dataclasses.fields(self):
            v = getattr(self, f.name)
            if v is None or f.name == "section" or (f.name in derived and self._derived(f.name)):
                continue
            out[f.name] = v
        if self.section is not None:
            out["section"] = self.section.to_dict()
        return out

    def _derived(self, key: str) -> bool:
        return getattr(self.section, key, None) == getattr(self, key)


@dataclass(frozen=True)
class EndTable:
    """An end held by lumped elements: spring to ground, mass, dashpot to ground."""

    spring: float = 0.0
    mass: float = 0.0
    dashpot: float = 0.0
    rot_spring: float = 0.0     # bending only
    rot_inertia: float = 0.0    # bending only
    given: tuple[str, ...] = field(default=(), compare=False, repr=False)

    def to_dict(self) -> dict[str, float]:
        keys = self.given or tuple(k for k in ("spring", "mass", "dashpot", "rot_spring",
                                               "rot_inertia") if getattr(self, k) or k in
                                   ("spring", "mass", "dashpot"))
        return {k: getattr(self, k) for k in keys}


End = Union[str, EndTable]


@dataclass(frozen=True)
class Absorber:
    """A mass on a spring and dashpot, attached to the line (tuned absorber)."""

    mass: float
    stiffness: float
    damping: float = 0.0

    @property
    def frequency_hz(self) -> float:
        """Blocked natural frequency sqrt(k/m) / (2 pi) of the absorber."""
        return math.sqrt(self.stiffness / self.mass) / (2.0 * math.pi)


@dataclass(frozen=True)
class Attachment:
    """Point elements at ``at`` (m from the left end): mass, spring and dashpot
    to ground, and/or an absorber."""

    at: float
    mass: float | None = None
    spring: float | None = None
    dashpot: float | None = None
    absorber: Absorber | None = None
    rot_spring: float | None = None     # bending only
    rot_inertia: float | None = None    # bending only

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"at": self.at}
        for k in ("mass", "spring", "dashpot", "rot_spring", "rot_inertia"):
            if getattr(self, k) is not None:
                out[k] = getattr(self, k)
        if self.absorber is not None:
            out["absorber"] = dataclasses.asdict(self.absorber)
        return out


def _pairs(raw: Any, kind: str) -> tuple[tuple[float, float], tuple[float, float]]:
    ok = isinstance(raw, (list, tuple)) and len(raw) == 2 and all(
        isinstance(p, (list, tuple)) and len(p) == 2 for p in raw)
    if not ok:
        raise ModelError("damping.pairs", raw, "", "must be two [frequency Hz, zeta] pairs")
    out = []
    for j, (f, z) in enumerate(raw):
        f = _number(f"damping.pairs[{j}][0]", f, kind)
        z = _number(f"damping.pairs[{j}][1]", z, kind, allow_zero=True)
        if z >= 1.0:
            raise ModelError(f"damping.pairs[{j}][1]", z, "(damping ratio)", "must be below 1")
        out.append((f, z))
    return tuple(out)  # type: ignore[return-value]


def rayleigh_from_pairs(pairs) -> tuple[float, float]:
    """alpha (1/s) and beta (s) of C = alpha M + beta K that give damping ratio z1 at f1
    and z2 at f2, from zeta = alpha / (2 w) + beta w / 2 (Chopra, Dynamics of Structures,
    classical damping)."""
    (f1, z1), (f2, z2) = pairs
    if f1 == f2:
        raise ModelError("damping.pairs", [list(p) for p in pairs], "Hz",
                         "the two frequencies must differ")
    w1, w2 = 2 * math.pi * f1, 2 * math.pi * f2
    det = 1 / (2 * w1) * w2 / 2 - w1 / 2 / (2 * w2)
    alpha = (z1 * w2 / 2 - z2 * w1 / 2) / det
    beta = (z2 / (2 * w1) - z1 / (2 * w2)) / det
    if alpha < 0 or beta < 0:
        raise ModelError("damping.pairs", [list(p) for p in pairs], "",
                         f"need a negative coefficient (alpha {alpha:.4g} 1/s, beta {beta:.4g} s)"
                         ": no passive Rayleigh damping meets both pairs")
    return float(alpha), float(beta)


@dataclass(frozen=True)
class Damping:
    """The line's distributed damping mechanism (the ``[damping]`` table).

    ``model``: ``none``, ``modal`` (``zeta``: one value or one per elastic mode
    in ascending order), ``rayleigh`` (C = alpha M + beta K, assembled M and K)
    or ``loss_factor`` (``eta`` fills segments without their own). For ducts
    ``wall_losses = true`` adds Kirchhoff's visco-thermal wall losses to any model.
    """

    model: str = "none"
    eta: float | None = None
    zeta: float | tuple[float, ...] | Callable[[float], float] | None = None
    alpha: float | None = None
    beta: float | None = None
    wall_losses: bool = False
    #: Rayleigh fitted to two (frequency Hz, zeta) pairs: alpha and beta follow
    pairs: tuple[tuple[float, float], tuple[float, float]] | None = None

    def __post_init__(self) -> None:
        if self.model == "rayleigh" and self.pairs is not None:
            a, b = rayleigh_from_pairs(self.pairs)
            object.__setattr__(self, "alpha", a)
            object.__setattr__(self, "beta", b)

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"model": self.model}
        if callable(self.zeta):
            raise ModelError("damping.zeta", "function", "(damping ratio)",
                             "a zeta function cannot be written to a model file; give a "
                             "value or a list per mode")
        for k in _DAMPING_KEYS[self.model]:
            v = getattr(self, k)
            if k == "pairs":
                if v is not None:
                    out[k] = [list(p) for p in v]
                    out.pop("alpha", None)
                    out.pop("beta", None)
                continue
            out[k] = list(v) if isinstance(v, tuple) else (0.0 if v is None else v)
        if self.wall_losses:
            out["wall_losses"] = True
        return out


@dataclass(frozen=True)
class Line:
    """A one-dimensional line: kind, segments left to right, ends, attachments, damping.

    Build it with :meth:`from_dict` (the same dict a model TOML file holds) or
    directly from the dataclasses; either way it is validated here.
    """

    kind: str
    segments: tuple[Segment, ...]
    ends: tuple[End, End] | None = None      # None: the kind's default ends
    attachments: tuple[Attachment, ...] = ()
    damping: Damping = Damping()
    title: str = ""

    # ------------------------------------------------------------ validation
    def __post_init__(self) -> None:
        kind = self.kind
        if not isinstance(kind, str) or kind not in KINDS:
            self._raise_kind(kind)
        object.__setattr__(self, "segments", tuple(self.segments))
        object.__setattr__(self, "attachments", tuple(self.attachments))
        if self.ends is None:
            object.__setattr__(self, "ends", _DEFAULT_ENDS[kind])
        object.__setattr__(self, "ends", tuple(self.ends))
        if not self.segments:
            raise ModelError("segments", [], "", "a line needs at least one segment")
        for i, seg in enumerate(self.segments):
            self._check_segment(i, seg)
        total = self.length
        for i, seg in enumerate(self.segments):
            # build_mesh merges points within END_SNAP of the length: such a segment would
            # silently vanish from the solution
            if seg.length <= END_SNAP * total:
                raise ModelError(f"segments[{i}].length", seg.length, "m",
                                 f"is shorter than {END_SNAP:g} of the line's length "
                                 f"({total:g} m): points that close are one point to the "
                                 "solver, so the segment would vanish; merge it with a "
                                 "neighbour")
        if len(self.ends) != 2:
            raise ModelError("ends", self.ends, "", "needs a left and a right end")
        for side, end in zip(("left", "right"), self.ends):
            self._check_end(side, end)
        L = self.length
        for i, att in enumerate(self.attachments):
            self._check_attachment(i, att, L)
        self._check_damping()

    def _check_segment(self, i: int, seg: Segment) -> None:
        kind = self.kind
        where = f"segments[{i}]"
        if not isinstance(seg, Segment):
            raise ModelError(where, seg, "", "must be a Segment")
        required = _SEGMENT_REQUIRED[kind]
        allowed = required + _SEGMENT_OPTIONAL[kind]
        if seg.section is not None:
            sec = seg.section
            if "section" not in allowed:
                raise ModelError(f"{where}.section", sec, "", f"kind {kind!r} takes no section")
            if not isinstance(sec, Section):
                raise ModelError(f"{where}.section", sec, "", "must be a Section")
            if sec.shape not in _SECTION_SHAPES[kind]:
                raise ModelError(f"{where}.section.shape", sec.shape, "",
                                 f"kind {kind!r} takes {', '.join(_SECTION_SHAPES[kind])} sections")
            for k in _SECTION_FILLS[kind]:
                v = getattr(seg, k)
                if v is None:
                    object.__setattr__(seg, k, getattr(sec, k))
                elif not math.isclose(v, getattr(sec, k), rel_tol=1e-12):
                    raise ModelError(f"{where}.{k}", v, unit_of(k, kind),
                                     f"conflicts with the section ({getattr(sec, k):.6g}); "
                                     "give one or the other")
        for k in SEGMENT_KEYS:
            v = getattr(seg, k)
            key = f"{where}.{k}"
            if v is None:
                if k in required:
                    raise ModelError(key, None, unit_of(k, kind), f"is required for kind {kind!r}")
                continue
            if k not in allowed:
                raise ModelError(key, v, unit_of(k, kind), f"is not a property of kind {kind!r} "
                                 f"(allowed: {', '.join(allowed)})")
            if k == "eta":
                _number(key, v, kind, allow_zero=True)
            elif k == "gamma":
                if _number(key, v, kind) <= 1.0:
                    raise ModelError(key, v, unit_of(k, kind), "must be greater than 1")
            else:
                _number(key, v, kind)

    def _check_end(self, side: str, end: End) -> None:
        key = f"ends.{side}"
        if isinstance(end, str):
            if end not in END_WORDS[self.kind]:
                raise ModelError(key, end, "", (f"not an end of kind {self.kind!r} "
                                 f"(use {', '.join(END_WORDS[self.kind])} or a table)"
                                 if self.kind != "duct" else
                                 f"not a duct end (use {', '.join(END_WORDS['duct'])})")
                                 + _suggest(end, END_WORDS[self.kind]))
            return
        if not isinstance(end, EndTable):
            raise ModelError(key, end, "", "must be an end word or a table of "
                             f"{', '.join(_END_TABLE_KEYS[self.kind])}")
        if self.kind == "duct":
            raise ModelError(key, end.to_dict(), "", "duct ends take a word "
                             f"({', '.join(END_WORDS['duct'])}), not a table")
        for k in ("spring", "mass", "dashpot", "rot_spring", "rot_inertia"):
            v = _number(f"{key}.{k}", getattr(end, k), self.kind, allow_zero=True)
            if v and k not in _END_TABLE_KEYS[self.kind]:
                raise ModelError(f"{key}.{k}", v, unit_of(k, self.kind),
                                 f"is for bending lines, not kind {self.kind!r}")

    def _check_attachment(self, i: int, att: Attachment, L: float) -> None:
        where = f"attachments[{i}]"
        kind = self.kind
        if not isinstance(att, Attachment):
            raise ModelError(where, att, "", "must be an Attachment")
        if kind == "duct":
            raise ModelError(where, att.to_dict(), "", "point attachments are for structural "
                             "lines; ducts take none in this version")
        # no sign check here: a position a rounding error below 0 is the left end
        at = _number(f"{where}.at", att.at, kind, positive=False)
        tol = END_SNAP * L
        if at < -tol or at > L + tol:
            raise ModelError(f"{where}.at", att.at, "m", f"is off the line (length {L:g} m)")
        snapped = 0.0 if at <= tol else (L if abs(at - L) <= tol else at)
        object.__setattr__(att, "at", snapped)
        elements = ("mass", "spring", "dashpot", "rot_spring", "rot_inertia")
        if all(getattr(att, k) is None for k in elements) and att.absorber is None:
            names = _ATTACHMENT_KEYS[kind][1:]
            raise ModelError(where, att.to_dict(), "", "needs "
                             f"{', '.join(names[:-1])} or {names[-1]}")
        for k in elements:
            if getattr(att, k) is not None:
                _number(f"{where}.{k}", getattr(att, k), kind, allow_zero=True)
                if k not in _ATTACHMENT_KEYS[kind]:
                    raise ModelError(f"{where}.{k}", getattr(att, k), unit_of(k, kind),
                                     f"is for bending lines, not kind {kind!r}")
        if att.absorber is not None:
            a = att.absorber
            if not isinstance(a, Absorber):
                raise ModelError(f"{where}.absorber", a, "", "must be a table of mass, stiffness, damping")
            _number(f"{where}.absorber.mass", a.mass, kind)
            _number(f"{where}.absorber.stiffness", a.stiffness, kind)
            _number(f"{where}.absorber.damping", a.damping, kind, allow_zero=True)

    def _check_damping(self) -> None:
        d = self.damping
        if not isinstance(d, Damping):
            raise ModelError("damping", d, "", "must be a Damping table")
        if d.model not in DAMPING_MODELS:
            raise ModelError("damping.model", d.model, "",
                             f"unknown damping model (use one of {', '.join(DAMPING_MODELS)})"
                             f"{_suggest(d.model, DAMPING_MODELS)}")
        for k in ("eta", "zeta", "alpha", "beta", "pairs"):
            v = getattr(d, k)
            if v is None or (k in ("alpha", "beta") and d.pairs is not None):
                continue
            if k not in _DAMPING_KEYS[d.model]:
                owner = [m for m, ks in _DAMPING_KEYS.items() if k in ks][0]
                raise ModelError(f"damping.{k}", v, unit_of(k), f"is read by model {owner!r}, "
                                 f"not by {d.model!r}")
            if k == "pairs":
                continue        # checked when alpha and beta were fitted
            if k == "zeta" and callable(v):
                continue        # checked at each natural frequency when used
            if k == "zeta":
                vals = v if isinstance(v, tuple) else (v,)
                if isinstance(v, tuple) and not v:
                    raise ModelError("damping.zeta", [], unit_of("zeta"), "the list is empty")
                for j, z in enumerate(vals):
                    key = f"damping.zeta[{j}]" if isinstance(v, tuple) else "damping.zeta"
                    z = _number(key, z, self.kind, allow_zero=True)
                    if z >= 1.0:
                        raise ModelError(key, z, unit_of("zeta"), "must be below 1 (critical damping)")
            else:
                _number(f"damping.{k}", v, self.kind, allow_zero=True)
        if d.model == "modal" and d.zeta is None:
            raise ModelError("damping.zeta", None, unit_of("zeta"), "model 'modal' needs zeta")
        if d.model != "loss_factor":
            for i, seg in enumerate(self.segments):
                if seg.eta is not None:
                    raise ModelError(f"segments[{i}].eta", seg.eta, unit_of("eta"),
                                     f"segment loss factors are read by damping model "
                                     f"'loss_factor', but the model is {d.model!r}")
        if not isinstance(d.wall_losses, bool):
            raise ModelError("damping.wall_losses", d.wall_losses, "", "must be true or false")
        if d.wall_losses and self.kind != "duct":
            raise ModelError("damping.wall_losses", True, "", "wall losses are for ducts only")

    # ------------------------------------------------------------ properties
    @property
    def length(self) -> float:
        """Total length (m)."""
        return float(sum(s.length for s in self.segments))

    @property
    def boundaries(self) -> tuple[float, ...]:
        """Positions (m) of the segment ends, from 0 to ``length``."""
        out = [0.0]
        for s in self.segments:
            out.append(out[-1] + s.length)
        return tuple(out)

    def replace(self, **changes: Any) -> "Line":
        """A copy with some fields changed (validated again)."""
        return dataclasses.replace(self, **changes)

    # ------------------------------------------------------------ dict in/out
    @classmethod
    def from_dict(cls, spec: Mapping[str, Any]) -> "Line":
        """Build a line from a model dict (the same dict a model TOML file holds)."""
        if not isinstance(spec, Mapping):
            raise ModelError("model", spec, "", "must be a table (dict)")
        top = ("title", "kind", "segments", "ends", "attachments", "damping")
        kind = spec.get("kind")
        if kind is None:
            raise ModelError("kind", None, "", f"is required (one of {', '.join(KINDS)})")
        if not isinstance(kind, str):
            raise ModelError("kind", kind, "", "must be a word")
        if kind not in KINDS:
            cls._raise_kind(kind)
        _check_keys("model", spec, top, kind)
        title = spec.get("title", "")
        if not isinstance(title, str):
            raise ModelError("title", title, "", "must be text")

        raw_segments = spec.get("segments")
        if raw_segments is None:
            raise ModelError("segments", None, "", "a line needs at least one segment")
        if not isinstance(raw_segments, (list, tuple)):
            raise ModelError("segments", raw_segments, "", "must be a list of tables")
        allowed = _SEGMENT_REQUIRED[kind] + _SEGMENT_OPTIONAL[kind]
        segments = []
        for i, raw in enumerate(raw_segments):
            _check_keys(f"segments[{i}]", raw, allowed, kind)
            values = dict(raw)
            if kind == "duct":
                values.setdefault("rho", AIR["rho"])
                values.setdefault("c", AIR["c"])
            if "length" not in values:
                raise ModelError(f"segments[{i}].length", None, "m",
                                 f"is required for kind {kind!r}")
            section = None
            if "section" in values:
                section = Section.from_dict(values.pop("section"), f"segments[{i}].section")
            for k, v in values.items():
                _number(f"segments[{i}].{k}", v, kind, allow_zero=(k == "eta"))
            segments.append(Segment(section=section, **{k: float(v) for k, v in values.items()}))

        raw_ends = spec.get("ends", {})
        _check_keys("ends", raw_ends, ("left", "right"), kind)
        defaults = _DEFAULT_ENDS[kind]
        ends = tuple(cls._end_from(side, raw_ends.get(side, dflt), kind)
                     for side, dflt in zip(("left", "right"), defaults))

        raw_atts = spec.get("attachments", [])
        if not isinstance(raw_atts, (list, tuple)):
            raise ModelError("attachments", raw_atts, "", "must be a list of tables")
        attachments = []
        for i, raw in enumerate(raw_atts):
            where = f"attachments[{i}]"
            _check_keys(where, raw, _ATTACHMENT_KEYS[kind], kind)
            if "at" not in raw:
                raise ModelError(f"{where}.at", None, "m", "is required")
            # 'at' has no sign check here: Line range-checks it and snaps it to an end
            vals = {k: _number(f"{where}.{k}", raw[k], kind, allow_zero=(k != "at"),
                               positive=(k != "at"))
                    for k in _ATTACHMENT_KEYS[kind] if k in raw and k != "absorber"}
            absorber = None
            if "absorber" in raw:
                a = raw["absorber"]
                _check_keys(f"{where}.absorber", a, ("mass", "stiffness", "damping"), kind)
                for k in ("mass", "stiffness"):
                    if k not in a:
                        raise ModelError(f"{where}.absorber.{k}", None, unit_of(k, kind), "is required")
                absorber = Absorber(
                    mass=_number(f"{where}.absorber.mass", a["mass"], kind),
                    stiffness=_number(f"{where}.absorber.stiffness", a["stiffness"], kind),
                    damping=_number(f"{where}.absorber.damping", a.get("damping", 0.0), kind,
                                    allow_zero=True))
            attachments.append(Attachment(absorber=absorber, **vals))

        raw_d = spec.get("damping")
        if raw_d is None:
            has_eta = any(s.eta is not None for s in segments)
            damping = Damping(model="loss_factor", eta=0.0) if has_eta else Damping()
        else:
            damping = cls._damping_from(raw_d, kind)
        return cls(kind=kind, segments=tuple(segments), ends=ends,
                   attachments=tuple(attachments), damping=damping, title=title)

    @staticmethod
    def _raise_kind(kind: str) -> None:
        raise ModelError("kind", kind, "", f"unknown kind (use one of {', '.join(KINDS)})"
                         f"{_suggest(kind, KINDS)}")

    @staticmethod
    def _end_from(side: str, raw: Any, kind: str) -> End:
        key = f"ends.{side}"
        if isinstance(raw, str):
            return raw  # checked in __post_init__
        if isinstance(raw, Mapping):
            if kind == "duct":
                raise ModelError(key, dict(raw), "", "duct ends take a word "
                                 f"({', '.join(END_WORDS['duct'])}), not a table")
            allowed = _END_TABLE_KEYS[kind]
            _check_keys(key, raw, allowed, kind)
            if not raw:
                raise ModelError(key, {}, "", f"an end table needs {', '.join(allowed)}")
            vals = {k: _number(f"{key}.{k}", v, kind, allow_zero=True) for k, v in raw.items()}
            return EndTable(given=tuple(k for k in allowed if k in vals), **vals)
        raise ModelError(key, raw, "", "must be an end word or a table of "
                         f"{', '.join(_END_TABLE_KEYS[kind])}")

    @staticmethod
    def _damping_from(raw: Any, kind: str) -> Damping:
        _check_keys("damping", raw, ("model", "eta", "zeta", "alpha", "beta", "pairs",
                                     "wall_losses"), kind)
        model = raw.get("model", "none")
        if model not in DAMPING_MODELS:
            raise ModelError("damping.model", model, "",
                             f"unknown damping model (use one of {', '.join(DAMPING_MODELS)})"
                             f"{_suggest(model, DAMPING_MODELS)}")
        vals: dict[str, Any] = {"model": model}
        for k in ("eta", "alpha", "beta"):
            if k in raw:
                vals[k] = _number(f"damping.{k}", raw[k], kind, allow_zero=True)
        if "zeta" in raw:
            z = raw["zeta"]
            if isinstance(z, (list, tuple)):
                vals["zeta"] = tuple(_number(f"damping.zeta[{j}]", v, kind, allow_zero=True)
                                     for j, v in enumerate(z))
            else:
                vals["zeta"] = _number("damping.zeta", z, kind, allow_zero=True)
        if "wall_losses" in raw:
            vals["wall_losses"] = raw["wall_losses"]
        if "pairs" in raw:
            pr = raw["pairs"]
            if model != "rayleigh":
                raise ModelError("damping.pairs", pr, "", f"is read by model 'rayleigh', not by "
                                 f"{model!r}")
            if "alpha" in raw or "beta" in raw:
                raise ModelError("damping.pairs", pr, "", "give alpha and beta, or pairs, not both")
            vals["pairs"] = _pairs(pr, kind)
        # fill the defaults of the chosen model so to_dict is explicit
        if model == "loss_factor":
            vals.setdefault("eta", 0.0)
        if model == "rayleigh" and "pairs" not in vals:
            vals.setdefault("alpha", 0.0)
            vals.setdefault("beta", 0.0)
        return Damping(**vals)

    def to_dict(self) -> dict[str, Any]:
        """The normalised model dict: defaults filled in, floats, lists for tables."""
        out: dict[str, Any] = {}
        if self.title:
            out["title"] = self.title
        out["kind"] = self.kind
        out["segments"] = [s.to_dict() for s in self.segments]
        out["ends"] = {side: (e if isinstance(e, str) else e.to_dict())
                       for side, e in zip(("left", "right"), self.ends)}
        if self.attachments:
            out["attachments"] = [a.to_dict() for a in self.attachments]
        out["damping"] = self.damping.to_dict()
        return out
