"""The calibrations of a workbook, each with every table computed through the CALIB_* functions.

A calibration is one distinct set of standards (x, y, weights and, where the
functions take it, exclude) that the workbook's CALIB_* formulas use. The
workbook is refreshed in memory first (``refresh.Refresher``), so a setting
that refers to a CALIB_* cell (an order taken from CALIB_ORDER) reads its
refreshed value; then each table is evaluated as a CALIB_* call with the
calibration's settings, through the same path as the refresh. This module
needs no plotting or PDF library: `degreewise demo` prints from it and the
report draws from it.
"""

from __future__ import annotations

import inspect
from dataclasses import dataclass, field
from pathlib import Path

from .. import engine
from ..xlsx.cells import column_letters
from ..xlsx.package import read_package
from .formula import Area, Call
from .refresh import CALLABLE, Refresher, Report

STANDARDS = ("x", "y", "weights", "exclude")
SETTINGS = ("rule", "alpha", "max_order", "order", "level")
GRID = 161  # points of the curve and band in the report's chart


def _parameters(name: str) -> tuple[str, ...]:
    return tuple(inspect.signature(CALLABLE[name]).parameters)


def where(area: Area) -> str:
    """A range as the spreadsheet writes it, with its sheet quoted: 'Curved'!A2:A22."""
    top = "" if area.top is None else area.top
    bottom = "" if area.bottom is None else area.bottom
    corner = f"{column_letters(area.left)}{top}"
    if (area.top, area.left) != (area.bottom, area.right):
        corner += f":{column_letters(area.right)}{bottom}"
    sheet = area.sheet.replace("'", "''")
    return f"'{sheet}'!{corner}"


def number(v, digits: int = 6) -> str:
    """A table cell as the report prints it: numbers to ``digits`` significant digits, blanks empty."""
    if v is None:
        return ""
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        return str(v)
    if float(v).is_integer() and abs(v) < 1e9:
        return str(int(v))
    return f"{v:.{digits}g}"


def p_text(p) -> str:
    """A p-value in prose, always the same way: three decimals, or two significant digits below 0.001."""
    if p is None:
        return "n/a"
    return f"{p:.3f}" if p >= 0.001 else f"{p:.1e}"


@dataclass
class Section:
    """One calibration: where its standards are, its settings, and every table the functions return."""

    sheet: str
    args: dict  # the standards' arguments (Area, text or None) by parameter name
    settings: dict  # rule, alpha, max_order, order, level as the formulas give them (Area, number or None)
    x: list
    y: list
    x_label: str | None
    y_label: str | None
    tables: dict = field(default_factory=dict)
    log_x: bool = False  # the standards span more than two decades, or the fit is weighted: log x axes
    readbacks: list = field(default_factory=list)  # (reading range, readings, rows of CALIB_INVERSE)
    limits_args: dict = field(default_factory=dict)  # blank and replicates of the workbook's CALIB_LIMITS
    weighting: bool = False  # the workbook compares weighting schemes for these standards (CALIB_WEIGHTING)
    comparisons: list = field(default_factory=list)  # (where, rows of CALIB_COMPARE) against earlier calibrations

    @property
    def order(self):
        """The order of the curve the tables describe (CALIB_STATS's), else CALIB_ORDER's answer or message."""
        chosen = self.stat("order")
        return chosen if chosen is not None else self.tables["order"]

    def stat(self, label: str):
        return next((r[1] for r in self.tables["stats"][1:] if r[0] == label), None)

    @property
    def ranges(self) -> str:
        parts = [f"x {where(self.args['x'])}", f"y {where(self.args['y'])}"]
        for name in ("weights", "exclude"):
            a = self.args.get(name)
            if a is not None:
                parts.append(f"{name} {where(a) if isinstance(a, Area) else repr(a)}")
        return ", ".join(parts)

    def setting_rows(self) -> list[tuple[str, str]]:
        """Every setting that decided the tables, in words (defaults named as such)."""
        s = self.settings
        orders = self.tables["orders"]
        max_order = len(orders) - 1 if isinstance(orders, list) and len(orders) > 1 else None
        order = s.get("order")

        def given(name: str, default: str) -> str:
            v = s.get(name)
            return default + " (default)" if v is None else where(v) if isinstance(v, Area) else number(v)

        return [
            ("rule", given("rule", engine.DEFAULT_RULE)),
            ("alpha", given("alpha", "0.05")),
            ("max order", (number(max_order) + ("" if s.get("max_order") is not None else " (default)"))
             if max_order else "n/a"),
            ("order", f"{number(self.order)} from {where(order)}" if isinstance(order, Area)
             else number(order) if order is not None else f"{number(self.order)}, chosen by the rule"),
            ("level", given("level", "0.95")),
            ("weights", str(self.stat("weights") or "none")),
            ("exclude", where(self.args["exclude"]) if isinstance(self.args.get("exclude"), Area) else "none"),
        ]


class Book:
    """A workbook refreshed in memory, able to evaluate CALIB_* calls with its refreshed values."""

    def __init__(self, path: Path):
        self.path = path
        _, parts = read_package(path)
        self.refresher = Refresher(parts)
        self.report = Report(path)
        self.refresher.run(self.report)

    def call(self, name: str, sheet: str, **args):
        """CALIB_<name> with these arguments (the rest omitted), evaluated as the refresh evaluates it."""
        full = f"CALIB_{name.upper()}"
        return self.refresher.evaluate(Call(full, tuple(args.get(p) for p in _parameters(full))), sheet)

    def cells(self, area: Area) -> list:
        """The values of a one-row or one-column range, in order."""
        sheet = self.refresher.sheet(area.sheet)
        top, bottom = (area.top, area.bottom) if area.top is not None else (1, max(sheet.max_row, 1))
        return [sheet.values.get((r, c)) for r in range(top, bottom + 1) for c in range(area.left, area.right + 1)]

    def label(self, area: Area) -> str | None:
        """The text above a column of standards (its header), if there is one."""
        if area.top is None or area.top < 2:
            return None
        value = self.refresher.sheet(area.sheet).values.get((area.top - 1, area.left))
        return value if isinstance(value, str) else None

    def sections(self) -> list[Section]:
        found: dict[tuple, Section] = {}
        compared = set()  # x, y, exclude of CALIB_WEIGHTING formulas: they join the calibrations of those standards
        for f in self.refresher.formulas:
            if f.call is None or f.call.name not in CALLABLE:
                continue
            args = dict(zip(_parameters(f.call.name), f.call.args))
            if not isinstance(args.get("x"), Area) or not isinstance(args.get("y"), Area):
                continue
            if f.call.name == "CALIB_WEIGHTING":  # it takes no weights: it compares them
                compared.add((args["x"], args["y"], args.get("exclude")))
                continue
            key = tuple(args.get(name) for name in STANDARDS)
            s = found.get(key)
            if s is None:
                x, y = args["x"], args["y"]
                s = found[key] = Section(f.sheet, {n: args.get(n) for n in STANDARDS}, {}, self.cells(x),
                                         self.cells(y), self.label(x), self.label(y))
            for name in SETTINGS:
                if args.get(name) is not None:
                    s.settings.setdefault(name, args[name])
            if f.call.name == "CALIB_INVERSE" and isinstance(args.get("reading"), Area):
                s.readbacks.append((args["reading"], f))
            if f.call.name == "CALIB_COMPARE":
                s.comparisons.append(f)
            if f.call.name == "CALIB_LIMITS":
                s.limits_args = {n: args[n] for n in ("blank", "replicates") if args.get(n) is not None}
        out = list(found.values())
        for s in out:
            s.weighting = (s.args["x"], s.args["y"], s.args.get("exclude")) in compared
            self._compute(s)
        return out

    def _compute(self, s: Section) -> None:
        std = {n: v for n, v in s.args.items() if v is not None}
        st = s.settings
        one = dict(std, order=st.get("order"))
        t = s.tables
        t["order"] = self.call("order", s.sheet, max_order=st.get("max_order"), alpha=st.get("alpha"),
                               rule=st.get("rule"), **std)
        t["orders"] = self.call("orders", s.sheet, max_order=st.get("max_order"), alpha=st.get("alpha"), **std)
        t["seqf"] = self.call("seqf", s.sheet, max_order=st.get("max_order"), **std)
        t["coefs"] = self.call("coefs", s.sheet, level=st.get("level"), **one)
        t["stats"] = self.call("stats", s.sheet, **one)
        t["checks"] = self.call("checks", s.sheet, alpha=st.get("alpha"), **one)
        t["residuals"] = self.call("residuals", s.sheet, **one)
        t["limits"] = self.call("limits", s.sheet, alpha=st.get("alpha"), **s.limits_args, **one)
        if s.weighting:
            t["weighting"] = self.call("weighting", s.sheet, x=std["x"], y=std["y"], order=st.get("order"),
                                       alpha=st.get("alpha"), exclude=std.get("exclude"))
        xs = [v for v in s.x if isinstance(v, (int, float)) and not isinstance(v, bool)]
        if xs:
            lo, hi = min(xs), max(xs)
            s.log_x = lo > 0 and (hi / lo > 100 or s.args.get("weights") is not None)
            if s.log_x:
                grid = [lo * (hi / lo) ** (i / (GRID - 1)) for i in range(GRID)]
            else:
                grid = [lo + (hi - lo) * i / (GRID - 1) for i in range(GRID)]
            t["grid"] = grid
            t["predict"] = self.call("predict", s.sheet, new_x=[[g] for g in grid], level=st.get("level"), **one)
        s.readbacks = [(area, self.cells(area), self.refresher.evaluate(f.call, f.sheet)) for area, f in s.readbacks]
        s.comparisons = [(f.where, self.refresher.evaluate(f.call, f.sheet)) for f in s.comparisons]


def sections(path: Path) -> tuple[list[Section], Report]:
    """The calibrations of the workbook at ``path``, and what its in-memory refresh reported."""
    book = Book(path)
    return book.sections(), book.report


def summary(s: Section) -> list[str]:
    """The lines `degreewise demo` prints for one calibration."""
    xs = [v for v, w in zip(s.x, s.y) if isinstance(v, (int, float)) and isinstance(w, (int, float))]
    lines = [f"  sheet '{s.sheet}': {s.ranges}"]
    if xs:
        lines.append(f"  x: {s.x_label or 'x'}, {len(xs)} points at {len(set(xs))} levels, "
                     f"from {number(min(xs))} to {number(max(xs))}; y: {s.y_label or 'y'}")
    lines.append("  settings: " + "; ".join(f"{k} {v}" for k, v in s.setting_rows()))
    lines.append(f"  chosen order {number(s.order)}: {s.stat('why this order')}")
    stats = s.tables["stats"]
    for label, value in stats[1:] if isinstance(stats, list) else ():
        if label == "excluded standard":
            lines.append(f"  excluded: {value}")
    coefs = s.tables["coefs"]
    if isinstance(coefs, list) and len(coefs) > 1:
        for term, b, se, *_ in coefs[1:]:
            lines.append(f"    {term:<10} {number(b, 10):>16}  (std error {number(se, 3)})")
    lof = s.stat("lack-of-fit p")
    lines.append(f"  residual SD {number(s.stat('residual SD'))}, R² {number(s.stat('R²'), 8)}, "
                 f"lack-of-fit p {p_text(lof) if lof is not None else 'n/a (no replicates)'}")
    limits = s.tables.get("limits")
    if isinstance(limits, list) and len(limits) > 1:
        lines.append("  limits in x (estimates from one calibration, to be confirmed with samples near the limit):")
        for method, _, *values, note in limits[1:]:
            if method == "caution":
                continue
            given = [f"{name} {number(v, 4)}" for name, v in zip(("decision", "detection", "quantitation"), values)
                     if v is not None]
            lines.append(f"    {method:<17} " + (", ".join(given) if given else f"none: {note}"))
    for where, rows in s.comparisons:
        if isinstance(rows, list) and len(rows) > 3:
            lines.append(f"  compared with an earlier calibration ({where}):")
            for item, *_, p, verdict, detail in rows[1:4]:
                lines.append(f"    {item:<17} {verdict} (p {p_text(p)}): {detail.split('; ')[0]}")
    weighting = s.tables.get("weighting")
    if isinstance(weighting, list):
        for scheme, order, *_, picked, note in weighting[1:]:
            if picked:
                lines.append(f"  weighting {scheme} picked (at order {order}): {note.removeprefix('picked: ')}")
    return lines

