"""Random calls of the worksheet functions for fuzzing (fixed seeds): random cells of every kind the
runtimes hand over, and some that only a buggy caller would (Decimal NaN, huge ints), in random shapes,
sometimes one argument too many. ``as_com`` and ``as_js`` give a call's arguments as xlwings' desktop and
browser code receive them (tests/xlwings_runtimes.py)."""

from __future__ import annotations

import datetime
import decimal
import inspect
import math
import random

import degreewise
import xlwings_runtimes as rt

RANGES = ("x", "y", "weights", "exclude", "new_x", "reading", "ref_x", "ref_y", "at", "blank")
NUM = -2146826252  # COM's #NUM! (recalled from memory, as in coercion.ERROR_CODES)


def random_cell(rng: random.Random):
    if rng.randrange(3) == 0:
        return rng.choice([rng.uniform(-5, 50), float(rng.randrange(10)), rng.uniform(0, 1e-300)])
    return rng.choice([
        None, math.nan, math.inf, -math.inf, 1e308, -1e308, 5e-324, 10**400, -(10**30), 2**53 + 1, True, False,
        "", " ", "n.d.", "3.5", "#N/A", "#DIV/0!", "#SPILL!", -2146826246, datetime.datetime(2024, 1, 2, 12),
        datetime.date(1900, 1, 1), decimal.Decimal("sNaN"), decimal.Decimal("NaN"), decimal.Decimal("-Infinity"),
        decimal.Decimal("1E+400"), decimal.Decimal("0.25"), "1/x", "1/y^2", rng.randrange(-3, 12),
    ])


def random_range(rng: random.Random, n: int):
    shape = rng.randrange(10)
    if shape == 0:
        return random_cell(rng)  # a single cell where a range belongs
    if shape == 1:
        return [[random_cell(rng) for _ in range(2)] for _ in range(2)]  # a block
    if shape == 2:
        return [[random_cell(rng) for _ in range(n + rng.randrange(-2, 3))]]  # a row, maybe of another size
    good = shape > 4
    return [[rng.uniform(0, 10) if good and rng.random() < 0.8 else random_cell(rng)] for _ in range(n)]


def random_calls(count: int, seed: int) -> list[tuple[str, tuple]]:
    """(function name, arguments) of ``count`` random calls of the family."""
    rng = random.Random(seed)
    names = sorted(degreewise.FUNCTIONS)
    calls = []
    for _ in range(count):
        name = rng.choice(names)
        params = list(inspect.signature(getattr(degreewise, name)).parameters)
        n = rng.randrange(3, 9)
        args = [random_range(rng, n) if p in RANGES else (random_cell(rng) if rng.random() < 0.6 else None)
                for p in params]
        if params[:2] == ["x", "y"] and rng.random() < 0.3:  # standards that mostly work
            xs = [float(rng.choice([1, 2, 3, 4, 5, 6])) for _ in range(n)]
            args[0], args[1] = [[v] for v in xs], [[v * 2 + rng.random()] for v in xs]
        if rng.random() < 0.03:
            args.append(1.0)
        calls.append((name, tuple(args)))
    return calls


def internal(result) -> bool:
    """Whether a result holds an "internal error" cell."""
    rows = result if isinstance(result, list) else [[result]]
    return any(isinstance(v, str) and "internal error" in v for row in rows
               for v in (row if isinstance(row, list) else [row]))


def _com_cell(v):
    """A cell as COM hands it over: no NaN, infinity or number beyond the doubles (the cell shows #NUM!),
    currency only finite, dates as datetimes."""
    if isinstance(v, decimal.Decimal):
        return v if v.is_finite() and abs(v) < 10**15 else NUM
    if type(v) is datetime.date:
        return datetime.datetime(v.year, v.month, v.day)
    if type(v) in (int, float):
        return v if abs(v) < 1e308 and math.isfinite(v) else NUM
    return v


def _com(value):
    if value is None:
        return rt.MISSING
    if isinstance(value, list):
        return rt.ComRange(tuple(tuple(map(_com_cell, r)) if isinstance(r, list) else (_com_cell(r),)
                                 for r in value))
    return _com_cell(value)


def _js(value):
    """A cell as Office.js hands it over: numbers, text, logicals, null; no dates, Decimal or NaN."""
    if isinstance(value, list):
        return [_js(v) for v in value]
    if isinstance(value, (datetime.date, decimal.Decimal)):
        return str(value)
    if isinstance(value, float) and not math.isfinite(value):
        return "#NUM!"
    return value


def as_com(calls):
    return [(name.upper(), tuple(map(_com, args))) for name, args in calls]


def as_js(calls):
    return [(name, tuple(map(_js, args))) for name, args in calls]
