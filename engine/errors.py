"""Typed errors raised by the engine; every message says what is wrong and what to do."""

from __future__ import annotations


class CalibrationError(ValueError):
    """Base of every error the engine raises on bad input.

    ``argument`` names the offending argument ("x", "y", "weights", "order", ...)
    and ``index`` the 0-based position within it, when one value is to blame.
    """

    def __init__(self, message: str, argument: str | None = None, index: int | None = None):
        super().__init__(message)
        self.message = message
        self.argument = argument
        self.index = index


class DataError(CalibrationError):
    """The points cannot be used: sizes differ, values are not finite, too few points."""


class WeightError(CalibrationError):
    """The weights are not positive finite numbers or the scheme does not apply."""


class OrderError(CalibrationError):
    """The order (or max order) is not a whole number the data can support."""


class OptionError(CalibrationError):
    """An option (alpha, level, rule, replicates) is out of its range."""
