"""The one exception type users see for bad input."""

from __future__ import annotations

__all__ = ["ModelError", "ResonanceWarning"]


class ModelError(ValueError):
    """Bad model or request: names the key, the value and its unit.

    A ``ValueError`` so that generic callers can catch it; ``key``, ``value``
    and ``unit`` are kept as attributes for programmatic use (the dashboard
    shows them next to the offending control).
    """

    def __init__(self, key: str, value: object, unit: str = "", reason: str = "") -> None:
        self.key = key
        self.value = value
        self.unit = unit
        self.reason = reason
        shown = repr(value)
        if len(shown) > 80:
            shown = shown[:77] + "..."
        unit_part = f" {unit}" if unit else ""
        msg = f"{key} = {shown}{unit_part}"
        if reason:
            msg += f": {reason}"
        super().__init__(msg)


class ResonanceWarning(UserWarning):
    """A requested frequency sits on a natural frequency of a line with no damping at
    all, where the response is infinite: those values are returned as ``inf``.

    A ``UserWarning`` (not a ``RuntimeWarning``): it reports the physics of the model,
    not a floating-point accident, and test suites that turn numerical runtime
    warnings into errors should still see it as a warning.
    """
