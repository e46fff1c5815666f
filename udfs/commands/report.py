"""`degreewise report`: a printable PDF per workbook, one section per calibration.

Every table is a CALIB_* cell of the workbook with the values the refresh stores
in it (``sections``); the charts, the only addition, say whose settings they use. The document is laid out with
reportlab's page-layout engine (Platypus: paragraphs wrap, tables split between
pages with their header row repeated, page templates for the footer) and the
charts are drawn with matplotlib (its object interface, no global plotting
state), both long-maintained libraries. They are the optional extra
``degreewise[report]``, which the worksheet functions never import. Text is set
in DejaVu Sans, the font matplotlib ships, so that every character of the
functions' words prints and the charts match the text.
"""

from __future__ import annotations

import io
import time
from pathlib import Path
from xml.sax.saxutils import escape

import matplotlib
from matplotlib.figure import Figure
from matplotlib.ticker import LogLocator, NullFormatter
from reportlab.lib import colors
from reportlab.lib.enums import TA_RIGHT
from reportlab.lib.pagesizes import A4, LETTER
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfbase.ttfonts import TTFont
from reportlab.pdfgen.canvas import Canvas
from reportlab.platypus import Image, PageBreak, Paragraph, SimpleDocTemplate, Spacer, Table, TableStyle

from .. import VERSION, functions
from ..catalogue import CAUTION
from ..xlsx.package import PackageError
from ..workbook import files
from ..workbook.formula import Area, Constant
from ..workbook.sections import Section, number, sections
from ..workbook.sections import Table as CellTable
from .refresh import workbooks

PAPER = {"a4": A4, "letter": LETTER}
MARGIN = 16 * mm
FONT, BOLD = "DejaVuSans", "DejaVuSans-Bold"
CAUTION_TEXT = ("Degreewise supports, and does not replace, method validation under the laboratory's quality "
                "system and the standards that apply to its work. Every result in this report must be reviewed "
                "by qualified staff before it is used.")
SIGN_OFF = ("prepared by", "reviewed by")  # blank lines for names, signatures and dates (common practice)
HEADER_FILL = colors.HexColor("#dde5ee")
STANDARD_COLOUR, EXCLUDED_COLOUR, CURVE_COLOUR = "#1f4e79", "#c0392b", "#2e7d32"


def _fonts() -> None:
    folder = Path(matplotlib.get_data_path()) / "fonts" / "ttf"
    for name in (FONT, BOLD):
        if name not in pdfmetrics.getRegisteredFontNames():
            pdfmetrics.registerFont(TTFont(name, str(folder / f"{name}.ttf")))
    pdfmetrics.registerFontFamily(FONT, normal=FONT, bold=BOLD, italic=FONT, boldItalic=BOLD)


def _style(name: str, size: float, bold: bool = False, **kw) -> ParagraphStyle:
    return ParagraphStyle(name, fontName=BOLD if bold else FONT, fontSize=size, leading=size * 1.25, **kw)


class _Styles:
    def __init__(self):
        self.title = _style("title", 15, True, spaceAfter=4)
        self.h1 = _style("h1", 12.5, True, spaceBefore=2, spaceAfter=4, keepWithNext=1)
        self.h2 = _style("h2", 10, True, spaceBefore=8, spaceAfter=3, keepWithNext=1)
        self.body = _style("body", 8.5, spaceAfter=3)
        self.formula = _style("formula", 8, spaceAfter=2, textColor=colors.HexColor("#333333"))
        self.caution = _style("caution", 8.5, True, borderColor=colors.HexColor("#b03a2e"), borderWidth=0.8,
                              borderPadding=5, spaceBefore=6, spaceAfter=10)


def _cell(v, size: float, bold: bool, right: bool, digits: int = 6) -> Paragraph:
    style = _style(f"c{size}{bold}{right}", size, bold, alignment=TA_RIGHT if right else 0)
    return Paragraph(escape(number(v, digits)), style)


def _words(text: str) -> list[str]:
    return text.split() or [""]


def _table(rows, width: float, wrap=(), digits=None, size: float = 7.5) -> Table:
    """A table that fits ``width``: each column as wide as its widest entry (header words may wrap), the
    ``wrap`` columns sharing what is left (the font shrinks, down to 6 pt, until each of them gets 70 pt
    or, without them, until the table fits); the header row repeats on every page the table spans."""
    digits = digits or {}
    ncol = max(len(r) for r in rows)
    rows = [list(r) + [None] * (ncol - len(r)) for r in rows]
    while True:
        fixed = []
        for j in range(ncol):
            body = [pdfmetrics.stringWidth(number(r[j], digits.get(j, 6)), FONT, size) for r in rows[1:]]
            head = [pdfmetrics.stringWidth(w, BOLD, size) for w in _words(str(rows[0][j] or ""))]
            fixed.append(max(body + head) + 6)
        free = width - sum(w for j, w in enumerate(fixed) if j not in wrap)
        if (free >= 70 * len(wrap) if wrap else free >= 0) or size <= 6:
            break
        size -= 0.5
    widths = list(fixed)
    if wrap and sum(fixed) > width:
        share = sum(fixed[j] for j in wrap)
        for j in wrap:
            widths[j] = max(free, 0) * fixed[j] / share
    numeric = [all(isinstance(r[j], (int, float)) or r[j] is None for r in rows[1:]) for j in range(ncol)]

    def right(i, j, v):  # numbers to the right, and the header over a column of numbers
        return numeric[j] if i == 0 else isinstance(v, (int, float)) and not isinstance(v, bool)

    cells = [[_cell(v, size, i == 0, right(i, j, v), digits.get(j, 6)) for j, v in enumerate(r)]
             for i, r in enumerate(rows)]
    t = Table(cells, colWidths=widths, repeatRows=1, hAlign="LEFT")
    style = [("VALIGN", (0, 0), (-1, -1), "TOP"), ("LEFTPADDING", (0, 0), (-1, -1), 2),
             ("RIGHTPADDING", (0, 0), (-1, -1), 2), ("TOPPADDING", (0, 0), (-1, -1), 1),
             ("BOTTOMPADDING", (0, 0), (-1, -1), 1.5), ("LINEBELOW", (0, -1), (-1, -1), 0.4, colors.grey),
             ("BACKGROUND", (0, 0), (-1, 0), HEADER_FILL), ("LINEBELOW", (0, 0), (-1, 0), 0.6, colors.black)]
    style += [("BACKGROUND", (0, i), (-1, i), colors.HexColor("#f4f6f8")) for i in range(2, len(rows), 2)]
    t.setStyle(TableStyle(style))
    return t


# each function's table in the report: its title, the columns that wrap, the significant digits of others
TITLES = {
    "CALIB_ORDER": ("Chosen order", (), {}),
    "CALIB_ORDERS": ("Statistics of every order", (11,), {}),
    "CALIB_SEQF": ("Sequential (Type I) table", (), {}),
    "CALIB_COEFS": ("Coefficients (raw powers of x, in the units of x and y)", (), {1: 10}),
    "CALIB_STATS": ("Statistics of the curve", (1,), {}),
    "CALIB_PREDICT": ("Predicted responses", (6,), {}),
    "CALIB_INVERSE": ("Samples read back", (4,), {}),
    "CALIB_RESIDUALS": ("Back-calculated standards", (9,), {}),
    "CALIB_CHECKS": ("Checks of the curve", (4,), {}),
    "CALIB_COMPARE": ("Compared with an earlier calibration", (11,), {1: 5, 2: 5, 3: 4, 4: 4, 5: 4, 6: 4, 9: 3}),
    "CALIB_LIMITS": ("Detection and quantitation limits", (5,), {}),
    "CALIB_WEIGHTING": ("Weighting schemes compared", (6,), {}),
    "CALIB_ACCEPTANCE": ("Acceptance of the run under a criteria set", (6,), {}),
    "CALIB_UNCERTAINTY": ("Standard uncertainty of the samples read back", (7,), {}),
}
# headerless tables get the values they were computed for as a first column (cells of the workbook too)
INPUTS = {"CALIB_PREDICT": ("new_x", "new x"), "CALIB_INVERSE": ("reading", "reading"),
          "CALIB_UNCERTAINTY": ("reading", "reading")}


def _numbers(values):
    return [v if isinstance(v, (int, float)) and not isinstance(v, bool) else None for v in values]


def _chart_png(draw, width: float, height: float) -> Image:
    fig = Figure(figsize=(width / 72, height / 72), dpi=200, layout="constrained")
    draw(fig.add_subplot())
    buf = io.BytesIO()
    fig.savefig(buf, format="png")
    buf.seek(0)
    return Image(buf, width=width, height=height)


def _points(s: Section, values) -> tuple[list, list]:
    """(x, value) of the standards that have both, split into those fitted and those excluded (whose
    residuals note says "excluded")."""
    notes = [r[7] if len(r) > 7 else None for r in s.residuals] if s.residuals else [None] * len(s.x)
    kept, gone = [], []
    for x, v, note in zip(_numbers(s.x), _numbers(values), notes):
        if x is not None and v is not None:
            (gone if str(note or "").startswith("excluded") else kept).append((x, v))
    return kept, gone


def _plot_points(ax, kept, gone) -> None:
    if kept:
        ax.plot(*zip(*kept), "o", ms=4, color=STANDARD_COLOUR, label="standards")
    if gone:
        ax.plot(*zip(*gone), "x", ms=6, mew=1.5, color=EXCLUDED_COLOUR, label="excluded (not fitted)")


def _finish(ax, s: Section, title: str, y_label: str) -> None:
    if s.log_x:
        ax.set_xscale("log")
        ax.xaxis.set_major_locator(LogLocator(numticks=6))  # decades only: labels never run together
        ax.xaxis.set_minor_formatter(NullFormatter())
    ax.set_xlabel(s.x_label or "x", fontsize=7)
    ax.set_ylabel(y_label, fontsize=7)
    ax.set_title(title, fontsize=8)
    ax.tick_params(labelsize=6.5)
    ax.grid(True, lw=0.3, alpha=0.6)
    ax.legend(fontsize=6, loc="best", frameon=False)


def _curve_chart(s: Section, width: float, height: float) -> Image:
    level = s.chart.args.get("level")
    lev = number(level * 100 if isinstance(level, (int, float)) else 95)
    kept, gone = _points(s, s.y)

    def draw(ax):
        lower = _numbers(r[3] for r in s.curve)
        ax.fill_between(s.grid, lower, _numbers(r[4] for r in s.curve), color=CURVE_COLOUR, alpha=0.15, lw=0,
                        label=f"{lev} % prediction band")
        ax.plot(s.grid, _numbers(r[0] for r in s.curve), color=CURVE_COLOUR, lw=1.4, label="fitted curve")
        _plot_points(ax, kept, gone)
        if s.log_x and all(v is not None and v > 0 for v in [y for _, y in kept + gone] + lower):
            ax.set_yscale("log")
        _finish(ax, s, "standards, fitted curve, prediction band", s.y_label or "y")

    return _chart_png(draw, width, height)


def _residual_chart(s: Section, width: float, height: float) -> Image:
    """Residuals against x; for a weighted fit the deviation % of the back-calculated x (raw residuals
    fan out by design there). An excluded standard is drawn apart and does not set the scale."""
    weighted = s.args.get("weights") is not None
    column, label = (6, "deviation of back-calculated x (%)") if weighted else (1, f"residual ({s.y_label or 'y'})")
    kept, gone = _points(s, [r[column] for r in s.residuals])

    def draw(ax):
        _plot_points(ax, kept, [])
        if kept:
            low, high = min(v for _, v in kept), max(v for _, v in kept)
            pad = 0.15 * (high - low or abs(high) or 1.0)
            ax.set_ylim(min(low, 0) - pad, max(high, 0) + pad)
            outside = [(x, min(max(v, low - pad / 2), high + pad / 2)) for x, v in gone]
            if outside:  # at the edge of the plot, marked: its value is in the table
                ax.plot(*zip(*outside), "x", ms=6, mew=1.5, color=EXCLUDED_COLOUR,
                        label="excluded (not fitted; value in the table)")
        ax.axhline(0, color="black", lw=0.7)
        _finish(ax, s, "deviation % against x (weighted fit)" if weighted else "residuals against x", label)

    return _chart_png(draw, width, height)


def _rows(t: CellTable, book) -> list:
    """A table's rows as printed: its header, the inputs it was computed for, then its stored values."""
    if t.name == "CALIB_RESIDUALS":
        xs, ys = book.cells(t.args["x"]), book.cells(t.args["y"])
        return [["x", "y", *t.header]] + [[x, y, *r] for x, y, r in zip(xs, ys, t.rows)]
    if t.name in INPUTS:
        name, label = INPUTS[t.name]
        source = t.args.get(name)
        given = (book.cells(source) if isinstance(source, Area) else
                 [v for row in source.rows for v in row] if isinstance(source, Constant) else [source])
        return [[label, *t.header]] + [[v, *r] for v, r in zip(given, t.rows)]
    if t.name == "CALIB_ORDER":
        return [["order"], *t.rows]
    return t.rows


def _table_flow(t: CellTable, book, st: _Styles, width: float) -> list:
    """One CALIB_* cell: title and cell, its formula, its settings, then its values (or why there are none)."""
    title, wrap, digits = TITLES.get(t.name, (t.name or "A CALIB_* cell", (), {}))
    flow = [Paragraph(escape(f"{title}: {t.where}"), st.h2), Paragraph(escape(t.formula), st.formula)]
    if t.settings:
        flow.append(Paragraph(escape("Settings: " + "; ".join(f"{k} {v}" for k, v in t.settings)), st.body))
    if t.problem:
        flow.append(Paragraph(escape(t.problem[:1].upper() + t.problem[1:]), st.body))
    if t.rows is None:
        return flow
    if t.message is not None:
        return flow + [Paragraph(escape(f"The cell holds: {t.message}"), st.body)]
    return flow + [_table(_rows(t, book), width, wrap=wrap, digits=digits)]


def _section(s: Section, book, n: int, st: _Styles, width: float) -> list:
    flow = [Paragraph(escape(f"Calibration {n}: sheet '{s.sheet}'"), st.h1),
            Paragraph(escape(f"Standards: {s.ranges}. x: {s.x_label or 'x'}; y: {s.y_label or 'y'}. "
                             f"{len(s.tables)} CALIB_* cells of the workbook use them; each table below is one "
                             "cell, with its own settings and the values the cell holds."), st.body)]
    if s.chart is not None and s.curve is not None and s.residuals is not None:
        half = (width - 8) / 2
        charts = Table([[_curve_chart(s, half, half * 0.78), _residual_chart(s, half, half * 0.78)]],
                       colWidths=[half + 4, half + 4], hAlign="LEFT")
        charts.setStyle(TableStyle([("LEFTPADDING", (0, 0), (-1, -1), 0), ("RIGHTPADDING", (0, 0), (-1, -1), 4)]))
        settings = "; ".join(f"{k} {v}" for k, v in s.chart.settings if k in ("order", "level", "weights",
                                                                              "exclude"))
        flow += [Spacer(1, 6), charts,
                 Paragraph(escape(f"Charts (not cells of the workbook) computed with the settings of {s.chart.where} "
                                  f"({settings})."), st.body)]
    else:
        flow.append(Paragraph("No chart: no cell on these standards gives a curve.", st.body))
    for t in s.tables:
        flow += _table_flow(t, book, st, width)
    return flow


def _front(path: Path, found: list[Section], book, st: _Styles, width: float) -> list:
    stamp = time.strftime("%Y-%m-%d %H:%M:%S %z")
    flow = [Paragraph(escape(f"Calibration report: {path.name}"), st.title),
            Paragraph(escape(f"Workbook: {path.resolve()}"), st.body),
            Paragraph(escape(f"SHA-256 of the workbook: {book.sha256}. To check that a workbook is the one this "
                             f"report was made from, compare its SHA-256: sha256sum {path.name} (Linux), "
                             f"shasum -a 256 {path.name} (macOS), certutil -hashfile {path.name} SHA256 "
                             "(Windows)."), st.body),
            Paragraph(escape(f"Computed: {stamp}, by the CALIB_* functions (the same computation as "
                             f"'degreewise refresh'); {functions.calib_version()}"), st.body),
            Paragraph(escape(f"Calibrations: {len(found)} (one per distinct set of standards that the workbook's "
                             "CALIB_* formulas use). Every table is a CALIB_* cell of the workbook, printed with "
                             "the values the refresh stores in it."), st.body)]
    report = book.report
    problems = ([(c, f"blocked: {w}") for c, w in report.blocked]
                + [(c, f"left alone: {w}") for c, w in report.left_alone]
                + [(c, f"not computed: {w}") for c, w in report.failed])
    if problems:
        flow.append(Paragraph("Cells the computation could not fill", st.h2))
        flow.append(_table([["cell", "why"]] + [list(p) for p in problems], width, wrap=(1,)))
    flow.append(Paragraph(escape("Caution. " + CAUTION_TEXT), st.caution))
    line = "_" * 34
    sign = [[Paragraph(f"<b>{escape(who)}</b>", st.body), Paragraph(f"name {line}", st.body),
             Paragraph(f"signature {'_' * 22}", st.body), Paragraph(f"date {'_' * 14}", st.body)] for who in SIGN_OFF]
    table = Table(sign, colWidths=[0.14 * width, 0.36 * width, 0.3 * width, 0.2 * width], hAlign="LEFT")
    table.setStyle(TableStyle([("TOPPADDING", (0, 0), (-1, -1), 9), ("LEFTPADDING", (0, 0), (-1, -1), 0)]))
    return flow + [table, Spacer(1, 10)]


def _canvas(footer: tuple[str, str]):
    class Numbered(Canvas):
        """Pages held back until the end, so that each footer can say "page n of N"."""

        def __init__(self, *args, **kwargs):
            super().__init__(*args, **kwargs)
            self._held = []

        def showPage(self):
            self._held.append(dict(self.__dict__))
            self._startPage()

        def save(self):
            for state in self._held:
                self.__dict__.update(state)
                w, _ = self._pagesize
                self.setFillColor(colors.HexColor("#444444"))
                self.setFont(FONT, 6.5)
                self.drawString(MARGIN, 15 * mm, footer[0])
                room = w - 2 * MARGIN  # the caution line shrinks to fit the narrower paper
                self.setFont(FONT, min(6.5, 6.5 * room / pdfmetrics.stringWidth(footer[1], FONT, 6.5)))
                self.drawString(MARGIN, 12 * mm, footer[1])
                self.drawRightString(w - MARGIN, 15 * mm, f"page {self._pageNumber} of {len(self._held)}")
                super().showPage()
            super().save()

    return Numbered


def write_report(path: Path, out: Path, paper: str = "a4") -> tuple[Path, int]:
    """Write the report of the workbook at ``path`` to the PDF ``out``; return it and its calibration count."""
    found, book = sections(path)
    if book.report.error:
        raise PackageError(book.report.error)
    if not found:
        raise PackageError("no CALIB_* formula with standards (x and y ranges) in the workbook")
    _fonts()
    size = PAPER[paper]
    files.write(out, lambda tmp: _build(tmp, path, found, book, size))  # never a half-written PDF under its name
    return out, len(found)


def _build(out: str, path: Path, found: list[Section], book, size) -> None:
    st = _Styles()
    doc = SimpleDocTemplate(out, pagesize=size, leftMargin=MARGIN, rightMargin=MARGIN, topMargin=MARGIN,
                            bottomMargin=MARGIN + 8 * mm, title=f"Calibration report: {path.name}",
                            author=f"Degreewise {VERSION}", subject="calibration report")
    width = size[0] - 2 * MARGIN
    story = _front(path, found, book, st, width)
    for n, s in enumerate(found, start=1):
        if n > 1:
            story.append(PageBreak())
        story += _section(s, book, n, st, width)
    footer = (f"{path.name}: calibration report, Degreewise {VERSION}, workbook SHA-256 {book.sha256[:16]}…",
              f"Caution: {CAUTION}")
    doc.build(story, canvasmaker=_canvas(footer))


def report_path(book: Path, folder: Path | None) -> Path:
    return (folder or book.parent) / f"{book.stem}-report.pdf"


def run(paths, out: str | None = None, paper: str = "a4") -> int:
    """The command: one report per workbook; exit 0 only when every report was written."""
    books = workbooks(paths)
    if not books:
        print("no workbooks (.xlsx, .xlsm) found in " + ", ".join(map(str, paths)))
        return 2
    folder = Path(out) if out else None
    if folder:
        folder.mkdir(parents=True, exist_ok=True)
    status = 0
    for book in books:
        try:
            written, count = write_report(book, report_path(book, folder), paper)
            print(f"{book}: report with {count} calibration{'s' if count != 1 else ''} written to {written}")
        except PackageError as err:
            print(f"{book}: no report: {err}")
            status = 1
        except OSError as err:
            print(f"{book}: no report: {files.in_words(err, report_path(book, folder))}")
            status = 1
    return status
