"""Cell values as the spreadsheet hands them to a function, turned into numbers or a clear message.

What arrives: a scalar for one cell; nested lists for a range (a row, a column
or a one-wide block); None for a blank; floats and ints; strings; booleans;
error values as text ("#N/A", "#DIV/0!", ...) or, from the desktop add-in, as
integer codes (the COM error numbers 0x800A07D0 + n, e.g. -2146826246 for
#N/A; values recalled from memory of the COM interface). A cell holding only
spaces or the empty text "" counts as blank.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass

import numpy as np

# the COM error numbers of the seven classic error values (recalled from memory)
ERROR_CODES = {
    -2146826288: "#NULL!", -2146826281: "#DIV/0!", -2146826273: "#VALUE!", -2146826265: "#REF!",
    -2146826259: "#NAME?", -2146826252: "#NUM!", -2146826246: "#N/A",
}
_COM_ERROR_BASE = -2146828288  # 0x800A0000; error values are this plus 2000..2100
ERROR_TEXTS = frozenset(ERROR_CODES.values()) | {
    "#SPILL!", "#CALC!", "#GETTING_DATA", "#FIELD!", "#BLOCKED!", "#CONNECT!", "#BUSY!", "#UNKNOWN!",
}


class CellError(Exception):
    """A message for the user, shown as the function's only cell."""


@dataclass(frozen=True)
class Cells:
    """A range flattened to one dimension, with how to name a position in it."""

    name: str
    values: tuple
    axis: str  # "row" for a column of cells, "column" for a row of cells

    def where(self, i: int) -> str:
        return f"{self.name}, {self.axis} {i + 1} of {len(self.values)}"


def is_blank(v) -> bool:
    return v is None or (isinstance(v, str) and v.strip() == "")


def describe(v) -> str | None:
    """Why v is not a usable number, or None when it is one."""
    if isinstance(v, bool):
        return f"the logical value {'TRUE' if v else 'FALSE'} is not a number"
    if isinstance(v, numbers.Integral):
        code = int(v)
        if code in ERROR_CODES:
            return f"the cell holds the error {ERROR_CODES[code]}"
        if _COM_ERROR_BASE + 2000 <= code <= _COM_ERROR_BASE + 2100:
            return "the cell holds an error value"
        return None
    if isinstance(v, numbers.Real):
        f = float(v)
        if math.isnan(f):
            return "the value is not a number (NaN)"
        if math.isinf(f):
            return "the value is infinite"
        return None
    if isinstance(v, str):
        text = v.strip()
        if text.upper() in ERROR_TEXTS:
            return f"the cell holds the error {text.upper()}"
        try:
            float(text)
        except ValueError:
            return f"the text '{text}' is not a number"
        return f"the text '{text}' is a number stored as text"
    return f"a value of type {type(v).__name__} is not a number"


def one_wide(value):
    """The cells of a list of one-cell lists (a column as xlwings hands it over) as a tuple, else None."""
    if type(value) is not list:
        return None
    try:
        cells = tuple([v for (v,) in value])
    except (TypeError, ValueError):
        return None
    return cells if set(map(type, value)) == {list} else None


def flatten(value, name: str) -> Cells:
    """A scalar, a row, a column or a one-wide block as one sequence of cells."""
    if not isinstance(value, (list, tuple)):
        return Cells(name, (value,), "row")
    column = one_wide(value)
    if column is not None:  # the usual case
        return Cells(name, column, "row")
    rows = [list(r) if isinstance(r, (list, tuple)) else [r] for r in value]
    if not rows:
        return Cells(name, (), "row")
    width = max(len(r) for r in rows)
    if len(rows) == 1 and width > 1:
        return Cells(name, tuple(rows[0]), "column")
    if width == 1:
        return Cells(name, tuple(r[0] if r else None for r in rows), "row")
    raise CellError(f"{name}: the range is {len(rows)} rows by {width} columns; give a single row or column")


def numbers_or_blank(cells: Cells) -> tuple[np.ndarray, np.ndarray]:
    """Values (nan where blank) and the blank mask; any other non-number is a CellError."""
    if set(map(type, cells.values)) == {float}:  # the usual case: every cell a number
        out = np.array(cells.values, dtype=float)
        if np.isfinite(out).all():
            return out, np.zeros(out.size, dtype=bool)
    out = np.empty(len(cells.values))
    blank = np.zeros(len(cells.values), dtype=bool)
    for i, v in enumerate(cells.values):
        if is_blank(v):
            blank[i] = True
            out[i] = math.nan
            continue
        why = describe(v)
        if why is not None:
            raise CellError(f"{cells.where(i)}: {why}; enter a number or clear the cell")
        out[i] = float(v)
    return out, blank


def is_omitted(v) -> bool:
    """An optional argument left empty: missing, a blank cell or a one-cell blank range."""
    while isinstance(v, (list, tuple)) and len(v) == 1:
        v = v[0]
    return is_blank(v) or (isinstance(v, (list, tuple)) and len(v) == 0)


def scalar(v, name: str):
    """The single value of a one-cell argument."""
    while isinstance(v, (list, tuple)):
        if len(v) != 1:
            raise CellError(f"{name}: give a single value, not a range of {len(flatten(v, name).values)} cells")
        v = v[0]
    return v


def number_option(v, name: str, default, low: float, high: float, example: str, whole: bool = False):
    """An optional number within (low, high), or its default when omitted."""
    if v is None or is_omitted(v):
        return default
    v = scalar(v, name)
    if not (type(v) in (float, int) and math.isfinite(v)):
        why = describe(v)
        if why is not None:
            raise CellError(f"{name}: {why}; leave it empty or enter {example}")
    f = float(v)
    if whole and f != int(f):
        raise CellError(f"{name}: {f:g} is not a whole number; leave it empty or enter {example}")
    if not low < f < high:
        raise CellError(f"{name}: {f:g} is out of range; leave it empty or enter {example}")
    return int(f) if whole else f


def text_option(v, name: str, default: str, choices) -> str:
    if v is None or is_omitted(v):
        return default
    v = scalar(v, name)
    key = str(v).strip().lower()
    if key not in choices:
        raise CellError(f"{name}: '{v}' is not known; use one of " + ", ".join(f"'{c}'" for c in choices))
    return key
