"""A workbook's calibrations as its cells hold them, for the report and the demo printout.

The workbook is refreshed in memory (``refresh.Refresher``, the computation of
`degreewise refresh`). Each CALIB_* formula that takes standards becomes a
`Table`: its cell, its formula, its own settings in words, and exactly the values
the refresh stored in the cells its result covers (or why it stored none).
Tables on the same standards (x, y, weights, exclude) form one `Section`; their
settings are never blended. Nothing shown as a table is recomputed; the charts,
the only addition, are computed with the settings of one named table
(`Section.chart`). This module needs no plotting or PDF library.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from ..catalogue import FUNCTIONS as CATALOGUE
from ..xlsx.cells import column_letters
from ..xlsx.package import read_package
from . import files
from .formula import Area, Call, Constant
from .audit import Report
from .compute import Refresher, parameters

STANDARDS = ("x", "y", "weights", "exclude")
DATA = ("x", "y")  # shown once, in the section's heading
# each setting's words, and what it is when the formula leaves it empty (the README's defaults)
SETTINGS = {"max_order": ("max order", "default"), "alpha": ("alpha", "0.05 (default)"),
            "rule": ("rule", "stepdown (default)"), "order": ("order", "chosen by the stepdown rule (default)"),
            "level": ("level", "0.95 (default)"), "replicates": ("replicates", "1 (default)"),
            "weights": ("weights", "none"), "exclude": ("exclude", "none"), "blank": ("blank readings", "none"),
            "new_x": ("new x", None), "reading": ("readings", None), "ref_x": ("reference x", None),
            "ref_y": ("reference y", None), "at": ("compared at", "none"), "criteria": ("criteria", None)}
GRID = 161  # points of the curve and band in the report's chart
# tables whose settings say which curve they describe
CHARTED = ("CALIB_COEFS", "CALIB_STATS", "CALIB_PREDICT", "CALIB_INVERSE", "CALIB_RESIDUALS", "CALIB_CHECKS",
           "CALIB_LIMITS", "CALIB_ACCEPTANCE", "CALIB_UNCERTAINTY")


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
class Table:
    """One CALIB_* cell: where, its formula, its settings in words, and what the refresh stored."""

    where: str
    formula: str
    name: str  # CALIB_COEFS
    args: dict  # argument name -> Area, number, text, Constant, Call or None
    settings: list  # (words, value in words)
    rows: list | None  # the stored values of the cells the result covers; None where none were stored
    problem: str | None = None  # why the refresh stored no result (blocked, left alone, failed)

    @property
    def header(self):
        """The table's header row for the functions whose result has none (predict, inverse, residuals)."""
        return CATALOGUE[self.name.lower()] if self.name in HEADERLESS else None

    @property
    def message(self) -> str | None:
        """The one-cell message the function stored instead of a table, if it did."""
        rows = self.rows
        if rows and len(rows) == 1 and len(rows[0]) == 1 and isinstance(rows[0][0], str):
            return rows[0][0]
        return None


HEADERLESS = ("CALIB_PREDICT", "CALIB_INVERSE", "CALIB_RESIDUALS", "CALIB_UNCERTAINTY")


@dataclass
class Section:
    """One calibration: its standards, the tables of the workbook on them, and the charts' data."""

    sheet: str
    args: dict  # the standards' arguments by name
    x: list
    y: list
    x_label: str | None
    y_label: str | None
    tables: list = field(default_factory=list)
    chart: Table | None = None  # the table whose settings the charts use
    grid: list = field(default_factory=list)
    curve: list | None = None  # CALIB_PREDICT rows on the grid, with the chart table's settings
    residuals: list | None = None  # CALIB_RESIDUALS rows with the chart table's settings
    log_x: bool = False  # the standards span more than two decades, or the fit is weighted

    def first(self, name: str) -> Table | None:
        """The first table of function ``name`` that holds values (not a message)."""
        return next((t for t in self.tables if t.name == name and t.rows and t.message is None), None)

    def stat(self, label: str):
        """A row of the first CALIB_STATS table, if the workbook has one."""
        stats = self.first("CALIB_STATS")
        return next((r[1] for r in stats.rows[1:] if r[0] == label), None) if stats else None

    @property
    def ranges(self) -> str:
        parts = [f"x {where(self.args['x'])}", f"y {where(self.args['y'])}"]
        for name in ("weights", "exclude"):
            a = self.args.get(name)
            if a is not None:
                parts.append(f"{name} {where(a) if isinstance(a, Area) else a}")
        return ", ".join(parts)


class Book:
    """A workbook refreshed in memory: its cells as the refresh stores them, and calls evaluated likewise."""

    def __init__(self, path: Path):
        self.path = path
        data, seen = files.read(path)  # a device or a pipe is refused unopened
        self.sha256 = seen.sha256
        _, parts = read_package(data)
        self.refresher = Refresher(parts)
        self.report = Report(path)
        self.refresher.run(self.report)

    def call(self, name: str, sheet: str, **args):
        """CALIB_<name> with these arguments (the rest omitted), evaluated as the refresh evaluates it."""
        full = f"CALIB_{name.upper()}"
        return self.refresher.evaluate(Call(full, tuple(args.get(p) for p in parameters(full))), sheet)

    def block(self, area: Area) -> list:
        """The stored values of ``area``, row by row."""
        sheet = self.refresher.sheet(area.sheet)
        top, bottom = (area.top, area.bottom) if area.top is not None else (1, max(sheet.last_row(), 1))
        return sheet.block(top, bottom, area.left, area.right)

    def cells(self, area: Area) -> list:
        """The values of a one-row or one-column range, in order."""
        return [v for row in self.block(area) for v in row]

    def label(self, area: Area) -> str | None:
        """The text above a column of standards (its header), if there is one."""
        if area.top is None or area.top < 2:
            return None
        value = self.refresher.sheet(area.sheet).value(area.top - 1, area.left)
        return value if isinstance(value, str) else None

    def _words(self, value) -> str:
        """A setting as the formula gives it, in words: a reference with the value it holds."""
        if isinstance(value, Area):
            if (value.top, value.left) == (value.bottom, value.right):
                return f"{where(value)} (= {number(self.block(value)[0][0])})"
            return where(value)
        if isinstance(value, Constant):
            return "{" + ";".join(",".join(number(v) for v in row) for row in value.rows) + "}"
        if isinstance(value, Call):
            return f"the result of {value.name}"
        return number(value)

    def tables(self) -> list[Table]:
        """Every CALIB_* cell with standards, in the workbook's order, with the values the refresh stored."""
        spills = dict(self.report.spills)
        problems = {c: f"{kind}: {why}" for kind, entries in (("blocked", self.report.blocked),
                                                             ("left alone", self.report.left_alone),
                                                             ("not computed", self.report.failed))
                    for c, why in entries}
        out = []
        for f in self.refresher.formulas:
            if f.call is None:
                if f.where in problems:  # a formula the refresh could not read: shown with its reason
                    out.append(Table(f.where, "=" + f.text, "", {}, [], None, problems[f.where]))
                continue
            args = dict(zip(parameters(f.call.name), f.call.args))
            if not isinstance(args.get("x"), Area) or not isinstance(args.get("y"), Area):
                continue
            settings = [(SETTINGS[n][0], self._words(args[n]) if args.get(n) is not None else SETTINGS[n][1])
                        for n in parameters(f.call.name) if n in SETTINGS and n not in DATA
                        and (args.get(n) is not None or SETTINGS[n][1] is not None)]
            problem = problems.get(f.where)
            area = spills.get(f.where, Area(f.sheet, f.row, f.col, f.row, f.col))
            rows = None if problem and not problem.startswith("blocked") else self.block(area)
            out.append(Table(f.where, "=" + f.text, f.call.name, args, settings, rows, problem))
        return out

    def sections(self) -> list[Section]:
        """One section per set of standards (x, y, weights, exclude). A table whose function takes no weights
        (CALIB_WEIGHTING compares the schemes itself) joins the first section on the same x, y and exclude."""
        found: dict[tuple, Section] = {}
        tables = [t for t in self.tables() if t.name]
        own = [t for t in tables if "weights" in parameters(t.name)]
        for t in own + [t for t in tables if "weights" not in parameters(t.name)]:
            key = tuple(t.args.get(n) for n in STANDARDS)
            if "weights" not in parameters(t.name):
                key = next((k for k in found if (k[0], k[1], k[3]) == (key[0], key[1], key[3])), key)
            s = found.get(key)
            if s is None:
                x, y = t.args["x"], t.args["y"]
                s = found[key] = Section(x.sheet, {n: t.args.get(n) for n in STANDARDS}, self.cells(x),
                                         self.cells(y), self.label(x), self.label(y))
            s.tables.append(t)
        for s in found.values():
            self._charts(s)
        return list(found.values())

    def _charts(self, s: Section) -> None:
        """The curve, band and residuals with the settings of the first table that names a curve."""
        s.chart = next((t for t in s.tables if t.name in CHARTED and t.rows and t.message is None), None)
        xs = [v for v in s.x if isinstance(v, (int, float)) and not isinstance(v, bool)]
        if s.chart is None or not xs:
            return
        std = {n: v for n, v in s.args.items() if v is not None}
        order, level = s.chart.args.get("order"), s.chart.args.get("level")
        lo, hi = min(xs), max(xs)
        s.log_x = lo > 0 and (hi / lo > 100 or s.args.get("weights") is not None)
        s.grid = ([lo * (hi / lo) ** (i / (GRID - 1)) for i in range(GRID)] if s.log_x else
                  [lo + (hi - lo) * i / (GRID - 1) for i in range(GRID)])
        curve = self.call("predict", s.sheet, new_x=[[g] for g in s.grid], order=order, level=level, **std)
        s.curve = curve if isinstance(curve, list) and len(curve[0]) > 1 else None
        same = next((t for t in s.tables if t.name == "CALIB_RESIDUALS" and t.args.get("order") == order
                     and t.rows and t.message is None), None)
        residuals = same.rows if same else self.call("residuals", s.sheet, order=order, **std)
        s.residuals = residuals if isinstance(residuals, list) and len(residuals[0]) > 1 else None


def sections(path: Path) -> tuple[list[Section], Book]:
    """The calibrations of the workbook at ``path``, and the refreshed book (its report, hash, cells)."""
    book = Book(path)
    return book.sections(), book


def summary(s: Section) -> list[str]:
    """The lines `degreewise demo` prints for one calibration, read from its tables."""
    xs = [v for v, w in zip(s.x, s.y) if isinstance(v, (int, float)) and isinstance(w, (int, float))]
    lines = [f"  sheet '{s.sheet}': {s.ranges}"]
    if xs:
        lines.append(f"  x: {s.x_label or 'x'}, {len(xs)} points at {len(set(xs))} levels, "
                     f"from {number(min(xs))} to {number(max(xs))}; y: {s.y_label or 'y'}")
    stats = s.first("CALIB_STATS")
    if stats:
        lines.append(f"  {stats.where}: " + "; ".join(f"{k} {v}" for k, v in stats.settings))
        lines.append(f"  chosen order {number(s.stat('order'))}: {s.stat('why this order')}")
        lines += [f"  excluded: {value}" for label, value in stats.rows[1:] if label == "excluded standard"]
    coefs = s.first("CALIB_COEFS")
    if coefs:
        lines.append(f"  coefficients ({coefs.where}):")
        for term, b, se, *_ in coefs.rows[1:]:
            lines.append(f"    {term:<10} {number(b, 10):>16}  (std error {number(se, 3)})")
    if stats:
        lof = s.stat("lack-of-fit p")
        lines.append(f"  residual SD {number(s.stat('residual SD'))}, R² {number(s.stat('R²'), 8)}, "
                     f"lack-of-fit p {p_text(lof) if lof is not None else 'n/a (no replicates)'}")
    limits = s.first("CALIB_LIMITS")
    if limits:
        lines.append(f"  limits in x ({limits.where}; estimates from one calibration, to be confirmed with "
                     "samples near the limit):")
        for method, _, *values, note in limits.rows[1:]:
            if method == "caution" or method is None:
                continue
            given = [f"{name} {number(v, 4)}" for name, v in zip(("decision", "detection", "quantitation"), values)
                     if v is not None]
            lines.append(f"    {method:<17} " + (", ".join(given) if given else f"none: {note}"))
    for t in s.tables:
        if t.name == "CALIB_COMPARE" and t.rows and len(t.rows) > 3 and t.message is None:
            lines.append(f"  compared with an earlier calibration ({t.where}):")
            for item, *_, p, verdict, detail in t.rows[1:4]:
                lines.append(f"    {item:<17} {verdict} (p {p_text(p)}): {detail.split('; ')[0]}")
    for t in s.tables:
        if t.name == "CALIB_ACCEPTANCE" and t.rows and t.message is None:
            criteria = next(r[5] for r in t.rows if r[0] == "criteria")
            failing = [r[0] for r in t.rows if r[5] == "fail"]
            lines.append(f"  acceptance under {criteria} ({t.where}): " + "; ".join(
                f"{r[5]}: {r[6]}" for r in t.rows if r[0] == "verdict"))
            if failing:
                lines.append(f"    failing: {', '.join(failing)}; could exclude: " + "; ".join(
                    f"{r[6].split(':')[0]} ({r[5]})" for r in t.rows if r[0].startswith("could exclude ")))
        if t.name == "CALIB_UNCERTAINTY" and t.rows and t.message is None:
            lines.append(f"  standard uncertainties of the samples ({t.where}; x estimate, u, U = k u):")
            for x, u, _, k, big, _, note in t.rows:
                lines.append(f"    {number(x, 5):>10}  u {number(u, 3)}, U {number(big, 3)} (k = {number(k, 4)})"
                             if x is not None else f"    {note}")
    weighting = s.first("CALIB_WEIGHTING")
    if weighting:
        for scheme, order, *_, picked, note in weighting.rows[1:]:
            if picked:
                lines.append(f"  weighting {scheme} picked (at order {number(order)}; {weighting.where}): "
                             f"{note.removeprefix('picked: ')}")
    return lines
