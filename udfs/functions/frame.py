"""What every CALIB_* function shares: the decorators, cells out, the options parsed, the calibration and order
to use, cached tables, and ranges whose output rows stay aligned with their cells.

Numbers go out as full doubles, not-applicable cells as None (empty). Bad input gives one cell of plain text
that names the argument, the position and what to do; nothing raises into the spreadsheet (``guarded``).
"""

from __future__ import annotations

import functools
import inspect
import math

import numpy as np

from .. import engine
from ..catalogue import ARGUMENTS
from ..coercion import CellError, cell_numbers, flatten, number_option
from ..engine.validation import check_alpha, check_count, check_level, check_order, check_replicates
from ..prepared import RESULTS, calibration
from ..registration import declared

worksheet_function = declared(ARGUMENTS)  # each argument described by ARGUMENTS[its name]


def cell(v):
    """A float for the sheet, or None where not applicable."""
    if v is None:
        return None
    v = float(v)
    return v if math.isfinite(v) else None


def column(values) -> list:
    """``cell`` of each of a sequence of Python floats."""
    if all(map(math.isfinite, values)):
        return list(values)
    finite = math.isfinite
    return [v if finite(v) else None for v in values]


def _arguments_problem(f, args: tuple, kwargs: dict) -> str | None:
    """What is wrong with the number of arguments of a call of f, in words, or None when they fit."""
    signature = inspect.signature(f)
    try:
        signature.bind(*args, **kwargs)
    except TypeError:
        names = list(signature.parameters)
        needed = sum(p.default is inspect.Parameter.empty for p in signature.parameters.values())
        given = len(args) + len(kwargs)
        takes = (f"{needed} to {len(names)} arguments" if needed < len(names) else
                 f"{len(names)} argument{'' if len(names) == 1 else 's'}" if names else "no arguments")
        listed = f" ({', '.join(names)})" if names else ""
        return f"{f.__name__.upper()} takes {takes}{listed}; {given} {'was' if given == 1 else 'were'} given"
    return None


def guarded(single: bool = False):
    """Turn CellError (and any engine error) into one cell of text; never a traceback."""

    def wrap(f):
        @functools.wraps(f)
        def inner(*args, **kwargs):
            try:
                return f(*args, **kwargs)
            except CellError as err:
                message = str(err)
            except engine.CalibrationError as err:
                message = err.message
            except OverflowError:
                message = ("the numbers are too large or too small for double precision in this computation; "
                           "express x and y in other units and try again")
            except Exception as err:  # noqa: BLE001 - a cell must never show a traceback
                message = (isinstance(err, TypeError) and _arguments_problem(f, args, kwargs)
                           or f"internal error ({type(err).__name__}: {err}); please report it with the workbook")
            return message if single else [[message]]

        return inner

    return wrap


def cached(name: str, prep, options: tuple, compute):
    rows = RESULTS.get((name, prep.key, prep.layout, options), compute)
    return [list(r) for r in rows] if isinstance(rows, list) else rows


def _option(v, name: str, example: str, default, check):
    """An optional number: its default when omitted, else as the engine's ``check`` accepts it."""
    value = number_option(v, name, example)
    return default if value is None else check(value)


def parse_max_order(v):
    return _option(v, "max_order", "a whole number such as 3", None, lambda k: check_count(k, "max_order"))


def parse_alpha(v):
    return _option(v, "alpha", "a level such as 0.05", 0.05, check_alpha)


def parse_level(v):
    return _option(v, "level", "a level such as 0.95", 0.95, check_level)


def parse_order(v):
    return _option(v, "order", "a whole number such as 2, or the CALIB_ORDER cell", None,
                   lambda k: check_count(k, "order"))


def parse_replicates(v):
    return _option(v, "replicates", "a whole number such as 3", 1,
                   lambda m: int(check_replicates(m, 1)[0]))


def curve_for(prep, order):
    """The calibration to use, the order, and a function that says why this order and with which
    settings (in words: only CALIB_STATS shows them)."""
    try:
        default = calibration(prep)
    except CellError:
        if order is None:
            raise
        default = None
    choice = None if default is None else engine.choose_order(default)
    if order is None:
        return default, choice.order, lambda: (engine.order_reason(default, choice), choice.settings)
    if default is not None and order <= default.max_order:
        cal = default
    else:
        n, m = prep.x.size, np.unique(prep.x).size
        check_order(order, "order", n, m)
        cal = calibration(prep, max_order=order)

    def why() -> tuple[str, str]:
        given = (f"order {order} given as the order argument (a number, or a cell such as CALIB_ORDER with its "
                 "own rule, alpha and max order)")
        if choice is None:
            return f"{given}. {engine.lack_of_fit_words(cal, order)}", "order argument"
        settings = f"order argument; for comparison {choice.settings}"
        if choice.order == order:
            return f"{given}; the default rule picks the same order: {engine.order_reason(default, choice)}", settings
        return (f"{given}. {engine.lack_of_fit_words(cal, order)} For comparison, the default rule picks order "
                f"{choice.order}: {engine.order_reason(default, choice)}", settings)

    return cal, order, why


def aligned(cells_arg, name: str):
    """A range whose output rows stay aligned with it: the filled cells' values, their positions, the
    number of rows, and a note for each cell that is not a number (that row gets the note, the others
    are computed). A range with no values yet (a template before the samples are entered) gives one row
    whose note says so."""
    cells = flatten(cells_arg, name)
    values, blank, problems = cell_numbers(cells)
    notes = {i: f"{cells.where(i)}: {why}; enter a number or clear the cell" for i, why in problems}
    if values.size and not (blank.any() or notes):
        return values, range(values.size), values.size, notes
    filled = np.flatnonzero(~blank & ~np.isnan(values))
    if not (filled.size or notes):
        return values[filled], (), 1, {0: f"{name}: no values yet; the results appear when the cells are filled"}
    return values[filled], tuple(filled.tolist()), len(cells.values), notes


def blank_rows(size: int, width: int, notes: dict) -> list:
    """Empty output rows, the note of a bad cell in the last column of its row."""
    rows = [[None] * width for _ in range(size)]
    for i, note in notes.items():
        rows[i][-1] = note
    return rows
