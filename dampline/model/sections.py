"""Cross-section helpers: give dimensions, get area, second moment and fibre distance.

Formulas (any strength-of-materials text, e.g. Roark's Formulas for Stress and
Strain, table of section properties):

- circle, diameter d: A = pi d^2 / 4, I = pi d^4 / 64, J = pi d^4 / 32, c = d / 2
- tube, outer D and inner d: A = pi (D^2 - d^2) / 4, I = pi (D^4 - d^4) / 64,
  J = 2 I, c = D / 2
- rectangle, width b and height h (h along the bending displacement):
  A = b h, I = b h^3 / 12, c = h / 2 (no polar J: the torsion constant of a
  rectangle is not its polar moment, so rectangles are not offered for torsion)
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Mapping

from ..errors import ModelError

__all__ = ["Section", "circle", "tube", "rectangle", "SHAPES"]

SHAPES = {
    "circle": ("diameter",),
    "tube": ("outer_diameter", "inner_diameter"),
    "rectangle": ("width", "height"),
}


@dataclass(frozen=True)
class Section:
    """A named cross-section with its dimensions (m) and derived properties."""

    shape: str
    dims: tuple[tuple[str, float], ...]

    def __post_init__(self) -> None:
        from ..checks import suggest
        if not isinstance(self.shape, str) or self.shape not in SHAPES:
            raise ModelError("section.shape", self.shape, "",
                             f"unknown section (use one of {', '.join(SHAPES)})"
                             f"{suggest(self.shape, SHAPES)}")
        d = dict(self.dims)
        # a misspelt dimension is named as such before the one it was meant for is missed
        for k, v in d.items():
            if k not in SHAPES[self.shape]:
                raise ModelError(f"section.{k}", v, "m", f"is not a dimension of a {self.shape} "
                                 f"(use {', '.join(SHAPES[self.shape])})"
                                 f"{suggest(k, SHAPES[self.shape])}")
        for k in SHAPES[self.shape]:
            if k not in d:
                raise ModelError(f"section.{k}", None, "m", f"is required for a {self.shape}")
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) \
                    or v <= 0:
                raise ModelError(f"section.{k}", v, "m", "must be a positive finite length")
        if self.shape == "tube" and d["inner_diameter"] >= d["outer_diameter"]:
            raise ModelError("section.inner_diameter", d["inner_diameter"], "m",
                             f"must be smaller than outer_diameter ({d['outer_diameter']:g} m)")

    @property
    def dim(self) -> dict[str, float]:
        return dict(self.dims)

    @property
    def area(self) -> float:
        d = self.dim
        if self.shape == "circle":
            return math.pi * d["diameter"] ** 2 / 4
        if self.shape == "tube":
            return math.pi * (d["outer_diameter"] ** 2 - d["inner_diameter"] ** 2) / 4
        return d["width"] * d["height"]

    @property
    def I(self) -> float:  # noqa: E743 - the engineering symbol
        d = self.dim
        if self.shape == "circle":
            return math.pi * d["diameter"] ** 4 / 64
        if self.shape == "tube":
            return math.pi * (d["outer_diameter"] ** 4 - d["inner_diameter"] ** 4) / 64
        return d["width"] * d["height"] ** 3 / 12

    @property
    def J(self) -> float | None:
        """Polar second moment (circle and tube only)."""
        return 2.0 * self.I if self.shape in ("circle", "tube") else None

    @property
    def fibre(self) -> float:
        """Distance from the neutral axis to the outer fibre (m)."""
        d = self.dim
        return {"circle": d.get("diameter"), "tube": d.get("outer_diameter"),
                "rectangle": d.get("height")}[self.shape] / 2

    def to_dict(self) -> dict[str, Any]:
        return {"shape": self.shape, **self.dim}

    @classmethod
    def from_dict(cls, raw: Mapping[str, Any], where: str = "section") -> "Section":
        if not isinstance(raw, Mapping):
            raise ModelError(where, raw, "", "must be a table such as "
                             "{ shape = \"circle\", diameter = 0.02 }")
        if "shape" not in raw:
            raise ModelError(f"{where}.shape", None, "",
                             f"is required (one of {', '.join(SHAPES)})")
        shape = raw["shape"]
        dims = tuple((str(k), v) for k, v in raw.items() if k != "shape")
        try:
            return cls(shape=shape, dims=dims)
        except ModelError as exc:
            key = exc.key.replace("section", where, 1)
            raise ModelError(key, exc.value, exc.unit, exc.reason) from None


def circle(diameter: float) -> Section:
    """Solid round section of the given diameter (m)."""
    return Section("circle", (("diameter", diameter),))


def tube(outer_diameter: float, inner_diameter: float) -> Section:
    """Round tube (m)."""
    return Section("tube", (("outer_diameter", outer_diameter),
                            ("inner_diameter", inner_diameter)))


def rectangle(width: float, height: float) -> Section:
    """Rectangle (m); ``height`` lies along the bending displacement."""
    return Section("rectangle", (("width", width), ("height", height)))
