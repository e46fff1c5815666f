"""Where each block of a demo sheet sits and how its cells look: anchors, formulas, styles, page set-up."""

from __future__ import annotations

import math

from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter, range_boundaries
from openpyxl.worksheet.pagebreak import Break

from .scenarios import Scenario

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


def arguments(sc: Scenario, n: int) -> tuple[str, str, str, str]:
    x, y = f"$A$2:$A${n + 1}", f"$B$2:$B${n + 1}"
    w = f'"{sc.weights}"' if sc.weights else ""
    e = f"$C$2:$C${n + 1}" if sc.excluded else ""
    return x, y, w, e


def formula(name: str, *args: str) -> str:
    while args and args[-1] == "":
        args = args[:-1]
    return f"={name}({','.join(args)})"


def log_axes(sc: Scenario) -> bool:
    """Log axes when the standards span more than two decades or the fit is weighted."""
    return min(sc.x) > 0 and (max(sc.x) / min(sc.x) > 100 or sc.weights is not None)


def style_header(ws, cells: str) -> None:
    """Style a header row (the cells a table's header will fill; the refresh keeps cell styles)."""
    for row in ws[cells]:
        for c in row:
            c.font, c.fill, c.alignment = HEADER_FONT, HEADER_FILL, WRAP


def wrap(ws, cells: str) -> None:
    for row in ws[cells]:
        for c in row:
            c.alignment = WRAP


def cell_at(anchor: str, rows: int = 0, cols: int = 0) -> str:
    col, row, _, _ = range_boundaries(anchor)
    return f"{get_column_letter(col + cols)}{row + rows}"


def span(anchor: str, rows: int, cols: int) -> str:
    """The range of ``rows`` x ``cols`` cells from ``anchor``."""
    return f"{anchor}:{cell_at(anchor, rows - 1, cols - 1)}"


def samples_anchor(n: int) -> str:
    """The first sample reading, two rows below the back-calculated standards of ``n`` standards; the
    CALIB_INVERSE anchor is the cell to its right."""
    return cell_at(LAYOUT["residuals"], n + 2)


def limits_anchors(sc: Scenario) -> tuple[str, str, str]:
    """The first blank reading (column A, its header beside the limits' header), the CALIB_LIMITS anchor and the
    CALIB_WEIGHTING anchor: three rows below the last block above them, each table ending in the wide column O
    with its notes."""
    n = len(sc.x)
    last = cell_at(samples_anchor(n), len(sc.samples) - 1) if sc.samples else cell_at(LAYOUT["residuals"], n - 1)
    row = range_boundaries(last)[1] + 4
    return f"A{row + 1}", f"J{row}", f"I{row + 8}"


def lines_of(text, width: float) -> int:
    """Lines a wrapped text takes in a column ``width`` characters wide (a character-count estimate)."""
    return max(1, *(math.ceil(len(part) / (1.2 * width)) for part in str(text or "").split("\n")))


def exclude_cells(sc: Scenario):
    """The exclude column as the functions receive it (None when the scenario excludes nothing)."""
    if not sc.excluded:
        return None
    reasons = dict(sc.excluded)
    return [[reasons.get(i)] for i in range(len(sc.x))]


def page_setup(ws, area: str, breaks: tuple[int, ...]) -> None:
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
