"""What the refresh reads: formula cells without stored values, spills not yet stored, array constants and
whole columns (a refresh computes what the cells would hold, and a second refresh changes nothing)."""

import zipfile
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import openpyxl
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from degreewise.workbook.arithmetic import evaluate_arithmetic
from degreewise.workbook.dependencies import graph_of
from degreewise.workbook.formula import Area, Call, areas_of
from degreewise.commands.refresh import refresh_file

X = [0.0, 5.0, 10.0, 20.0, 40.0, 60.0, 80.0, 100.0, 120.0, 140.0, 160.0, 200.0]
Y = [0.002 + 0.01987 * x + (0.0005 if i % 2 else -0.0004) for i, x in enumerate(X)]


def standards(ws, xs=X, ys=Y, top=2):
    for i, (x, y) in enumerate(zip(xs, ys), start=top):
        ws.cell(i, 1, x)
        ws.cell(i, 2, y)


def book(path: Path, cells: dict, title: str = "Sheet") -> Path:
    """A workbook of the standards in A2:B13 on sheet ``title`` with ``cells`` (address -> value or formula)."""
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = title
    standards(ws)
    for address, value in cells.items():
        ws[address] = value
    wb.save(path)
    return path


def values(path: Path, sheet: str, cells: str):
    ws = openpyxl.load_workbook(path, data_only=True)[sheet]
    return [[c.value for c in row] for row in ws[cells]]


def check(path: Path) -> list[str]:
    return refresh_file(path, check=True, workers=1).lines(check=True)


class TestUnstoredFormulas:
    """A workbook written by a script, or saved without calculation: formula standards with no value."""

    def build(self, path, y9="=(B8+B10)/2"):
        wb = openpyxl.Workbook()
        ws = wb.active
        ws.title = "Cal"
        standards(ws)
        ws["B4"] = "=0.5*0.4*(B3+B5)"
        ws["A6"] = "=A5*2"
        ws["B7"] = "=B6+0.2*2-0.4+'Other sheet'!A1"
        ws["B9"] = y9
        wb.create_sheet("Other sheet")["A1"] = 0
        ws["D2"] = "=CALIB_COEFS(A2:A13,B2:B13,1)"
        wb.save(path)
        return path

    def test_plain_arithmetic_is_computed_and_every_standard_used(self, tmp_path):
        path = self.build(tmp_path / "script.xlsx")
        report = refresh_file(path, workers=1)
        assert report.ok, report.lines()
        y = list(Y)
        x = list(X)
        y[2] = 0.2 * (y[1] + y[3])
        x[4] = x[3] * 2
        y[5] = y[4] + 0.4 - 0.4
        y[7] = (y[6] + y[8]) / 2
        slope, intercept = np.polyfit(x, y, 1)  # numpy's own least squares as the reference
        (b0,), (b1,) = values(path, "Cal", "E3:E4")
        assert b1 == pytest.approx(slope, rel=1e-9)
        assert b0 == pytest.approx(intercept, rel=1e-9)
        assert refresh_file(path, check=True, workers=1).changed is False

    def test_a_formula_it_cannot_compute_names_the_cell_and_nothing_is_fitted(self, tmp_path):
        path = self.build(tmp_path / "lookup.xlsx", y9="=VLOOKUP(1,A2:B3,2)")
        report = refresh_file(path, workers=1)
        message = ("y: Cal!B9 holds =VLOOKUP(1,A2:B3,2) and no stored value, which the refresh cannot compute "
                   "(it uses 'VLOOKUP(', which is not plain arithmetic); open the workbook in the spreadsheet "
                   "program and save it, or enter the number")
        assert report.messages == [("Cal!D2", message)]
        assert not report.ok
        assert values(path, "Cal", "D2:E3") == [[message, None], [None, None]]

    def test_a_chain_of_formulas_longer_than_the_limit_is_refused_in_words(self, tmp_path):
        wb = openpyxl.Workbook()
        ws = wb.active
        standards(ws)
        ws["C1"] = 1.0
        for r in range(2, 400):
            ws.cell(r, 3, f"=C{r - 1}+1")
        ws["B13"] = "=C399"
        ws["D2"] = "=CALIB_COEFS(A2:A13,B2:B13,1)"
        wb.save(tmp_path / "chain.xlsx")
        report = refresh_file(tmp_path / "chain.xlsx", workers=1)
        (cell, text), = report.messages
        assert text.startswith("y: Sheet!C")
        assert "chain of more than 50 such formulas" in text


@pytest.mark.parametrize("text, cells, expected", [
    ("-2^2", {}, 4.0),  # the spreadsheet's precedence: the sign binds first (common practice, as documented)
    ("2^3^2", {}, 64.0),  # left to right
    ("1+2*3-4/2", {}, 5.0),
    ("50%*A1", {"A1": 8.0}, 4.0),
    ("A1+A2", {"A1": None, "A2": True}, 1.0),  # a blank is 0, TRUE is 1
    ("A1*2", {"A1": " 3 "}, 6.0),  # a numeric text is its number
    ("A1*2", {"A1": "abc"}, "#VALUE!"),
    ("1/(A1-A1)", {"A1": 3.0}, "#DIV/0!"),
    ("A1+1", {"A1": "#N/A"}, "#N/A"),
    ('"mg/L"', {}, "mg/L"),
    ("A1", {"A1": None}, 0.0),
    ("10^400", {}, "#NUM!"),
    ("(-8)^(1/3)", {}, "#NUM!"),
])
def test_arithmetic(text, cells, expected):
    def refused(why):
        return AssertionError(why)

    assert evaluate_arithmetic(text, cells.get, refused) == expected


@pytest.mark.parametrize("text, why", [
    ("SUM(A1:A3)", "it uses 'SUM(', which is not plain arithmetic"),
    ("A1>2", "it uses '>', which is not plain arithmetic"),
    ("(1+2", "its brackets do not balance"),
    ("(" * 3000 + "1" + ")" * 3000, "its brackets are nested too deeply"),
])
def test_what_is_not_plain_arithmetic_is_refused(text, why):
    with pytest.raises(ValueError, match=f"^{__import__('re').escape(why)}$"):
        evaluate_arithmetic(text, lambda ref: 1.0, ValueError)


def test_a_first_refresh_computes_a_spill_before_the_formulas_that_read_it(tmp_path):
    """L1 reads residuals under C2's spill, which no earlier refresh has stored; L1 comes first in the sheet."""
    path = book(tmp_path / "first.xlsx", {
        "L1": "=CALIB_COEFS(A2:A13,C2:C13,1)",  # C2 is the anchor: this edge was always known
        "L8": "=CALIB_COEFS(A3:A13,D3:D13,1)",  # D3:D13 lies under the spill only
        "C2": "=CALIB_RESIDUALS(A2:A13,B2:B13,1)"}, "Cal")
    assert refresh_file(path, workers=1).ok
    residuals = [r[0] for r in values(path, "Cal", "D3:D13")]
    slope, intercept = np.polyfit(X[1:], residuals, 1)  # numpy's fit of the residuals as they now stand
    (b0,), (b1,) = values(path, "Cal", "M9:M10")
    assert b1 == pytest.approx(slope, rel=1e-6, abs=1e-12)
    assert b0 == pytest.approx(intercept, rel=1e-6, abs=1e-12)
    assert refresh_file(path, check=True, workers=1).changed is False


def test_array_constants_are_read_as_the_spreadsheet_passes_them(tmp_path):
    path = book(tmp_path / "constants.xlsx", {
        "D2": 1.0, "D3": 25.0, "D4": 60.0,
        "F2": "=CALIB_PREDICT(A2:A13,B2:B13,{1;25;60})", "F10": "=CALIB_PREDICT(A2:A13,B2:B13,D2:D4)",
        "F20": '=CALIB_STATS(A2:A13,B2:B13,{1},{"1/y"})', "I20": '=CALIB_STATS(A2:A13,B2:B13,1,"1/y")',
        "L2": "=CALIB_PREDICT(A2:A13,B2:B13,{1,25})"})
    report = refresh_file(path, workers=1)
    assert report.ok and not report.left_alone, report.lines()
    assert values(path, "Sheet", "F2:J4") == values(path, "Sheet", "F10:J12")
    assert values(path, "Sheet", "F20:G40") == values(path, "Sheet", "I20:J40")
    assert values(path, "Sheet", "L2:L3") == values(path, "Sheet", "F2:F3")  # a row of two: two rows out


def test_a_whole_column_message_does_not_follow_the_sheet_and_a_second_refresh_changes_nothing(tmp_path):
    path = book(tmp_path / "columns.xlsx", {"A1": "x", "B1": "y",  # headers: a message about row 1
                                            "D1": "=CALIB_RESIDUALS(A:A,B:B)", "D40": "=CALIB_COEFS(A2:A13,B2:B13)"})
    refresh_file(path, workers=1)
    (text,), = values(path, "Sheet", "D1:D1")
    assert text.startswith("x, row 1 of 1048576: ")  # a whole column, as the program hands it over
    refresh_file(path, workers=1)
    assert check(path)[0].endswith("nothing would change")
    assert values(path, "Sheet", "D1:D1") == [[text]]


def test_ranges_past_the_sheet_are_refused_and_huge_ranges_cost_a_pointer_per_row(tmp_path):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Data"
    standards(ws)
    out = wb.create_sheet("Out")
    out["A1"] = "=CALIB_COEFS(Data!A1:XFD1048576,Data!B2:B13)"
    out["A3"] = "=CALIB_PREDICT(Data!A2:A13,Data!B2:B13,Data!A1:A9999999)"
    out["A5"] = "=CALIB_PREDICT(Data!A2:A13,Data!B2:B13,Data!D:D)"
    path = tmp_path / "huge.xlsx"
    wb.save(path)
    report = refresh_file(path, workers=1)
    assert report.left_alone == [("Out!A3", "the range Data!A1:A9999999 reaches beyond the sheet's last row "
                                            "(1048576) or column (XFD)")]
    assert report.messages == [("Out!A1", "x: the range is 1048576 rows by 16384 columns; give a single row or "
                                          "column")]
    assert values(path, "Out", "A5:F6") == [[None] * 5 + ["new_x: no values yet; the results appear when the "
                                                           "cells are filled"], [None] * 6]


def _brute_force_graph(by_cell):
    """The dependency graph by comparing every range with every formula (the definition)."""
    return {key: {k for a in areas_of(f.call) for k, g in by_cell.items() if k != key and (
        a.contains(g.sheet, g.row, g.col) or (g.previous is not None and a.overlaps(g.previous)))}
        for key, f in by_cell.items()}


@settings(max_examples=60, deadline=None, derandomize=True)
@given(st.lists(st.tuples(st.sampled_from("ST"), st.integers(1, 30), st.integers(1, 8),
                          st.sampled_from("ST"), st.integers(1, 30), st.integers(0, 12), st.integers(1, 8),
                          st.integers(0, 3), st.booleans(), st.integers(1, 12), st.integers(1, 4)),
                min_size=1, max_size=40))
def test_the_indexed_graph_equals_the_definition(specs):
    by_cell = {}
    for sheet, row, col, on, top, rows, left, cols, whole, height, width in specs:
        area = Area(on, None if whole else top, left, None if whole else top + rows, left + cols)
        previous = Area(sheet, row, col, row + height - 1, col + width - 1) if height * width > 1 else None
        by_cell[(sheet, row, col)] = SimpleNamespace(sheet=sheet, row=row, col=col, previous=previous,
                                                     call=Call("CALIB_ORDER", (area,)))
    assert graph_of(by_cell) == _brute_force_graph(by_cell)


def _sheet_with(path: Path, extra_rows: str) -> Path:
    """The workbook with ``extra_rows`` put at the end of its first sheet's cells, as a hand-edited file holds."""
    with zipfile.ZipFile(path) as z:
        parts = {i.filename: z.read(i) for i in z.infolist()}
    xml = parts["xl/worksheets/sheet1.xml"].decode()
    at = xml.index("</sheetData>")
    parts["xl/worksheets/sheet1.xml"] = (xml[:at] + extra_rows + xml[at:]).encode()
    with zipfile.ZipFile(path, "w") as z:
        for name, data in parts.items():
            z.writestr(name, data)
    return path


@pytest.mark.parametrize("extra, why", [
    ('<row r="30"><c r="A30"><v>7</v></c></row><row r="30"><c r="B30"><v>8</v></c></row>',
     "has row 30 twice; a refresh could lose a row"),
    ('<row r="30"><c r="A30"><v>7</v></c></row><row r="29"><c r="B29"><v>8</v></c></row>',
     "has row 29 out of order; a refresh could lose a row"),
    ('<row r="30"><c r="A30"><v>7</v></c></row><!-- <row r="31"><c r="A31"><v>8</v></c></row> -->',
     "holds a comment among its cells, which the refresh does not edit"),
])
def test_malformed_rows_are_refused_in_words_and_the_file_kept(tmp_path, extra, why):
    path = book(tmp_path / "rows.xlsx", {"D2": "=CALIB_COEFS(A2:A13,B2:B13,1)"})
    before = _sheet_with(path, extra).read_bytes()
    report = refresh_file(path, workers=1)
    assert report.error == (f"part xl/worksheets/sheet1.xml {why}" + (
        ": open and save the workbook in the spreadsheet program, then refresh it" if "lose" in why else
        "; open and save the workbook in the spreadsheet program, then refresh it"))
    assert path.read_bytes() == before


def test_a_row_the_refresh_does_not_edit_is_kept_verbatim_even_with_a_cell_twice(tmp_path):
    path = book(tmp_path / "rows.xlsx", {"D2": "=CALIB_COEFS(A2:A13,B2:B13,1)"})
    row = '<row r="30"><c r="A30"><v>7</v></c><c r="A30"><v>8</v></c></row>'
    _sheet_with(path, row)
    assert refresh_file(path, workers=1).written
    with zipfile.ZipFile(path) as z:
        assert row in z.read("xl/worksheets/sheet1.xml").decode()  # both cells, as stored
