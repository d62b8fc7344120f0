"""Model data: :class:`Line` and its parts, TOML in and out."""

from .io import dumps, load, save
from .line import AIR, KINDS, Absorber, Attachment, Damping, EndTable, Line, Segment

__all__ = ["Line", "Segment", "EndTable", "Attachment", "Absorber", "Damping",
           "KINDS", "AIR", "load", "save", "dumps"]
