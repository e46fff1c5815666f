"""Number formats, column widths and row heights from the values the functions return, so that live, frozen
and printed pages read without one number running into the next."""

from __future__ import annotations

import math

from openpyxl.utils import get_column_letter, range_boundaries

from ...catalogue import HEADERS
from .layout import LINE, NUMBER_WIDTH, cell_at, exclude_cells, lines_of, samples_anchor
from .scenarios import Scenario


P_FORMAT = '[<0.0001]"<0.0001";0.0000'  # p-values: four decimals, the smallest shown as a bound
COUNTS = ("order", "df", "residual df", "points used", "points skipped", "points excluded", "x min", "x max")


def number_format_for(label, values) -> str | None:
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


def shown(value, fmt: str) -> str:
    """About the text a number takes under ``fmt`` (for column widths)."""
    if fmt == P_FORMAT:
        return "<0.0001"
    if fmt.endswith("E+00"):
        return f"{value:.4E}"
    decimals = len(fmt) - 2 if fmt.startswith("0.") else 0
    return f"{value:.{decimals}f}"


def number_formats(ws, blocks) -> None:
    """Number formats on every result cell (the refresh keeps them) and column widths that hold the formatted
    numbers, so that live, frozen and printed pages read without one number running into the next."""
    need: dict[int, float] = {}
    for anchor, rows in blocks:
        if not (isinstance(rows, list) and len(rows) > 1):
            continue
        col0, row0, _, _ = range_boundaries(anchor)
        header, body = rows[0], rows[1:]
        if tuple(header) == HEADERS["stats"]:
            formats = [[None, number_format_for(r[0], [r[1]])] for r in body]
        else:
            columns = [number_format_for(h, [r[j] for r in body if j < len(r)]) for j, h in enumerate(header)]
            formats = [columns] * len(body)
        for i, (row, fmts) in enumerate(zip(body, formats), start=1):
            for j, (value, fmt) in enumerate(zip(row, fmts)):
                if fmt is None:
                    continue
                ws.cell(row0 + i, col0 + j).number_format = fmt
                if isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value):
                    need[col0 + j] = max(need.get(col0 + j, 0), len(shown(value, fmt)) + 2)
    for col, chars in need.items():
        letter = get_column_letter(col)
        ws.column_dimensions[letter].width = max(ws.column_dimensions[letter].width or NUMBER_WIDTH, chars)


def row_heights(ws, sc: Scenario, blocks) -> None:
    """Heights for rows whose wrapped texts need more than one line (spreadsheet programs do not fit rows
    on opening a file); the texts are those the functions return for this calibration."""
    blocks = blocks + [("A1", [(sc.x_label, sc.y_label)])]
    if sc.samples:
        blocks.append((cell_at(samples_anchor(len(sc.x)), -1), [("sample reading",) + HEADERS["inverse"]]))
    if sc.excluded:
        blocks.append(("C2", exclude_cells(sc)))
    fit_rows(ws, blocks)


def fit_rows(ws, blocks) -> None:
    """Row heights for the wrapped texts of ``blocks`` ((anchor, rows) as the cells will hold them)."""
    need: dict[int, int] = {}
    for anchor, rows in blocks:
        col0, row0, _, _ = range_boundaries(anchor)
        for i, row in enumerate(rows):
            for j, value in enumerate(row):
                width = ws.column_dimensions[get_column_letter(col0 + j)].width or NUMBER_WIDTH
                if isinstance(value, str):
                    need[row0 + i] = max(need.get(row0 + i, 1), lines_of(value, width))
    for r, lines in need.items():
        if lines > 1:
            ws.row_dimensions[r].height = LINE * lines
