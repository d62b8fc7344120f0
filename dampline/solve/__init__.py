"""Solvers: exact dynamic stiffness response and Wittrick-Williams modes."""

from .exact import frf
from .modes import ModeSet, modes, natural_frequencies

__all__ = ["frf", "modes", "natural_frequencies", "ModeSet"]
