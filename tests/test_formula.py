"""Reading stored CALIB_* formulas: one scanner for quotes and brackets, and every form in which a file
stores a user-defined function."""

import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from hypothesis import given
from hypothesis import strategies as st

import degreewise
from degreewise.workbook.formula import Area, Unsupported, parse_call, quote_sheet, shift_references
from degreewise.commands.refresh import refresh_file

RNG = np.random.default_rng(1311)
X = np.repeat([1.0, 3.0, 6.0, 12.0, 25.0, 50.0], 2)  # invented standards
Y = 2.0 + 0.7 * X + RNG.normal(0, 0.2, X.size)


@pytest.mark.parametrize("name", ["a)b", "a,b", "it's", "Run 2", "Run (2", 'Sheet"4', "x ) , ( '' y", "((", "'", ",)"])
def test_quoted_sheet_names_hold_any_bracket_comma_quote_or_space(name):
    """The bug that had two scanners: `_split_args` skipped quoted sheet names, `_closing` did not."""
    quoted = "'" + name.replace("'", "''") + "'"
    call = parse_call(f"=CALIB_ORDER({quoted}!A1:A5,{quoted}!$B$1:$B$5,,0.01)", "Home", {})
    assert call.name == "CALIB_ORDER"
    assert call.args == (Area(name, 1, 1, 5, 1), Area(name, 1, 2, 5, 2), None, 0.01)
    assert quote_sheet(name) == quoted


@pytest.mark.parametrize("text", [
    '=CALIB_ORDER(A1:A5,B1:B5,,,"seq(f")',
    '=CALIB_ORDER(A1:A5,B1:B5,,,"say ""hi"", then )")',
    "=CALIB_ORDER('a)b'!A1:A5,'it''s'!B1:B5)",
])
def test_texts_and_names_with_brackets_do_not_end_the_call(text):
    assert len(parse_call(text, "S", {}).args) in (2, 5)


@pytest.mark.parametrize("text,why", [
    ("=CALIB_ORDER('a)b'!A1:A5,B1:B5)+1", "the formula mixes CALIB_* with other functions or operators"),
    ("=ROUND(CALIB_ORDER(A1:A5,B1:B5),0)", "the formula mixes CALIB_* with other functions or operators"),
    ("=CALIB_ORDER('a)b!A1:A5,B1:B5)", "the formula's quotes or brackets do not balance"),
    ('=CALIB_ORDER(A1:A5,B1:B5,"x)', "the formula's quotes or brackets do not balance"),
    ("=CALIB_ORDER((A1:A5,B1:B5)", "the formula's quotes or brackets do not balance"),
    ("=OTHER.CALIB_ORDERX(A1:A5,B1:B5)", "the formula mixes CALIB_* with other functions or operators"),
])
def test_what_is_not_one_call_is_left_alone_with_the_true_reason(text, why):
    with pytest.raises(Unsupported, match=f"^{why.replace('*', '[*]').replace('(', '[(]')}$"):
        parse_call(text, "S", {})


@given(st.text(alphabet="ab ()',\"!xyz", min_size=1, max_size=12))
def test_every_sheet_name_round_trips_through_its_quoted_form(name):
    quoted = quote_sheet(name)
    call = parse_call(f"=CALIB_COEFS({quoted}!A1:A9,{quoted}!B1:B9)", "Home", {})
    assert call.args == (Area(name, 1, 1, 9, 1), Area(name, 1, 2, 9, 2))
    assert shift_references(f"{quoted}!A1:A9", 0, 1) == f"{quoted}!B1:B9"


# Forms in which a stored formula names a user-defined function (ECMA-376 Part 1 / MS-XLSX 2.2.2 formula
# grammar: a user-defined function name with an optional book prefix "[n]!"; "_xludf." marks a function the
# program did not know when it saved, "_xll." one registered by a compiled add-in, "_xldudf_" with the namespace
# joined by "_" a custom function of an Office.js add-in such as in-workbook Python; the VBA wrappers that
# xlwings generates declare the lower-case Python names).
FORMS = ["CALIB_ORDER", "calib_order", "Calib_Order", "_xludf.CALIB_ORDER", "_xll.CALIB_ORDER", "[1]!calib_order",
         "[2]!CALIB_ORDER", "_xldudf_CALIB_ORDER", "_xldudf_DEGREEWISE_CALIB_ORDER", "DEGREEWISE.CALIB_ORDER",
         "_xludf.calib_order"]


@pytest.mark.parametrize("form", FORMS)
def test_every_stored_form_of_the_family_is_computed_and_kept_as_typed(tmp_path, form):
    path = tmp_path / "forms.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Data"
    for i, (a, b) in enumerate(zip(X, Y), start=2):
        ws.cell(i, 1, float(a))
        ws.cell(i, 2, float(b))
    ws["D1"] = f"={form}(A2:A13,B2:B13)"
    ws["D3"] = f"={form.replace('ORDER', 'COEFS').replace('order', 'coefs').replace('Order', 'Coefs')}" \
               f"(A2:A13,B2:B13,{form}(A2:A13,B2:B13))"
    wb.save(path)
    report = refresh_file(path)
    assert report.ok and report.refreshed == ["Data!D1", "Data!D3"], report.lines()
    stored = openpyxl.load_workbook(path, data_only=True)["Data"]
    xs = [[stored.cell(i, 1).value] for i in range(2, 14)]
    ys = [[stored.cell(i, 2).value] for i in range(2, 14)]
    order = degreewise.calib_order(xs, ys)
    assert stored["D1"].value == order
    assert [[c.value for c in row] for row in stored[f"D3:J{4 + order}"]] == degreewise.calib_coefs(xs, ys, order)
    with zipfile.ZipFile(path) as z:
        sheet = z.read("xl/worksheets/sheet1.xml").decode()
    assert f"<f>{form}(A2:A13,B2:B13)</f>" in sheet  # the formula as typed, never rewritten


def test_a_name_that_only_contains_the_family_is_not_ours(tmp_path):
    path = Path(tmp_path / "other.xlsx")
    wb = openpyxl.Workbook()
    wb.active["D1"] = "=MYCALIB_ORDER(A2:A13,B2:B13)"
    wb.active["D2"] = "=X_CALIB_ORDER(A2:A13,B2:B13)"
    wb.save(path)
    report = refresh_file(path)
    assert report.left_alone == [(f"Sheet!D{r}", "the formula mixes CALIB_* with other functions or operators")
                                 for r in (1, 2)]
