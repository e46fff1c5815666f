"""The demo workbooks: invented calibrations laid out with CALIB_* formulas and native charts.

One workbook per scenario (see ``scenarios``). Each calibration sheet holds the
standards, the order choice, the tables, the back-calculated standards and a
fine-grid prediction spill with CALIB_LABELS headers, and two scatter charts
that read the spill ranges (standards with visible markers, curve and
prediction band, log axes where the range or the weighting asks for them;
residuals against x, or the deviation % of the back-calculated x for a
weighted fit), so they follow a refresh. Header cells are styled before the
refresh fills them, texts wrap, and each sheet prints as its calibration on a
few landscape pages. The weighted scenario adds unknown samples read back with
CALIB_INVERSE. Below them, on a page of its own, every sheet states its
detection and quantitation limits (CALIB_LIMITS, with blank readings where the
scenario has them), and the weighted one compares weighting schemes
(CALIB_WEIGHTING). A first sheet states the scenario and the cautions.
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np
from openpyxl import Workbook
from openpyxl.chart import Reference, ScatterChart, Series
from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter, range_boundaries
from openpyxl.worksheet.pagebreak import Break

from ..catalogue import CAUTION, HEADERS
from .scenarios import Scenario, all_scenarios

CAUTION_LINE = ("Degreewise supports, and does not replace, method validation under your laboratory's quality "
                "system and applicable standards; results must be reviewed by qualified staff.")

GRID = 41  # points of the fine x grid for the fitted curve

# where each block sits on a calibration sheet (anchor cells); tables spill right and down. Columns A:O read
# top to bottom as the printed page (orders, sequential table, coefficients; the charts beside the statistics
# and the checks; the back-calculated standards and the samples below); the chart data (x grid and
# prediction spill) sit to the right of the print area.
LAYOUT = {
    "order": "E1", "orders": "D3", "seqf": "D9", "coefs": "D19", "stats": "N26", "checks": "K49",
    "curve_chart": "D26", "residual_chart": "D48", "residuals": "D66", "grid": "Z2", "predict": "AA2",
}
WIDTHS = {"A": 17, "B": 17, "C": 2, "D": 22, "K": 16, "N": 14, "O": 50}  # the others: NUMBER_WIDTH
NUMBER_WIDTH = 12.5
FONT = "Calibri"  # the workbook's default font, named so that styled cells keep it
HEADER_FONT = Font(name=FONT, bold=True, color="1F3B57")
LINE = 15.0  # points per line of wrapped text
HEADER_FILL = PatternFill("solid", fgColor="DDE5EE")
WRAP = Alignment(wrap_text=True, vertical="top")
MARKER = "1F4E79"
EXCLUDED = "C00000"  # the excluded standards' marker
ABOUT_WIDTH = 68  # the About sheet's one column: fits a portrait A4 or Letter page at full size


def _args(sc: Scenario, n: int) -> tuple[str, str, str, str]:
    x, y = f"$A$2:$A${n + 1}", f"$B$2:$B${n + 1}"
    w = f'"{sc.weights}"' if sc.weights else ""
    e = f"$C$2:$C${n + 1}" if sc.excluded else ""
    return x, y, w, e


def _formula(name: str, *args: str) -> str:
    while args and args[-1] == "":
        args = args[:-1]
    return f"={name}({','.join(args)})"


def _log_axes(sc: Scenario) -> bool:
    """Log axes when the standards span more than two decades or the fit is weighted."""
    return min(sc.x) > 0 and (max(sc.x) / min(sc.x) > 100 or sc.weights is not None)


def _header(ws, cells: str) -> None:
    """Style a header row (the cells a table's header will fill; the refresh keeps cell styles)."""
    for row in ws[cells]:
        for c in row:
            c.font, c.fill, c.alignment = HEADER_FONT, HEADER_FILL, WRAP


def _wrap(ws, cells: str) -> None:
    for row in ws[cells]:
        for c in row:
            c.alignment = WRAP


def _cell(anchor: str, rows: int = 0, cols: int = 0) -> str:
    col, row, _, _ = range_boundaries(anchor)
    return f"{get_column_letter(col + cols)}{row + rows}"


def _span(anchor: str, rows: int, cols: int) -> str:
    """The range of ``rows`` x ``cols`` cells from ``anchor``."""
    return f"{anchor}:{_cell(anchor, rows - 1, cols - 1)}"


def samples_anchor(n: int) -> str:
    """The first sample reading, two rows below the back-calculated standards of ``n`` standards; the
    CALIB_INVERSE anchor is the cell to its right."""
    return _cell(LAYOUT["residuals"], n + 2)


def limits_anchors(sc: Scenario) -> tuple[str, str, str]:
    """The first blank reading (column A, its header beside the limits' header), the CALIB_LIMITS anchor and the
    CALIB_WEIGHTING anchor: three rows below the last block above them, each table ending in the wide column O
    with its notes."""
    n = len(sc.x)
    last = _cell(samples_anchor(n), len(sc.samples) - 1) if sc.samples else _cell(LAYOUT["residuals"], n - 1)
    row = range_boundaries(last)[1] + 4
    return f"A{row + 1}", f"J{row}", f"I{row + 8}"


def calibration_sheet(wb: Workbook, sc: Scenario):
    ws = wb.create_sheet(sc.name.capitalize())
    n = len(sc.x)
    ws["A1"], ws["B1"] = sc.x_label, sc.y_label
    for i, (a, b) in enumerate(zip(sc.x, sc.y), start=2):
        ws.cell(i, 1, a)
        ws.cell(i, 2, b)
    if sc.excluded:
        ws["C1"] = "exclude"
        for i, reason in sc.excluded:
            ws.cell(i + 2, 3, reason).alignment = WRAP
    x, y, w, e = _args(sc, n)
    order = "$E$1"
    ws["D1"] = "chosen order"
    ws[LAYOUT["order"]] = _formula("CALIB_ORDER", x, y, "", "", "", w, e)
    ws[LAYOUT["order"]].font = Font(name=FONT, bold=True, size=13)
    ws[LAYOUT["orders"]] = _formula("CALIB_ORDERS", x, y, "", "", w, e)
    ws[LAYOUT["seqf"]] = _formula("CALIB_SEQF", x, y, "", w, e)
    ws[LAYOUT["coefs"]] = _formula("CALIB_COEFS", x, y, order, "", w, e)
    ws[LAYOUT["stats"]] = _formula("CALIB_STATS", x, y, order, w, e)
    ws[LAYOUT["checks"]] = _formula("CALIB_CHECKS", x, y, order, "", w, e)
    residuals = LAYOUT["residuals"]
    ws[_cell(residuals, -1)] = '=CALIB_LABELS("residuals")'
    ws[residuals] = _formula("CALIB_RESIDUALS", x, y, order, w, e)
    grid_at, predict = LAYOUT["grid"], LAYOUT["predict"]
    ws[_cell(grid_at, -1)] = "x grid"
    lo, hi = min(sc.x), max(sc.x)
    grid = np.geomspace(lo, hi, GRID) if _log_axes(sc) else np.linspace(lo, hi, GRID)
    first = ws[grid_at]
    for i, v in enumerate(grid):
        ws.cell(first.row + i, first.column, float(v))
    grid_range = f"${first.column_letter}${first.row}:${first.column_letter}${first.row + GRID - 1}"
    ws[_cell(predict, -1)] = '=CALIB_LABELS("predict")'
    ws[predict] = _formula("CALIB_PREDICT", x, y, grid_range, order, "", w, e)
    last = _cell(residuals, n - 1)
    headers = [_span("A1", 1, 3 if sc.excluded else 2), _span("D1", 1, 1), _span(LAYOUT["orders"], 1, 12), _span(LAYOUT["seqf"], 1, 6),
               _span(LAYOUT["coefs"], 1, 7), _span(LAYOUT["stats"], 1, 2), _span(LAYOUT["checks"], 1, 5),
               _span(_cell(residuals, -1), 1, 8), _span(_cell(grid_at, -1), 1, 1), _span(_cell(predict, -1), 1, 6)]
    if sc.samples:
        at = samples_anchor(n)
        ws[_cell(at, -1)] = "sample reading"
        for i, v in enumerate(sc.samples):
            ws[_cell(at, i)] = v
        inverse = _cell(at, 0, 1)
        ws[_cell(inverse, -1)] = '=CALIB_LABELS("inverse")'
        readings = f"${at[0]}${ws[at].row}:${at[0]}${ws[at].row + len(sc.samples) - 1}"
        ws[inverse] = _formula("CALIB_INVERSE", x, y, readings, "", order, "", w, e)
        headers.append(_span(_cell(at, -1), 1, 5))
        last = _cell(inverse, len(sc.samples) - 1, 3)
    blank_at, limits_at, weighting_at = limits_anchors(sc)
    blank = ""
    if sc.blanks:
        ws[_cell(blank_at, -1)] = "blank reading"
        for i, v in enumerate(sc.blanks):
            ws[_cell(blank_at, i)] = v
        blank = f"$A${ws[blank_at].row}:$A${ws[blank_at].row + len(sc.blanks) - 1}"
        headers.append(_span(_cell(blank_at, -1), 1, 1))
    ws[limits_at] = _formula("CALIB_LIMITS", x, y, blank, "", order, "", w, e)
    headers.append(_span(limits_at, 1, 6))
    _wrap(ws, _span(_cell(limits_at, 1), 6, 6))
    last = _cell(limits_at, 6, 5)
    if sc.weights:
        ws[_cell(weighting_at, -1)] = f"weights {sc.weights}: fixed by the method (see About); this table is a check"
        ws[weighting_at] = _formula("CALIB_WEIGHTING", x, y, "", "", e)
        headers.append(_span(weighting_at, 1, 7))
        _wrap(ws, _span(_cell(weighting_at, 1), 6, 7))
        last = _cell(weighting_at, 6, 6)
    for h in headers:
        _header(ws, h)
    _wrap(ws, _span(_cell(LAYOUT["orders"], 1, 11), 4, 1))   # picked by
    _wrap(ws, _span(_cell(LAYOUT["stats"], 1), 30, 2))       # labels and values, among them why this order
    _wrap(ws, _span(_cell(LAYOUT["checks"], 1), 15, 5))      # check names and details
    for col in range(1, 16):
        letter = get_column_letter(col)
        ws.column_dimensions[letter].width = WIDTHS.get(letter, NUMBER_WIDTH)
    if sc.excluded:
        ws.column_dimensions["C"].width = 16
    for col in range(first.column, first.column + 7):
        ws.column_dimensions[get_column_letter(col)].width = NUMBER_WIDTH
    blocks = _results(sc)
    _number_formats(ws, blocks)
    _row_heights(ws, sc, blocks)
    _page_setup(ws, f"A1:O{ws[last].row}",
                (ws[LAYOUT["checks"]].row - 1, ws[residuals].row - 2, ws[limits_at].row - 2))
    _charts(ws, sc, n)
    return ws


def _lines(text, width: float) -> int:
    """Lines a wrapped text takes in a column ``width`` characters wide (a character-count estimate)."""
    return max(1, *(math.ceil(len(part) / (1.2 * width)) for part in str(text or "").split("\n")))


def _results(sc: Scenario) -> list[tuple[str, list]]:
    """Each table of the calibration sheet as the functions return it for this scenario: (the cell of its
    header row, rows); headerless tables with the header CALIB_LABELS puts above them."""
    from .. import functions

    x, y = [[v] for v in sc.x], [[v] for v in sc.y]
    e = _exclude_cells(sc)
    order = functions.calib_order(x, y, None, None, None, sc.weights, e)
    lo, hi = min(sc.x), max(sc.x)
    grid = np.geomspace(lo, hi, GRID) if _log_axes(sc) else np.linspace(lo, hi, GRID)
    blocks = [(LAYOUT["orders"], functions.calib_orders(x, y, None, None, sc.weights, e)),
              (LAYOUT["seqf"], functions.calib_seqf(x, y, None, sc.weights, e)),
              (LAYOUT["coefs"], functions.calib_coefs(x, y, order, None, sc.weights, e)),
              (LAYOUT["stats"], functions.calib_stats(x, y, order, sc.weights, e)),
              (LAYOUT["checks"], functions.calib_checks(x, y, order, None, sc.weights, e)),
              (_cell(LAYOUT["residuals"], -1),
               [HEADERS["residuals"]] + functions.calib_residuals(x, y, order, sc.weights, e)),
              (_cell(LAYOUT["predict"], -1), [HEADERS["predict"]] + functions.calib_predict(
                  x, y, [[float(g)] for g in grid], order, None, sc.weights, e))]
    if sc.samples:
        blocks.append((_cell(samples_anchor(len(sc.x)), -1, 1), [HEADERS["inverse"]] + functions.calib_inverse(
            x, y, [[v] for v in sc.samples], None, order, None, sc.weights, e)))
    _, limits_at, weighting_at = limits_anchors(sc)
    blanks = [[v] for v in sc.blanks] or None
    blocks.append((limits_at, functions.calib_limits(x, y, blanks, None, order, None, sc.weights, e)))
    if sc.weights:
        blocks.append((weighting_at, functions.calib_weighting(x, y, None, None, e)))
    return blocks


P_FORMAT = '[<0.0001]"<0.0001";0.0000'  # p-values: four decimals, the smallest shown as a bound
COUNTS = ("order", "df", "residual df", "points used", "points skipped", "points excluded", "x min", "x max")


def _format(label, values) -> str | None:
    """A number format fit for a column (or a row of the statistics) from its label and the values the
    functions give: p-values to four decimals, % to two, counts whole, others five significant digits at the
    column's smallest value, or scientific where the values span more than a fixed format can show."""
    label = str(label or "")
    nums = [abs(v) for v in values if isinstance(v, (int, float)) and not isinstance(v, bool)
            and math.isfinite(v) and v != 0]
    if not nums:
        return None
    if label == "p-value" or label.endswith(" p") or label.endswith("p-value"):
        return P_FORMAT
    if "%" in label:
        return "0.00"
    if label in COUNTS or all(float(v).is_integer() and v < 1e9 for v in nums):
        return "0"
    if "R²" in label:  # near 1: six decimals tell the orders apart
        return "0.000000"
    lo, hi = min(nums), max(nums)
    if hi >= 1e7 or lo < 1e-4 or hi / lo > 1e4:
        return "0.0000E+00"
    return "0." + "0" * min(max(1, 4 - math.floor(math.log10(lo))), 9)


def _shown(value, fmt: str) -> str:
    """About the text a number takes under ``fmt`` (for column widths)."""
    if fmt == P_FORMAT:
        return "<0.0001"
    if fmt.endswith("E+00"):
        return f"{value:.4E}"
    decimals = len(fmt) - 2 if fmt.startswith("0.") else 0
    return f"{value:.{decimals}f}"


def _number_formats(ws, blocks) -> None:
    """Number formats on every result cell (the refresh keeps them) and column widths that hold the formatted
    numbers, so that live, frozen and printed pages read without one number running into the next."""
    need: dict[int, float] = {}
    for anchor, rows in blocks:
        if not (isinstance(rows, list) and len(rows) > 1):
            continue
        col0, row0, _, _ = range_boundaries(anchor)
        header, body = rows[0], rows[1:]
        if tuple(header) == HEADERS["stats"]:
            formats = [[None, _format(r[0], [r[1]])] for r in body]
        else:
            columns = [_format(h, [r[j] for r in body if j < len(r)]) for j, h in enumerate(header)]
            formats = [columns] * len(body)
        for i, (row, fmts) in enumerate(zip(body, formats), start=1):
            for j, (value, fmt) in enumerate(zip(row, fmts)):
                if fmt is None:
                    continue
                ws.cell(row0 + i, col0 + j).number_format = fmt
                if isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value):
                    need[col0 + j] = max(need.get(col0 + j, 0), len(_shown(value, fmt)) + 2)
    for col, chars in need.items():
        letter = get_column_letter(col)
        ws.column_dimensions[letter].width = max(ws.column_dimensions[letter].width or NUMBER_WIDTH, chars)


def _row_heights(ws, sc: Scenario, blocks) -> None:
    """Heights for rows whose wrapped texts need more than one line (spreadsheet programs do not fit rows
    on opening a file); the texts are those the functions return for this calibration."""
    blocks = blocks + [("A1", [(sc.x_label, sc.y_label)])]
    if sc.samples:
        blocks.append((_cell(samples_anchor(len(sc.x)), -1), [("sample reading",) + HEADERS["inverse"]]))
    if sc.excluded:
        blocks.append(("C2", _exclude_cells(sc)))
    _fit_rows(ws, blocks)


def _fit_rows(ws, blocks) -> None:
    """Row heights for the wrapped texts of ``blocks`` ((anchor, rows) as the cells will hold them)."""
    need: dict[int, int] = {}
    for anchor, rows in blocks:
        col0, row0, _, _ = range_boundaries(anchor)
        for i, row in enumerate(rows):
            for j, value in enumerate(row):
                width = ws.column_dimensions[get_column_letter(col0 + j)].width or NUMBER_WIDTH
                if isinstance(value, str):
                    need[row0 + i] = max(need.get(row0 + i, 1), _lines(value, width))
    for r, lines in need.items():
        if lines > 1:
            ws.row_dimensions[r].height = LINE * lines


def _exclude_cells(sc: Scenario):
    """The exclude column as the functions receive it (None when the scenario excludes nothing)."""
    if not sc.excluded:
        return None
    reasons = dict(sc.excluded)
    return [[reasons.get(i)] for i in range(len(sc.x))]


def compare_sheet(wb: Workbook, sc: Scenario) -> None:
    """Last month's standards beside today's sheet, and CALIB_COMPARE of today's curve against them."""
    ws = wb.create_sheet("Compare")
    today = wb[sc.name.capitalize()]
    n = len(sc.x)
    ws["A1"], ws["B1"] = sc.x_label, f"{sc.y_label}, last month"
    for i, (a, b) in enumerate(zip(sc.x, sc.reference_y), start=2):
        ws.cell(i, 1, a)
        ws.cell(i, 2, b)
    ws["D1"] = "check level"
    for i, v in enumerate(sc.check_levels, start=2):
        ws.cell(i, 4, v)
    x, y, _, e = (f"'{today.title}'!{a}" if a else "" for a in _args(sc, n))
    ref_x, ref_y = f"$A$2:$A${len(sc.reference_y) + 1}", f"$B$2:$B${len(sc.reference_y) + 1}"
    at = f"$D$2:$D${len(sc.check_levels) + 1}"
    ws["F1"] = _formula("CALIB_COMPARE", x, y, ref_x, ref_y, at, "", "", "", e)
    rows = 5 + 2 + len(sc.check_levels)
    width = len(HEADERS["compare"])
    for h in (_span("A1", 1, 2), _span("D1", 1, 1), _span("F1", 1, width)):
        _header(ws, h)
    _wrap(ws, _span("F2", rows, width))
    detail = get_column_letter(5 + width)
    for letter, wide in {"A": 14, "B": 17, "C": 2, "D": 11, "E": 2, "F": 16, detail: 60}.items():
        ws.column_dimensions[letter].width = wide
    for col in range(7, 5 + width):
        ws.column_dimensions[get_column_letter(col)].width = NUMBER_WIDTH
    for r in range(2, rows + 2):
        ws.row_dimensions[r].height = LINE * 3
    from .. import functions

    cells = [[[v] for v in values] for values in (sc.x, sc.y, sc.x[: len(sc.reference_y)], sc.reference_y,
                                                 sc.check_levels)]
    _number_formats(ws, [("F1", functions.calib_compare(*cells, None, None, None, _exclude_cells(sc)))])
    _page_setup(ws, f"A1:{detail}{max(rows, len(sc.x), len(sc.reference_y)) + 1}", ())  # every standard of both runs


def acceptance_sheet(wb: Workbook, sc: Scenario) -> None:
    """The method's own acceptance criteria in cells, CALIB_ACCEPTANCE of today's standards under them, and the
    samples' standard uncertainties (CALIB_UNCERTAINTY) below."""
    from .. import functions
    from ..engine.validation import CRITERIA_NUMBERS

    ws = wb.create_sheet("Acceptance")
    today = wb[sc.name.capitalize()]
    n = len(sc.x)
    ws["A1"] = "method criteria"
    for i, (label, v) in enumerate(zip(CRITERIA_NUMBERS, sc.criteria), start=2):
        ws.cell(i, 1, label).alignment = WRAP
        ws.cell(i, 2, v).alignment = WRAP
    criteria = f"$B$2:$B${len(sc.criteria) + 1}"
    x, y, w, e = (f"'{today.title}'!{a}" if a else "" for a in _args(sc, n))
    ws["D1"] = _formula("CALIB_ACCEPTANCE", x, y, criteria, "", w, e)
    xs, ys, ex = [[v] for v in sc.x], [[v] for v in sc.y], _exclude_cells(sc)
    table = functions.calib_acceptance(xs, ys, [[v] for v in sc.criteria], None, sc.weights, ex)
    at = len(table) + 3  # the uncertainty table's header row
    ws[f"A{at}"] = "sample reading"
    for i, v in enumerate(sc.samples, start=at + 1):
        ws.cell(i, 1, v)
    ws[f"D{at}"] = '=CALIB_LABELS("uncertainty")'
    readings = f"$A${at + 1}:$A${at + len(sc.samples)}"
    ws[f"D{at + 1}"] = _formula("CALIB_UNCERTAINTY", x, y, readings, "", "", "", w, e)
    uncertainty = [HEADERS["uncertainty"]] + functions.calib_uncertainty(xs, ys, [[v] for v in sc.samples], None,
                                                                          None, None, sc.weights, ex)
    for h in (_span("A1", 1, 2), _span("D1", 1, 7), _span(f"A{at}", 1, 1), _span(f"D{at}", 1, 7)):
        _header(ws, h)
    _wrap(ws, _span("D2", len(table) - 1, 7))
    _wrap(ws, _span(f"D{at + 1}", len(sc.samples), 7))
    for letter, width in {"A": 20, "B": 9, "C": 2, "D": 19, "I": 17, "J": 66}.items():
        ws.column_dimensions[letter].width = width
    for col in range(5, 9):
        ws.column_dimensions[get_column_letter(col)].width = NUMBER_WIDTH
    blocks = [("D1", table), (f"D{at}", uncertainty)]
    _number_formats(ws, blocks)
    for r in range(2, len(table) + 1):  # deviations % and the criteria's values: two decimals
        ws[f"G{r}"].number_format = "0.00"
        ws[f"I{r}"].alignment = Alignment(wrap_text=True, vertical="top", horizontal="center")
    _fit_rows(ws, blocks + [("A2", [[label] for label in CRITERIA_NUMBERS])])
    _page_setup(ws, f"A1:J{at + len(sc.samples)}", ())


def _page_setup(ws, area: str, breaks: tuple[int, ...]) -> None:
    """Landscape A4, fitted to one page wide, row 1 repeated on every page, the calibration as print area,
    pages broken after the rows ``breaks`` (so that no chart or table is cut)."""
    ws.print_area = area
    ws.print_title_rows = "1:1"
    ws.page_setup.orientation = "landscape"
    ws.page_setup.paperSize = ws.PAPERSIZE_A4
    ws.page_setup.fitToWidth, ws.page_setup.fitToHeight = 1, 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.print_options.gridLines = False
    ws.oddFooter.center.text = "&A, page &P of &N"
    ws.freeze_panes = "A2"
    for row in breaks:
        ws.row_breaks.append(Break(id=row))


def _series(ws, x_ref: str, y_ref: str, title, marker=False, dash=None):
    s = Series(Reference(ws, range_string=y_ref), Reference(ws, range_string=x_ref), title=title)
    if marker:  # filled markers, no line
        s.marker.symbol = "circle"
        s.marker.size = 6
        s.marker.graphicalProperties.solidFill = MARKER
        s.marker.graphicalProperties.line.solidFill = MARKER
        s.graphicalProperties.line.noFill = True
    else:
        s.marker.symbol = "none"
        s.smooth = False
        s.graphicalProperties.line.width = 19050  # 1.5 pt
        if dash:
            s.graphicalProperties.line.dashStyle = dash
    return s


def _column(ws, anchor: str, offset: int, rows: int) -> str:
    """Absolute range of ``rows`` cells in the column ``offset`` to the right of ``anchor``."""
    top = _cell(anchor, 0, offset)
    col, row, _, _ = range_boundaries(top)
    letter = get_column_letter(col)
    return f"'{ws.title}'!${letter}${row}:${letter}${row + rows - 1}"


def _chart(title: str, x_title: str, y_title: str, log: bool) -> ScatterChart:
    chart = ScatterChart()
    chart.title = title
    chart.style = 2
    chart.x_axis.title, chart.y_axis.title = x_title, y_title
    for axis in (chart.x_axis, chart.y_axis):
        axis.delete = False
        if log:
            axis.scaling.logBase = 10
    chart.x_axis.tickLblPos = "low"  # labels at the bottom, also when values go below zero
    chart.legend.position = "b"
    return chart


def _runs(sc: Scenario) -> tuple[list, list]:
    """(first, count) of each run of consecutive standards the fit uses, and of the excluded ones."""
    out, runs = {i for i, _ in sc.excluded}, ([], [])
    for i in range(len(sc.x)):
        kind = runs[i in out]
        if kind and sum(kind[-1]) == i:
            kind[-1] = (kind[-1][0], kind[-1][1] + 1)
        else:
            kind.append((i, 1))
    return runs


def _charts(ws, sc: Scenario, n: int) -> None:
    log = _log_axes(sc)
    grid = _column(ws, LAYOUT["grid"], 0, GRID)
    curve = _chart(f"{sc.title}: standards, fitted curve, prediction band" + (" (log axes)" if log else ""),
                   sc.x_label, sc.y_label, log)
    used, excluded = _runs(sc)
    for first, count in used:
        curve.series.append(_series(ws, _column(ws, _cell("A2", first), 0, count),
                                    _column(ws, _cell("A2", first), 1, count), "standards", marker=True))
    for first, count in excluded:  # drawn apart, with a marker of its own: not part of the fit
        s = _series(ws, _column(ws, _cell("A2", first), 0, count), _column(ws, _cell("A2", first), 1, count),
                    "excluded standard", marker=True)
        s.marker.symbol = "x"
        s.marker.size = 8
        s.marker.graphicalProperties.solidFill = s.marker.graphicalProperties.line.solidFill = EXCLUDED
        curve.series.append(s)
    predict = LAYOUT["predict"]
    curve.series.append(_series(ws, grid, _column(ws, predict, 0, GRID), "fitted"))
    curve.series.append(_series(ws, grid, _column(ws, predict, 3, GRID), "prediction lower", dash="dash"))
    curve.series.append(_series(ws, grid, _column(ws, predict, 4, GRID), "prediction upper", dash="dash"))
    curve.width, curve.height = 18, 9.5
    ws.add_chart(curve, LAYOUT["curve_chart"])
    # weighted fit: the deviation % of the back-calculated x (raw residuals fan out by design); else residuals
    column, label = (6, "deviation of back-calculated x (%)") if sc.weights else (1, "residual")
    # only the standards the fit uses: an excluded one's residual would set the scale
    resid = _chart(f"{label} against x" + (" (standards used by the fit)" if excluded else ""), sc.x_label, label,
                   False)
    if log:
        resid.x_axis.scaling.logBase = 10
    for first, count in used:
        resid.series.append(_series(ws, _column(ws, _cell("A2", first), 0, count),
                                    _column(ws, _cell(LAYOUT["residuals"], first), column, count), label,
                                    marker=True))
    resid.legend = None
    resid.width, resid.height = 18, 8
    ws.add_chart(resid, LAYOUT["residual_chart"])


def about_sheet(wb: Workbook, sc: Scenario) -> None:
    ws = wb.active
    ws.title = "About"
    lines = [
        ("Degreewise demo workbook", True),
        (sc.title, True),
        (sc.story, False),
        ("The data are invented for this demonstration (seeded random numbers); no real instrument or sample.", False),
        (f"Weights: {sc.weights or 'none'}. The calibration sheet holds every CALIB_* function; "
         "'degreewise refresh' recomputes them without a spreadsheet program, 'degreewise report' writes a "
         "printable PDF of each calibration, and 'degreewise freeze' writes a copy with values only.", False),
        ("Without the add-in, the CALIB_* cells show #NAME? in a spreadsheet program (or the values last stored, "
         "which do not follow edited data). To hand the results to someone without the add-in, run "
         "'degreewise freeze BOOK.xlsx COPY.xlsx': the copy's cells hold the values only, and its properties name "
         "the source workbook and its SHA-256.", False),
        *([(f"Why {sc.weights} although CALIB_WEIGHTING may pick another scheme: the weighting is part of the "
            "method, fixed when the method was validated; the table compares the schemes for this run as a check, "
            "and a change of weighting is decided in a new validation, not run by run (common practice).", False)]
          if sc.weights else []),
        ("Caution: " + CAUTION, True),
    ]
    for i, (text, strong) in enumerate(lines, start=1):
        cell = ws.cell(i, 1, text)
        cell.font = Font(name=FONT, bold=strong, size=13 if i == 1 else 11)
        ws.row_dimensions[i].height = LINE * _lines(text, ABOUT_WIDTH * (0.8 if strong else 1))  # bold is wider
        cell.alignment = WRAP
    ws.column_dimensions["A"].width = ABOUT_WIDTH
    ws.print_area = f"A1:A{len(lines)}"
    ws.page_setup.paperSize = ws.PAPERSIZE_A4
    ws.page_setup.fitToWidth, ws.page_setup.fitToHeight = 1, 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True


def build(sc: Scenario, path: Path) -> Path:
    wb = Workbook()
    about_sheet(wb, sc)
    calibration_sheet(wb, sc)
    if sc.reference_y:
        compare_sheet(wb, sc)
    if sc.criteria:
        acceptance_sheet(wb, sc)
    wb.save(path)
    return path


def write_demo(folder: Path) -> list[Path]:
    """Write every demo workbook into ``folder`` and refresh it; return the paths."""
    from .refresh import refresh_file

    folder.mkdir(parents=True, exist_ok=True)
    paths = []
    for sc in all_scenarios():
        path = build(sc, folder / f"degreewise-demo-{sc.name}.xlsx")
        report = refresh_file(path)
        if not report.ok:
            raise RuntimeError("\n".join(report.lines()))
        paths.append(path)
    return paths


def run(folder) -> int:
    """degreewise demo: write and refresh the demo workbooks, and print each calibration (and its report
    when the report extra is installed)."""
    from ..workbook.sections import sections, summary

    folder = Path(folder)
    if folder.exists() and not folder.is_dir():
        print(f"degreewise demo: {folder} is a file; give a folder to write the demo workbooks into", file=sys.stderr)
        return 2
    try:
        paths = write_demo(folder)
    except OSError as err:
        print(f"degreewise demo: cannot write the demo workbooks into {folder}: {err.strerror or err}",
              file=sys.stderr)
        return 1
    try:
        from .report import report_path, write_report
    except ImportError as err:  # the report extra is not installed
        write_report, missing = None, err.name
    for sc, path in zip(all_scenarios(), paths):
        found, _ = sections(path)
        print(f"{sc.title}  [{path}]")
        for s in found:
            print("\n".join(summary(s)))
        if write_report:
            print(f"  report: {write_report(path, report_path(path, None))[0]}")
        else:
            print(f"  no report: {missing} is not installed (pip install \"degreewise[report]\")")
        print()
    print(CAUTION_LINE)
    return 0
