"""Writing one formula's result into its sheet under the spill rules of the spreadsheet program: a result that
would cover a non-empty cell, a merged block or a table, or reach beyond the sheet's edge, is not written
(the anchor shows #SPILL!); cells the previous result covered and the new one does not are cleared; a
result of several cells is stored as a dynamic array; every change goes into the audit trail."""

from __future__ import annotations

from ..catalogue import TEXT_ANSWERS
from ..xlsx.cells import MAX_COL, MAX_ROW, cell_name, column_letters
from ..xlsx.sheet import Sheet
from .audit import Report, agrees, change
from .formula import Area

TEXT_RESULTS = {name.upper() for name in TEXT_ANSWERS}  # functions whose one-cell result is a text, not a message


def blocked(sheet: Sheet, f, height: int, width: int, old_cells: set) -> str | None:
    """Why the program would not let this result spill (its #SPILL! reasons), or None."""
    size = f"the result ({height} x {width})"
    bottom, right = f.row + height - 1, f.col + width - 1
    if bottom > MAX_ROW or right > MAX_COL:
        edge = f"row {MAX_ROW}" if bottom > MAX_ROW else f"column {column_letters(MAX_COL)}"
        return f"{size} would reach beyond the sheet's last {edge}; nothing was written"
    if height == width == 1:
        return None
    anchor = (f.row, f.col)
    covered = sheet.block(f.row, bottom, f.col, right)
    in_the_way = next((k for i, row in enumerate(covered) for j, value in enumerate(row)
                       for k in [(f.row + i, f.col + j)] if k != anchor and k not in old_cells
                       and (value is not None or k in sheet.formulas)), None)
    if in_the_way is not None:
        return f"{size} would cover {cell_name(*in_the_way)}, which is not empty; nothing was overwritten"
    boxes = [("the merged cells", box) for box in sheet.merged] + [(f"the table {name}", box)
                                                                  for name, box in sheet.tables]
    for what, (top, left, low, high) in boxes:
        if not (bottom < top or low < f.row or right < left or high < f.col):
            return (f"{size} would spill into {what} {cell_name(top, left)}:{cell_name(low, high)}, "
                    "where the spreadsheet program does not allow a spilled result; nothing was written")
    return None


def write(sheet: Sheet, f, rows, cm, report: Report) -> bool:
    """Store one result; True when a cell was given the dynamic-array record ``cm``."""
    height, width = len(rows), max(len(r) for r in rows)
    anchor = (f.row, f.col)
    old_cells = set()
    if f.previous is not None and f.previous.top is not None:
        old_cells = {(r, c) for r in range(f.previous.top, f.previous.bottom + 1)
                     for c in range(f.previous.left, f.previous.right + 1)}
    why = blocked(sheet, f, height, width, old_cells)
    if why is not None:
        report.blocked.append((f.where, why))
        rows, height, width = [["#SPILL!"]], 1, 1
    else:
        report.refreshed.append(f.where)
        if height == width == 1 and isinstance(rows[0][0], str) and f.call.name not in TEXT_RESULTS:
            report.messages.append((f.where, rows[0][0]))
    # a spill is stored as a dynamic array; an anchor stored as an array keeps that form whatever its result
    array = height > 1 or width > 1 or f.attrs.get("t") == "array"
    own_cm = cm if (height > 1 or width > 1) and anchor not in sheet.dynamic else None
    cell_cm = sheet.dynamic.get(anchor) or own_cm
    new = Area(f.sheet, f.row, f.col, f.row + height - 1, f.col + width - 1)
    changed = f.previous != (new if array else None)
    if height > 1 or width > 1:
        report.spills.append((f.where, new))
    listed, cleared = [], []  # the audit trail, as text
    bottom, right = f.row + height - 1, f.col + width - 1
    sheet.parse_rows(f.row, bottom)
    if f.previous is not None and f.previous.top is not None:
        sheet.parse_rows(f.previous.top, f.previous.bottom)
    for key in sorted(old_cells):
        if f.row <= key[0] <= bottom and f.col <= key[1] <= right:
            continue
        style = sheet.style(*key)
        sheet.set_cells(key[0], {key[1]: sheet.cell_xml(*key, None, style) if style is not None else None})
        old = sheet.value(*key)
        if old is not None:
            sheet.write(key[0], {key[1]: None})
            cleared.append(f"{cell_name(*key)} {change(old, None)}")
    ref = None if not array else (cell_name(f.row, f.col) if height == width == 1 else
                                  f"{cell_name(f.row, f.col)}:{cell_name(new.bottom, new.right)}")
    letters = [column_letters(f.col + j) for j in range(width)]
    for i, row in enumerate(rows):
        r = f.row + i
        if len(row) < width:
            row = list(row) + [None] * (width - len(row))
        cells, values = {}, {}
        stored, written = sheet.row_state(r)
        for j, value in enumerate(row):
            c = f.col + j
            cell = stored.get(c)
            style = None if cell is None else cell[1]
            old = written[c] if c in written else None if cell is None else cell[0]
            if agrees(old, value):  # another machine's last digits: the stored value stays
                value = old
            if i == 0 and j == 0:
                if f.shift is not None:  # a filled formula keeps its stored <f> element as it is
                    cells[c] = sheet.cell_xml(r, c, value, style, stored_f=sheet.formulas[anchor])
                else:
                    cells[c] = sheet.cell_xml(r, c, value, style, f.text, ref, cell_cm)
            elif value is None and style is None:
                cells[c] = None
            else:
                cells[c] = sheet.cell_xml(r, c, value, style)
            if old != value or isinstance(old, bool) != isinstance(value, bool):
                listed.append(f"{letters[j]}{r} {change(old, value)}")
                values[c] = value
        sheet.set_cells(r, cells)
        sheet.write(r, values)
    listed += cleared
    if listed:  # one line of text per formula, however large its table (no object per cell is kept)
        trail = listed[0].split(" ", 1)[1] if height == width == len(listed) == 1 else "; ".join(listed)
        report.add_change(f.where, (height, width), len(listed), trail)
    report.changed |= changed or bool(listed)
    return own_cm is not None
