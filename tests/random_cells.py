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


def _usable(rng: random.Random, name: str, n: int, xs: list):
    """A value the argument ``name`` usually gets (None for an optional left empty)."""
    if name == "x":
        return [[v] for v in xs]
    if name == "y":
        return [[0.2 + 2 * v + 0.01 * v * v + rng.gauss(0, 0.05)] for v in xs]
    if name in ("new_x", "reading", "at", "blank"):
        return [[rng.uniform(0, 12)] for _ in range(rng.randrange(1, 4))]
    if name in ("ref_x", "ref_y"):
        return [[v] for v in xs] if name == "ref_x" else [[0.1 + 2.1 * v + rng.gauss(0, 0.05)] for v in xs]
    if name == "weights" and rng.random() < 0.3:
        return rng.choice(["1/x", "1/x^2", "1/y", "1/y^2", [[rng.uniform(0.5, 2)] for _ in range(n)]])
    if name == "exclude" and rng.random() < 0.3:
        return [["bubble" if rng.random() < 0.2 else None] for _ in range(n)]
    if name == "criteria":
        return rng.choice(["ICH M10 chromatographic", "ICH M10 ligand binding", "relative standard error",
                           "levels per order", [[15.0], [20.0], [75.0], [4.0]]])
    if name == "name":
        return rng.choice(["predict", "checks", "inverse"])
    return None


def _spoiled(rng: random.Random, value, n: int):
    """value with one thing wrong: a random cell in a range or in place of an option, or another shape."""
    if isinstance(value, list) and value and all(value) and rng.random() < 0.7:
        rows = [list(r) for r in value]
        rows[rng.randrange(len(rows))][0] = random_cell(rng)
        return rows
    return rng.choice([
        random_cell(rng), [[random_cell(rng) for _ in range(2)] for _ in range(2)],
        [[random_cell(rng) for _ in range(n + rng.randrange(-2, 3))]], [], [[]],
    ])


def random_calls(count: int, seed: int) -> list[tuple[str, tuple]]:
    """(function name, arguments) of ``count`` random calls of the family: usable arguments (3 to 12
    standards, often replicated) with 0 to 3 of them spoiled, and now and then one argument too many."""
    rng = random.Random(seed)
    names = sorted(degreewise.FUNCTIONS)
    calls = []
    for _ in range(count):
        name = rng.choice(names)
        params = list(inspect.signature(getattr(degreewise, name)).parameters)
        n = rng.randrange(3, 13)
        levels = [rng.choice([0.0, 0.5, 1.0, 2.0, 5.0, 10.0, 20.0]) for _ in range(rng.randrange(2, 8))]
        xs = [rng.choice(levels) for _ in range(n)]
        args = [_usable(rng, p, n, xs) for p in params]
        for _ in range(rng.choice([0, 1, 1, 1, 2, 3]) if args else 0):
            i = rng.randrange(len(args))
            args[i] = _spoiled(rng, args[i], n)
        if rng.random() < 0.02:
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
    if value in ([], [[]]):  # no range has no cells: the nearest is one blank cell
        return None
    if isinstance(value, list):
        return rt.ComRange(tuple(tuple(map(_com_cell, r)) if isinstance(r, list) else (_com_cell(r),)
                                 for r in value))
    return _com_cell(value)


def _js(value):
    """A cell as Office.js hands it over: numbers, text, logicals, null; no dates, Decimal or NaN."""
    if value in ([], [[]]):  # no range has no cells: the nearest is one blank cell
        return [[None]]
    if isinstance(value, list):
        return [_js(v) for v in value]
    if isinstance(value, (datetime.date, decimal.Decimal)):
        return str(value)
    if isinstance(value, float) and not math.isfinite(value):
        return "#NUM!"
    return value


def _declared(name: str, args: tuple) -> tuple:
    """The arguments a runtime passes: the spreadsheet itself refuses a call with more than the function
    declares (the VBA wrapper and the Office.js registration fix their number)."""
    return args[:len(inspect.signature(getattr(degreewise, name)).parameters)]


def as_com(calls):
    return [(name.upper(), tuple(map(_com, _declared(name, args)))) for name, args in calls]


def as_js(calls):
    return [(name, tuple(map(_js, _declared(name, args)))) for name, args in calls]
