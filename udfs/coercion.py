"""Cell values as the spreadsheet hands them to a function, turned into numbers or a clear message.

What arrives (every argument is declared 2-D with error values as text, see ``registration``): a list of
rows for a range, a scalar or a one-cell list for one cell; None for a blank (the runtimes turn the empty
text into None too); floats, and ints for whole numbers in the browser runtime; strings; booleans; error
values as text ("#N/A", "#DIV/0!", ...) or, for the newer error values on the desktop, as integer codes
(the COM error numbers 0x800A07D0 + n, e.g. -2146826246 for #N/A; values recalled from memory of the COM
interface); Decimal for currency-formatted cells and datetime for date-formatted cells on the desktop.
A cell holding only spaces counts as blank.

Dates count as the number the cell holds, the serial day number (days since 1899-12-30): the browser
runtime and the workbook file only ever see that number, so every runtime and the refresh agree.
"""

from __future__ import annotations

import datetime
import decimal
import math
import numbers
from typing import NamedTuple

import numpy as np

# the COM error numbers of the seven classic error values (recalled from memory)
ERROR_CODES = {
    -2146826288: "#NULL!", -2146826281: "#DIV/0!", -2146826273: "#VALUE!", -2146826265: "#REF!",
    -2146826259: "#NAME?", -2146826252: "#NUM!", -2146826246: "#N/A",
}
_COM_ERROR_BASE = -2146828288  # 0x800A0000; error values are this plus 2000..2100
COM_ERRORS = (_COM_ERROR_BASE + 2000, _COM_ERROR_BASE + 2100)
ERROR_TEXTS = frozenset(ERROR_CODES.values()) | {
    "#SPILL!", "#CALC!", "#GETTING_DATA", "#FIELD!", "#BLOCKED!", "#CONNECT!", "#BUSY!", "#UNKNOWN!",
}
_EPOCH = datetime.datetime(1899, 12, 30)  # serial day 0 of the spreadsheet's dates (1900 date system)
_DAY = datetime.timedelta(days=1)


class CellError(Exception):
    """A message for the user, shown as the function's only cell."""


class Cells(NamedTuple):
    """A range as one sequence of cells, cut after its last filled cell, with how to name a position in it."""

    name: str
    values: tuple  # the cells up to the last one that is not blank
    axis: str  # "row" for a column of cells, "column" for a row of cells
    size: int  # cells in the range

    def where(self, i: int) -> str:
        return f"{self.name}, {self.axis} {i + 1} of {self.size}"

    def padded(self, n: int) -> "Cells":
        """The first n cells, blanks added where the cut left fewer."""
        if n == len(self.values):  # the usual case: nothing to add
            return self
        return self._replace(values=self.values + (None,) * (n - len(self.values)))


def is_blank(v) -> bool:
    return v is None or (isinstance(v, str) and v.strip() == "")


def number(v) -> float:
    """The number a cell holds (one that ``describe`` accepts); a date or time as its serial day number
    (days since 1899-12-30)."""
    if isinstance(v, datetime.datetime):
        return (v.replace(tzinfo=None) - _EPOCH) / _DAY
    if isinstance(v, datetime.date):
        return float((v - _EPOCH.date()).days)
    return float(v)


QUOTED = 40  # characters of a cell's text repeated in a message: a message read by a message stays short


def quoted(text: str) -> str:
    """A cell's text in quotes, cut to QUOTED characters ("..." marks the cut)."""
    return f"'{text}'" if len(text) <= QUOTED else f"'{text[:QUOTED - 3]}...'"


def describe(v) -> str | None:
    """Why v is not a usable number, or None when it is one."""
    if isinstance(v, bool):
        return f"the logical value {'TRUE' if v else 'FALSE'} is not a number"
    if isinstance(v, decimal.Decimal) and v.is_nan():  # float() refuses a signalling NaN
        return "the value is not a number (NaN)"
    if isinstance(v, numbers.Integral):
        code = int(v)
        if code in ERROR_CODES:
            return f"the cell holds the error {ERROR_CODES[code]}"
        if _COM_ERROR_BASE + 2000 <= code <= _COM_ERROR_BASE + 2100:
            return "the cell holds an error value"
    if isinstance(v, (numbers.Real, decimal.Decimal, datetime.date)):  # currency and dates too
        try:
            f = number(v)
        except OverflowError:  # an int beyond the doubles (the browser hands whole numbers as ints)
            f = math.inf
        if math.isnan(f):
            return "the value is not a number (NaN)"
        if math.isinf(f):
            return ("the value is infinite" if isinstance(v, float) or (isinstance(v, decimal.Decimal)
                                                                           and v.is_infinite())
                    else "the number is too large for double precision (beyond 1.8e308)")
        return None
    if isinstance(v, str):
        text = v.strip()
        if text.upper() in ERROR_TEXTS:
            return f"the cell holds the error {text.upper()}"
        try:
            float(text)
        except ValueError:
            return f"the text {quoted(text)} is not a number"
        return f"the text {quoted(text)} is a number stored as text"
    return f"a value of type {type(v).__name__} is not a number"


def one_wide(value):
    """The cells of a list of one-cell rows (a column as xlwings hands it over) as a tuple, else None.

    (A flat list of one-character texts unpacks too, and means the same column.)"""
    if type(value) is not list:
        return None
    try:
        return tuple([v for (v,) in value])
    except (TypeError, ValueError):
        return None


def filled_length(cells: tuple, blank=None) -> int:
    """How many leading cells to keep: up to the last one that is not ``blank``.

    Whole-column references hand over about a million blank cells; they are counted in C (the blank is
    one object, so each comparison is an identity test) over chunks that double from the end, then the
    chunk holding the last filled cell is halved, so that the cut costs milliseconds.
    """
    n, step, lo = len(cells), 16, 0
    while n:
        lo = max(0, n - step)
        if cells[lo:n].count(blank) != n - lo:
            break
        n, step = lo, 2 * step
    while n - lo > 16:
        mid = (lo + n) // 2
        if cells[mid:n].count(blank) == n - mid:
            n = mid
        else:
            lo = mid
    while n and cells[n - 1] is blank:
        n -= 1
    return n


def flatten(value, name: str) -> Cells:
    """A scalar, a row, a column or a one-wide block as one sequence of cells, cut after its last filled cell."""
    if not isinstance(value, (list, tuple)):
        return Cells(name, () if is_blank(value) else (value,), "row", 1)
    last = value[-1] if value else None
    # blank rows put back as one shared row (by xlwings' converter, or the refresh for a range past the data)
    shared = len(value) > 1 and last is value[-2] and isinstance(last, list) and last.count(None) == len(last)
    rows = value[:filled_length(value, last)] if shared else value
    column = one_wide(rows)
    if column is not None:  # the usual case
        return Cells(name, column[:filled_length(column)], "row", len(value))
    rows = [list(r) if isinstance(r, (list, tuple)) else [r] for r in rows]
    if not rows:
        return Cells(name, (), "row", len(value))
    width = max(len(r) for r in (*rows, last if shared else ()))
    if len(value) == 1 and width > 1:
        cells = rows[0]
        return Cells(name, tuple(cells[:filled_length(cells)]), "column", width)
    if width == 1:
        cells = [r[0] if r else None for r in rows]
        return Cells(name, tuple(cells[:filled_length(cells)]), "row", len(value))
    raise CellError(f"{name}: the range is {len(value)} rows by {width} columns; give a single row or column")


def cell_numbers(cells: Cells) -> tuple[np.ndarray, np.ndarray, list]:
    """Values (nan where blank or not a number), the blank mask, and (position, why) for each cell that is
    neither blank nor a number."""
    kinds = set(map(type, cells.values))
    if kinds <= {float, int}:  # the usual case: every cell a number (ints: whole numbers in the browser)
        try:
            out = np.array(cells.values, dtype=float)
        except OverflowError:  # an int beyond the doubles: the loop below names it
            out = np.full(len(cells.values), math.nan)
        codes = int in kinds and ((out >= COM_ERRORS[0]) & (out <= COM_ERRORS[1])).any()
        if np.isfinite(out).all() and not codes:
            return out, np.zeros(out.size, dtype=bool), []
    out = np.empty(len(cells.values))
    blank = np.zeros(len(cells.values), dtype=bool)
    problems = []
    for i, v in enumerate(cells.values):
        if is_blank(v):
            blank[i], out[i] = True, math.nan
        elif (why := describe(v)) is None:
            out[i] = number(v)
        else:
            out[i] = math.nan
            problems.append((i, why))
    return out, blank, problems


def numbers_or_blank(cells: Cells) -> tuple[np.ndarray, np.ndarray]:
    """Values (nan where blank) and the blank mask; any other non-number is a CellError."""
    out, blank, problems = cell_numbers(cells)
    if problems:
        i, why = problems[0]
        raise CellError(f"{cells.where(i)}: {why}; enter a number or clear the cell")
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
            raise CellError(f"{name}: give a single value, not a range of {flatten(v, name).size} cells")
        v = v[0]
    return v


def number_option(v, name: str, example: str):
    """The number of an optional one-cell argument, None when omitted; the engine judges its range."""
    if v is None or is_omitted(v):
        return None
    v = scalar(v, name)
    why = describe(v)
    if why is not None:
        raise CellError(f"{name}: {why}; leave it empty or enter {example}")
    return number(v)


def text_option(v, name: str, default: str, choices) -> str:
    if v is None or is_omitted(v):
        return default
    v = scalar(v, name)
    key = str(v).strip().lower()
    if key not in choices:
        raise CellError(f"{name}: '{v}' is not known; use one of " + ", ".join(f"'{c}'" for c in choices))
    return key
