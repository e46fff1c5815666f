"""From cell arguments to a (cached) engine calibration.

Blank x or y skips the pair; everything else that is not a number is a
CellError naming the argument and position. Rows after the last filled one
are cut (a whole-column reference ends where its data ends). A non-blank
``exclude`` cell (TRUE or a reason) takes its standard out of the fit and keeps
it on the record. Calibrations are cached by the content of x, y, weights and
the exclusions and by the max order (never by object identity),
least recently used first out, so that the functions of one sheet share one
factorisation and a changed cell is never served stale.
"""

from __future__ import annotations

from collections import OrderedDict
from dataclasses import dataclass, field

import numpy as np

from . import engine
from .engine.weighting import SCHEMES as WEIGHT_SCHEMES

from .coercion import (ERROR_TEXTS, CellError, Cells, describe, flatten, is_blank, is_omitted, number,
                       numbers_or_blank)

CACHE_SIZE = 128
SCHEMES = tuple(WEIGHT_SCHEMES)
POINTWISE = ("x", "y", "weights")  # engine arguments indexed by the points used


@dataclass(frozen=True)
class Excluded:
    """A standard taken out of the fit: its input position, x and y (nan where not a number) and reason."""

    position: int
    x: float
    y: float
    reason: str


@dataclass(frozen=True)
class Prepared:
    """The usable points of x and y and where they sit in the input ranges."""

    x_cells: Cells
    used: np.ndarray  # input positions of the points used
    x: np.ndarray
    y: np.ndarray
    weights: object  # None, a scheme name or an array over the used points
    key: tuple  # the content: what the calibration depends on
    layout: tuple  # where the points sit in the input and what is recorded of the excluded standards (their
    # positions, values and reasons): what aligned outputs and messages depend on beyond ``key``
    excluded: tuple = ()  # Excluded standards, in input order
    names: dict = field(default_factory=dict)  # {engine argument: its cell argument}: x, y or ref_x, ref_y

    @property
    def n_input(self) -> int:
        return len(self.x_cells.values)

    @property
    def skipped(self) -> int:
        return self.n_input - self.used.size - len(self.excluded)

    def located(self, err: engine.CalibrationError) -> str:
        """The engine's message, the point it blames (``err.argument`` x, y or weights and ``err.index``,
        a point used) named as its cell ("x, row 5 of 12")."""
        if err.index is None or err.argument not in POINTWISE:
            return err.message
        cells = self.x_cells._replace(name=self.names.get(err.argument, err.argument))
        return err.located(cells.where(int(self.used[err.index])))

    def label(self, point: int) -> str:
        """Position of engine point ``point`` in the input range (e.g. 'standard 7 of 24')."""
        return f"standard {int(self.used[point]) + 1} of {self.n_input}"

    def describe_excluded(self, e: Excluded) -> str:
        """'standard 6 of 12, x = 25, y = 0.4: air bubble' (position, values and reason)."""
        values = ", ".join(f"{name} = {v:.6g}" if v == v else f"{name} not a number"
                           for name, v in (("x", e.x), ("y", e.y)))
        return f"standard {e.position + 1} of {self.n_input}, {values}: {e.reason}"


def _weights(weights, x_cells: Cells, used: np.ndarray):
    if is_omitted(weights):
        return None, b""
    single = weights
    while isinstance(single, (list, tuple)) and len(single) == 1:
        single = single[0]
    if isinstance(single, str) and single.strip().upper() not in ERROR_TEXTS:
        key = single.strip().lower().replace(" ", "")
        if key not in SCHEMES:
            raise CellError(f"weights: '{single}' is not a weighting; use one of "
                            + ", ".join(f"'{s}'" for s in SCHEMES) + " or a range of positive numbers")
        return key, key.encode()  # the engine checks that the scheme applies
    cells = flatten(weights, "weights")
    if cells.size != x_cells.size:
        raise CellError(f"weights has {cells.size} cells and x has {x_cells.size}: "
                        "give one weight per row, or one of " + ", ".join(f"'{s}'" for s in SCHEMES))
    cells = cells.padded(max(len(cells.values), len(x_cells.values)))
    w = np.empty(used.size)
    for j, i in enumerate(used):
        v = cells.values[i]
        if is_blank(v):
            raise CellError(f"{cells.where(i)}: the weight is blank for a point that is used; enter a weight")
        why = describe(v)
        if why is not None:
            raise CellError(f"{cells.where(i)}: {why}; enter a positive number")
        w[j] = number(v)
    return w, w.tobytes()  # the engine checks that each is positive


def prepare(x, y, weights=None, exclude=None) -> Prepared:
    """The usable points of x and y (and their weights), or a CellError naming the bad cell."""
    return _prepare(flatten(x, "x"), flatten(y, "y"), weights,
                    None if is_omitted(exclude) else flatten(exclude, "exclude"))


def prepare_named(x, y, weights, names: tuple[str, str]) -> Prepared:
    """``prepare`` for a second set of standards whose arguments have other names (e.g. ref_x, ref_y)."""
    return _prepare(flatten(x, names[0]), flatten(y, names[1]), weights)


def _reasons(cells: Cells | None, size: int) -> dict[int, str]:
    """{input position: reason} of the standards that the ``exclude`` cells take out: TRUE ("no reason
    given") or a text (the reason); blank, FALSE and 0 keep a standard."""
    if cells is None:
        return {}
    if cells.size != size:
        raise CellError(f"exclude has {cells.size} cells and x has {size}: give one cell per standard (TRUE or a "
                        "reason excludes it; blank, FALSE or 0 keeps it)")
    reasons = {}
    for i, v in enumerate(cells.values):
        if is_blank(v) or v is False or (type(v) in (int, float) and v == 0):
            continue
        if v is True:
            reasons[i] = "no reason given"
            continue
        why = describe(v)
        if isinstance(v, str) and why is not None and v.strip().upper() not in ERROR_TEXTS:
            reasons[i] = v.strip()  # any text is the reason
            continue
        if why is None:
            why = f"the number {number(v):g} is not a reason"
        raise CellError(f"{cells.where(i)}: {why}; enter TRUE or a reason to exclude the standard, "
                        "or FALSE, 0 or nothing to keep it")
    return reasons


def _loose_number(v) -> float:
    """An excluded standard's value as recorded: the number, or nan when the cell holds none."""
    return number(v) if not is_blank(v) and describe(v) is None else float("nan")


def _prepare(x_cells: Cells, y_cells: Cells, weights, exclude: Cells | None = None) -> Prepared:
    if x_cells.size != y_cells.size:
        raise CellError(f"{x_cells.name} has {x_cells.size} cells and {y_cells.name} has {y_cells.size}: "
                        "give ranges of the same size")
    reasons = _reasons(exclude, x_cells.size)
    n = max(len(x_cells.values), len(y_cells.values), max(reasons, default=-1) + 1)
    x_cells, y_cells = x_cells.padded(n), y_cells.padded(n)
    excluded = tuple(Excluded(i, _loose_number(x_cells.values[i]), _loose_number(y_cells.values[i]), r)
                     for i, r in reasons.items())
    if reasons:  # excluded cells are recorded, never read as data
        x_cells, y_cells = (c._replace(values=tuple(None if i in reasons else v for i, v in enumerate(c.values)))
                            for c in (x_cells, y_cells))
    xv, x_blank = numbers_or_blank(x_cells)
    yv, y_blank = numbers_or_blank(y_cells)
    skipped = x_blank | y_blank
    if skipped.any():
        used = np.flatnonzero(~skipped)
        xu, yu = xv[used], yv[used]
    else:
        used, xu, yu = np.arange(xv.size), xv, yv
    w, wkey = _weights(weights, x_cells, used)
    record = tuple((e.position, e.reason, e.x.hex(), e.y.hex()) for e in excluded)  # hex: a nan equals itself
    layout = (x_cells.axis, x_cells.size, n, used.tobytes(), record)
    key = (xu.tobytes(), yu.tobytes(), wkey) + ((repr(sorted(reasons.items())),) if reasons else ())
    return Prepared(x_cells, used, xu, yu, w, key, layout, excluded, {"x": x_cells.name, "y": y_cells.name})


class LRU:
    """A small least-recently-used cache."""

    def __init__(self, size: int):
        self.size = size
        self._items: OrderedDict = OrderedDict()

    def get(self, key, make):
        try:
            self._items.move_to_end(key)
            return self._items[key]
        except KeyError:
            value = make()
            self._items[key] = value
            if len(self._items) > self.size:
                self._items.popitem(last=False)
            return value

    def clear(self):
        self._items.clear()


CALIBRATIONS = LRU(CACHE_SIZE)
RESULTS = LRU(4 * CACHE_SIZE)


def clear_caches() -> None:
    """Forget every calibration and result (the next calls compute afresh)."""
    for cache in (CALIBRATIONS, RESULTS):
        cache.clear()


def calibration(prep: Prepared, max_order=None) -> engine.Calibration:
    """The engine calibration of these points, factorised once per content and max order."""
    def make():
        try:
            return engine.Calibration(prep.x, prep.y, max_order=max_order, weights=prep.weights)
        except engine.DataError as err:
            extra = f" ({prep.skipped} of {prep.n_input} rows skipped as blank)" if prep.skipped else ""
            raise CellError(f"{prep.located(err)}{extra}") from None
        except engine.CalibrationError as err:
            raise CellError(prep.located(err)) from None

    return CALIBRATIONS.get((prep.key, max_order), make)
