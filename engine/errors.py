"""Typed errors raised by the engine; every message says what is wrong and what to do."""

from __future__ import annotations


class CalibrationError(ValueError):
    """Base of every error the engine raises on bad input.

    ``argument`` names the offending argument ("x", "y", "weights", "order", ...)
    and ``index`` the 0-based position within it, when one value is to blame; the message then
    names that value as ``argument[index]`` (``position``), which a caller with its own idea of
    positions (the worksheet layer: a cell) replaces through ``located``.
    """

    def __init__(self, message: str, argument: str | None = None, index: int | None = None):
        super().__init__(message)
        self.message = message
        self.argument = argument
        self.index = index

    @property
    def position(self) -> str | None:
        """The blamed value as the message names it ("x[3]"), or None when no one value is to blame."""
        return None if self.index is None else f"{self.argument}[{self.index}]"

    def located(self, where: str) -> str:
        """The message with the blamed value named as ``where`` instead (e.g. "x, row 5 of 12")."""
        return self.message if self.position is None else self.message.replace(self.position, where, 1)


class DataError(CalibrationError):
    """The points cannot be used: sizes differ, values are not finite, too few points."""


class WeightError(CalibrationError):
    """The weights are not positive finite numbers or the scheme does not apply."""


class OrderError(CalibrationError):
    """The order (or max order) is not a whole number the data can support."""


class OptionError(CalibrationError):
    """An option (alpha, level, rule, replicates) is out of its range."""
