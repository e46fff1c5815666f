"""The demo workbook's sheets: About, the calibration sheet (every CALIB_* function), Compare and Acceptance."""

from __future__ import annotations

import numpy as np
from openpyxl import Workbook
from openpyxl.styles import Alignment, Font
from openpyxl.utils import get_column_letter

from ...catalogue import CAUTION, HEADERS
from .charts import charts
from .formats import fit_rows, number_formats, row_heights
from .layout import (ABOUT_WIDTH, FONT, GRID, LAYOUT, LINE, NUMBER_WIDTH, WIDTHS, WRAP, arguments, cell_at,
                     exclude_cells, formula, limits_anchors, lines_of, log_axes, page_setup, samples_anchor, span,
                     style_header, wrap)
from .scenarios import Scenario


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
        ws.row_dimensions[i].height = LINE * lines_of(text, ABOUT_WIDTH * (0.8 if strong else 1))  # bold is wider
        cell.alignment = WRAP
    ws.column_dimensions["A"].width = ABOUT_WIDTH
    ws.print_area = f"A1:A{len(lines)}"
    ws.page_setup.paperSize = ws.PAPERSIZE_A4
    ws.page_setup.fitToWidth, ws.page_setup.fitToHeight = 1, 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True


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
    x, y, w, e = arguments(sc, n)
    order = "$E$1"
    ws["D1"] = "chosen order"
    ws[LAYOUT["order"]] = formula("CALIB_ORDER", x, y, "", "", "", w, e)
    ws[LAYOUT["order"]].font = Font(name=FONT, bold=True, size=13)
    ws[LAYOUT["orders"]] = formula("CALIB_ORDERS", x, y, "", "", w, e)
    ws[LAYOUT["seqf"]] = formula("CALIB_SEQF", x, y, "", w, e)
    ws[LAYOUT["coefs"]] = formula("CALIB_COEFS", x, y, order, "", w, e)
    ws[LAYOUT["stats"]] = formula("CALIB_STATS", x, y, order, w, e)
    ws[LAYOUT["checks"]] = formula("CALIB_CHECKS", x, y, order, "", w, e)
    residuals = LAYOUT["residuals"]
    ws[cell_at(residuals, -1)] = '=CALIB_LABELS("residuals")'
    ws[residuals] = formula("CALIB_RESIDUALS", x, y, order, w, e)
    grid_at, predict = LAYOUT["grid"], LAYOUT["predict"]
    ws[cell_at(grid_at, -1)] = "x grid"
    lo, hi = min(sc.x), max(sc.x)
    grid = np.geomspace(lo, hi, GRID) if log_axes(sc) else np.linspace(lo, hi, GRID)
    first = ws[grid_at]
    for i, v in enumerate(grid):
        ws.cell(first.row + i, first.column, float(v))
    grid_range = f"${first.column_letter}${first.row}:${first.column_letter}${first.row + GRID - 1}"
    ws[cell_at(predict, -1)] = '=CALIB_LABELS("predict")'
    ws[predict] = formula("CALIB_PREDICT", x, y, grid_range, order, "", w, e)
    headers = [span("A1", 1, 3 if sc.excluded else 2), span("D1", 1, 1), span(LAYOUT["orders"], 1, 12), span(LAYOUT["seqf"], 1, 6),
               span(LAYOUT["coefs"], 1, 7), span(LAYOUT["stats"], 1, 2), span(LAYOUT["checks"], 1, 5),
               span(cell_at(residuals, -1), 1, 8), span(cell_at(grid_at, -1), 1, 1), span(cell_at(predict, -1), 1, 6)]
    last = _samples_limits_weighting(ws, sc, (x, y, w, e), order, headers)
    _lay_out(ws, sc, headers, first, last)
    return ws


def _samples_limits_weighting(ws, sc: Scenario, args: tuple, order: str, headers: list) -> str:
    """The blocks below the residuals: sample readings and CALIB_INVERSE, blank readings, CALIB_LIMITS and
    (weighted scenarios) CALIB_WEIGHTING; their header spans go into ``headers``; the last cell they fill."""
    x, y, w, e = args
    n = len(sc.x)
    if sc.samples:
        at = samples_anchor(n)
        ws[cell_at(at, -1)] = "sample reading"
        for i, v in enumerate(sc.samples):
            ws[cell_at(at, i)] = v
        inverse = cell_at(at, 0, 1)
        ws[cell_at(inverse, -1)] = '=CALIB_LABELS("inverse")'
        readings = f"${at[0]}${ws[at].row}:${at[0]}${ws[at].row + len(sc.samples) - 1}"
        ws[inverse] = formula("CALIB_INVERSE", x, y, readings, "", order, "", w, e)
        headers.append(span(cell_at(at, -1), 1, 5))
    blank_at, limits_at, weighting_at = limits_anchors(sc)
    blank = ""
    if sc.blanks:
        ws[cell_at(blank_at, -1)] = "blank reading"
        for i, v in enumerate(sc.blanks):
            ws[cell_at(blank_at, i)] = v
        blank = f"$A${ws[blank_at].row}:$A${ws[blank_at].row + len(sc.blanks) - 1}"
        headers.append(span(cell_at(blank_at, -1), 1, 1))
    ws[limits_at] = formula("CALIB_LIMITS", x, y, blank, "", order, "", w, e)
    headers.append(span(limits_at, 1, 6))
    wrap(ws, span(cell_at(limits_at, 1), 6, 6))
    last = cell_at(limits_at, 6, 5)
    if sc.weights:
        ws[cell_at(weighting_at, -1)] = f"weights {sc.weights}: fixed by the method (see About); this table is a check"
        ws[weighting_at] = formula("CALIB_WEIGHTING", x, y, "", "", e)
        headers.append(span(weighting_at, 1, 7))
        wrap(ws, span(cell_at(weighting_at, 1), 6, 7))
        last = cell_at(weighting_at, 6, 6)
    return last


def _lay_out(ws, sc: Scenario, headers: list, first, last: str) -> None:
    """Header styles, wrapping, column widths, number formats, row heights, page set-up and charts of a
    calibration sheet whose last filled cell is ``last`` (``first``: the x grid's first cell)."""
    n = len(sc.x)
    residuals = LAYOUT["residuals"]
    limits_at = limits_anchors(sc)[1]
    for h in headers:
        style_header(ws, h)
    wrap(ws, span(cell_at(LAYOUT["orders"], 1, 11), 4, 1))   # picked by
    wrap(ws, span(cell_at(LAYOUT["stats"], 1), 30, 2))       # labels and values, among them why this order
    wrap(ws, span(cell_at(LAYOUT["checks"], 1), 15, 5))      # check names and details
    for col in range(1, 16):
        letter = get_column_letter(col)
        ws.column_dimensions[letter].width = WIDTHS.get(letter, NUMBER_WIDTH)
    if sc.excluded:
        ws.column_dimensions["C"].width = 16
    for col in range(first.column, first.column + 7):
        ws.column_dimensions[get_column_letter(col)].width = NUMBER_WIDTH
    blocks = results_of(sc)
    number_formats(ws, blocks)
    row_heights(ws, sc, blocks)
    page_setup(ws, f"A1:O{ws[last].row}",
                (ws[LAYOUT["checks"]].row - 1, ws[residuals].row - 2, ws[limits_at].row - 2))
    charts(ws, sc, n)


def results_of(sc: Scenario) -> list[tuple[str, list]]:
    """Each table of the calibration sheet as the functions return it for this scenario: (the cell of its
    header row, rows); headerless tables with the header CALIB_LABELS puts above them."""
    from ... import functions

    x, y = [[v] for v in sc.x], [[v] for v in sc.y]
    e = exclude_cells(sc)
    order = functions.calib_order(x, y, None, None, None, sc.weights, e)
    lo, hi = min(sc.x), max(sc.x)
    grid = np.geomspace(lo, hi, GRID) if log_axes(sc) else np.linspace(lo, hi, GRID)
    blocks = [(LAYOUT["orders"], functions.calib_orders(x, y, None, None, sc.weights, e)),
              (LAYOUT["seqf"], functions.calib_seqf(x, y, None, sc.weights, e)),
              (LAYOUT["coefs"], functions.calib_coefs(x, y, order, None, sc.weights, e)),
              (LAYOUT["stats"], functions.calib_stats(x, y, order, sc.weights, e)),
              (LAYOUT["checks"], functions.calib_checks(x, y, order, None, sc.weights, e)),
              (cell_at(LAYOUT["residuals"], -1),
               [HEADERS["residuals"]] + functions.calib_residuals(x, y, order, sc.weights, e)),
              (cell_at(LAYOUT["predict"], -1), [HEADERS["predict"]] + functions.calib_predict(
                  x, y, [[float(g)] for g in grid], order, None, sc.weights, e))]
    if sc.samples:
        blocks.append((cell_at(samples_anchor(len(sc.x)), -1, 1), [HEADERS["inverse"]] + functions.calib_inverse(
            x, y, [[v] for v in sc.samples], None, order, None, sc.weights, e)))
    _, limits_at, weighting_at = limits_anchors(sc)
    blanks = [[v] for v in sc.blanks] or None
    blocks.append((limits_at, functions.calib_limits(x, y, blanks, None, order, None, sc.weights, e)))
    if sc.weights:
        blocks.append((weighting_at, functions.calib_weighting(x, y, None, None, e)))
    return blocks


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
    for i, v in enumerate(sc.compare_at, start=2):
        ws.cell(i, 4, v)
    x, y, _, e = (f"'{today.title}'!{a}" if a else "" for a in arguments(sc, n))
    ref_x, ref_y = f"$A$2:$A${len(sc.reference_y) + 1}", f"$B$2:$B${len(sc.reference_y) + 1}"
    at = f"$D$2:$D${len(sc.compare_at) + 1}"
    ws["F1"] = formula("CALIB_COMPARE", x, y, ref_x, ref_y, at, "", "", "", e)
    rows = 5 + 2 + len(sc.compare_at)
    width = len(HEADERS["compare"])
    for h in (span("A1", 1, 2), span("D1", 1, 1), span("F1", 1, width)):
        style_header(ws, h)
    wrap(ws, span("F2", rows, width))
    detail = get_column_letter(5 + width)
    for letter, wide in {"A": 14, "B": 17, "C": 2, "D": 11, "E": 2, "F": 16, detail: 60}.items():
        ws.column_dimensions[letter].width = wide
    for col in range(7, 5 + width):
        ws.column_dimensions[get_column_letter(col)].width = NUMBER_WIDTH
    for r in range(2, rows + 2):
        ws.row_dimensions[r].height = LINE * 3
    from ... import functions

    cells = [[[v] for v in values] for values in (sc.x, sc.y, sc.x[: len(sc.reference_y)], sc.reference_y,
                                                 sc.compare_at)]
    number_formats(ws, [("F1", functions.calib_compare(*cells, None, None, None, exclude_cells(sc)))])
    page_setup(ws, f"A1:{detail}{max(rows, len(sc.x), len(sc.reference_y)) + 1}", ())  # every standard of both runs


def acceptance_sheet(wb: Workbook, sc: Scenario) -> None:
    """The method's own acceptance criteria in cells, CALIB_ACCEPTANCE of today's standards under them, and the
    samples' standard uncertainties (CALIB_UNCERTAINTY) below."""
    from ... import functions
    from ...engine.validation import CRITERIA_NUMBERS

    ws = wb.create_sheet("Acceptance")
    today = wb[sc.name.capitalize()]
    n = len(sc.x)
    ws["A1"] = "method criteria"
    for i, (label, v) in enumerate(zip(CRITERIA_NUMBERS, sc.criteria), start=2):
        ws.cell(i, 1, label).alignment = WRAP
        ws.cell(i, 2, v).alignment = WRAP
    criteria = f"$B$2:$B${len(sc.criteria) + 1}"
    x, y, w, e = (f"'{today.title}'!{a}" if a else "" for a in arguments(sc, n))
    ws["D1"] = formula("CALIB_ACCEPTANCE", x, y, criteria, "", w, e)
    xs, ys, ex = [[v] for v in sc.x], [[v] for v in sc.y], exclude_cells(sc)
    table = functions.calib_acceptance(xs, ys, [[v] for v in sc.criteria], None, sc.weights, ex)
    at = len(table) + 3  # the uncertainty table's header row
    ws[f"A{at}"] = "sample reading"
    for i, v in enumerate(sc.samples, start=at + 1):
        ws.cell(i, 1, v)
    ws[f"D{at}"] = '=CALIB_LABELS("uncertainty")'
    readings = f"$A${at + 1}:$A${at + len(sc.samples)}"
    ws[f"D{at + 1}"] = formula("CALIB_UNCERTAINTY", x, y, readings, "", "", "", w, e)
    uncertainty = [HEADERS["uncertainty"]] + functions.calib_uncertainty(xs, ys, [[v] for v in sc.samples], None,
                                                                          None, None, sc.weights, ex)
    for h in (span("A1", 1, 2), span("D1", 1, 7), span(f"A{at}", 1, 1), span(f"D{at}", 1, 7)):
        style_header(ws, h)
    wrap(ws, span("D2", len(table) - 1, 7))
    wrap(ws, span(f"D{at + 1}", len(sc.samples), 7))
    for letter, width in {"A": 20, "B": 9, "C": 2, "D": 19, "I": 17, "J": 66}.items():
        ws.column_dimensions[letter].width = width
    for col in range(5, 9):
        ws.column_dimensions[get_column_letter(col)].width = NUMBER_WIDTH
    blocks = [("D1", table), (f"D{at}", uncertainty)]
    number_formats(ws, blocks)
    for r in range(2, len(table) + 1):  # deviations % and the criteria's values: two decimals
        ws[f"G{r}"].number_format = "0.00"
        ws[f"I{r}"].alignment = Alignment(wrap_text=True, vertical="top", horizontal="center")
    fit_rows(ws, blocks + [("A2", [[label] for label in CRITERIA_NUMBERS])])
    page_setup(ws, f"A1:J{at + len(sc.samples)}", ())
