"""Checks of the engine's inputs, one function per kind: each returns the value in the form the engine
uses, or raises a typed error whose message names the argument, the position and the problem."""

from __future__ import annotations

import math
import operator

import numpy as np

from .errors import DataError, OptionError, OrderError, WeightError

RULES = ("stepdown", "forward", "aicc", "bic", "press")
DEFAULT_RULE = RULES[0]
# the smallest alpha: below it scipy's non-central t (the ISO 11843-2 delta) fails to give a root for some
# degrees of freedom (measured: alpha 1e-5 fails at 1 and 39-44 df, 1e-6 at 1, 30, 31 and many more; 1e-4
# holds for every df from 1 to 5000 and at 1e5 and 1e6)
ALPHA_MIN = 1e-4
DEFAULT_MAX_ORDER = 4


def check_vector(values, name: str, *, flat: bool = False) -> np.ndarray:
    """A float array of finite numbers: one-dimensional as given, or (``flat``) any shape flattened."""
    try:
        a = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise DataError(f"{name} must hold numbers only", argument=name) from None
    if flat:
        a = a.ravel()
    elif a.ndim != 1:
        raise DataError(f"{name} must be one-dimensional, not of shape {a.shape}", argument=name)
    i = first_failing(np.isfinite(a))
    if i is not None:
        raise DataError(f"{name}[{i}] is {float(a[i])!r}: every value must be a finite number", argument=name,
                        index=i)
    return a


def check_pair(x, y) -> tuple[np.ndarray, np.ndarray]:
    """The standards: x and y as ``check_vector`` takes them, one y for every x."""
    x, y = check_vector(x, "x"), check_vector(y, "y")
    if x.size != y.size:
        raise DataError(f"x has {x.size} values and y has {y.size}: give one y for every x", argument="y")
    return x, y


def check_whole(value, name: str) -> int:
    """An int, or a float with a whole value."""
    try:
        return operator.index(value)
    except TypeError:
        if isinstance(value, float) and value.is_integer():
            return int(value)
        raise OrderError(f"{name} must be a whole number, not {_shown(value)}", argument=name) from None


def order_limit(n_points: int, n_distinct: int) -> int:
    """Highest order the data can fit with one residual degree of freedom."""
    return min(n_distinct - 1, n_points - 2)


def check_count(value, name: str) -> int:
    """A whole number of at least 1 (an order or a max order)."""
    k = check_whole(value, name)
    if k < 1:
        raise OrderError(f"{name} must be at least 1, not {k}", argument=name)
    return k


def check_order(order: int, name: str, n: int, m: int) -> None:
    """An order of at least 1 that n points at m distinct x can fit (``order_limit``)."""
    check_count(order, name)
    if order > order_limit(n, m):
        raise OrderError(
            f"{name} {order} needs at least {order + 1} distinct x values and {order + 2} points; "
            f"there are {m} and {n}",
            argument=name,
        )


def check_alpha(alpha, name: str = "alpha") -> float:
    """alpha must lie in [ALPHA_MIN, 0.5)."""
    try:
        a = float(alpha)
    except (TypeError, ValueError):
        a = math.nan
    if not ALPHA_MIN <= a < 0.5:
        raise OptionError(f"{name} must be from {ALPHA_MIN:g} to below 0.5 (for example 0.05), not {_shown(alpha)}",
                          argument=name)
    return a


def check_level(level) -> float:
    """A confidence level strictly between 0 and 1."""
    try:
        v = float(level)
    except (TypeError, ValueError):
        v = math.nan
    if not 0 < v < 1:
        raise OptionError(f"level must be between 0 and 1 (for example 0.95), not {_shown(level)}",
                          argument="level")
    return v


def check_rule(rule) -> str:
    """One of ``RULES``, in any case and with surrounding spaces."""
    key = str(rule).strip().lower()
    if key not in RULES:
        raise OptionError(f"rule '{rule}' is not known; use one of " + ", ".join(f"'{r}'" for r in RULES),
                          argument="rule")
    return key


def check_replicates(replicates, count: int) -> np.ndarray:
    """One whole number of at least 1, or one per reading, as floats (``count`` of them)."""
    if type(replicates) in (int, float) and math.isfinite(replicates) and replicates >= 1 \
            and replicates == int(replicates):
        return np.full(count, float(replicates))
    m = np.atleast_1d(np.asarray(replicates, dtype=float)).ravel()
    one = m.size == 1
    if m.size != count and not one:
        raise OptionError(f"replicates has {m.size} values for {count} readings; give one number or one per reading",
                          argument="replicates")
    i = first_failing(np.isfinite(m) & (m >= 1) & (m == np.round(m)))
    if i is not None:  # one value for every reading is named as given; one of several by its position
        name, index = ("replicates", None) if one else (f"replicates[{i}]", i)
        raise OptionError(f"{name} must be a whole number of at least 1, not {_shown(m[i])}",
                          argument="replicates", index=index)
    return np.full(count, m[0]) if one else m


def check_weights(weights, count: int) -> np.ndarray:
    """Weights given as values: one positive finite number per point (``count`` of them), as floats."""
    w = np.asarray(weights, dtype=float).ravel()
    if w.size != count:
        raise WeightError(f"weights has {w.size} values but there are {count} points; give one weight per point",
                          argument="weights")
    return positive_weights(w)


def check_scheme_base(key: str, var: str, base: np.ndarray) -> None:
    """The weights of scheme ``key`` are a power of ``var`` (x, or y or its fitted value): every one > 0."""
    i = first_failing(base > 0)
    if i is not None:
        raise WeightError(f"weights '{key}' need every {var} > 0, but {var}[{i}] is {float(base[i]):g}",
                          argument=var, index=i)


def positive_weights(w: np.ndarray, verb: str = "is") -> np.ndarray:
    """w, when each weight is a positive finite number; else the message names the first that is not, with
    ``verb`` ("is" for weights as given, "works out as" for a scheme's)."""
    i = first_failing(np.isfinite(w) & (w > 0))
    if i is not None:
        raise WeightError(f"weights[{i}] {verb} {_shown(w[i])}: every weight must be a positive finite number",
                          argument="weights", index=i)
    return w


def _shown(value) -> str:
    """A value in a message: a number as the sheet shows it (5, 0.7, 1e-21), anything else as its repr."""
    return f"{value:g}" if isinstance(value, (int, float, np.floating)) and not isinstance(value, bool) else repr(value)


def first_failing(ok: np.ndarray) -> int | None:
    """The position of the first value that fails a check (``ok`` False there), or None."""
    if ok.all():  # the usual case, cheaper than a search
        return None
    return int(np.flatnonzero(~ok)[0])


CRITERIA_NUMBERS = ("tolerance %", "tolerance at the lowest level %", "minimum % passing", "minimum levels")


def check_criteria_numbers(values) -> tuple[float, float, float, int]:
    """An acceptance set's own numbers, in ``CRITERIA_NUMBERS``' order (nan: not given): a tolerance % above 0
    (required), a lowest-level tolerance % above 0 (default: the tolerance), a minimum % passing from 1 to 100
    (percent, not a fraction: 75 for 75 %), a minimum number of levels of at least 2."""
    v = [float(a) for a in values] + [math.nan] * (len(CRITERIA_NUMBERS) - len(values))
    if len(v) > len(CRITERIA_NUMBERS):
        raise OptionError(f"criteria has {len(v)} numbers; give at most {len(CRITERIA_NUMBERS)}: "
                          + ", ".join(CRITERIA_NUMBERS), argument="criteria")
    tolerance, lowest, passing, levels = v
    for i, (ok, what) in enumerate((
            (tolerance > 0, "must be a number above 0 (15 for ±15 %)"),
            (lowest != lowest or lowest > 0, "must be above 0 (20 for ±20 %), or empty for the tolerance"),
            (passing != passing or 1 <= passing <= 100,
             "is in percent, from 1 to 100 (75 for 75 %; a cell formatted as % holds 0.75, which would read as "
             "0.75 %)"),
            (levels != levels or (levels >= 2 and levels == int(levels)),
             "must be a whole number of at least 2, or empty"))):
        if not ok:
            raise OptionError(f"criteria[{i}]: the {CRITERIA_NUMBERS[i]} {_shown(v[i])} {what}", argument="criteria",
                              index=i)
    return tolerance, lowest if lowest == lowest else tolerance, passing, 0 if levels != levels else int(levels)


def default_max_order(n_points: int, n_distinct: int) -> int:
    """max(min(4, m - 2, n - 5), min(2, m - 2, n - 3)) for n points at m distinct x.

    The largest model keeps one distinct x beyond its coefficients (so lack of fit stays testable where x
    repeats) and at least 4 residual degrees of freedom, up to order 4; with fewer than 9 points a
    quadratic is still offered while it leaves 2 residual degrees of freedom. Below 1 the data are too
    few to choose an order.
    """
    return max(min(DEFAULT_MAX_ORDER, n_distinct - 2, n_points - 5), min(2, n_distinct - 2, n_points - 3))


def distinct(x: np.ndarray) -> tuple[np.ndarray, np.ndarray, int]:
    """A stable sort of x, the index of each point's distinct x value, and the number of distinct values."""
    by_x = np.argsort(x, kind="stable")
    sorted_x = x[by_x]
    starts = np.empty(x.size, dtype=bool)
    starts[0] = True
    np.not_equal(sorted_x[1:], sorted_x[:-1], out=starts[1:])
    inverse = np.empty(x.size, dtype=np.intp)
    inverse[by_x] = np.cumsum(starts) - 1
    return by_x, inverse, int(inverse[by_x[-1]]) + 1


def check_standards(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray, int]:
    """``distinct(x)`` of at least 3 points at 2 or more distinct x values, with a response that changes."""
    n = x.size
    if n < 3:
        raise DataError(f"only {n} point{'s' if n != 1 else ''}: a calibration curve needs at least 3", argument="x")
    by_x, inverse, m = distinct(x)
    if m == 1:
        raise DataError(f"all {n} x values are equal ({float(x[0])!r}): a curve needs at least 2 distinct x values",
                        argument="x")
    if y.min() == y.max():
        raise DataError(f"all {n} y values are equal ({float(y[0])!r}): the response does not change with x, "
                        "so there is no curve to fit", argument="y")
    return by_x, inverse, m


def check_max_order(max_order, n: int, m: int) -> int:
    """``max_order`` checked against n points at m distinct x, or the default (``default_max_order``)."""
    if max_order is not None:
        k = check_whole(max_order, "max_order")
        check_order(k, "max_order", n, m)
        return k
    k = default_max_order(n, m)
    if k < 1:
        raise OrderError(f"{n} points at {m} distinct x values are too few to choose an order: "
                         "it takes at least 3 distinct x values and 4 points", argument="max_order")
    return k
