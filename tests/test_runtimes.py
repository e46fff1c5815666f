"""The functions as the spreadsheet runtimes really call them: xlwings' own registration and call code
(tests/xlwings_runtimes.py), desktop and browser, against direct calls and exact messages.

Each runtime runs once per test session in its own interpreter (a few seconds each)."""

import datetime
import decimal
import inspect

import numpy as np
import openpyxl
import pytest
import xlwings_runtimes as rt
from xlwings_runtimes import MISSING, ComRange, JsError

import degreewise
from degreewise.catalogue import ARGUMENTS
from degreewise.commands.refresh import refresh_file
from conftest import column, workbook

# an invented calibration: six levels in duplicate, slightly curved; the last standard reads high (an outlier)
X = [0.5, 0.5, 1.0, 1.0, 2.0, 2.0, 4.0, 4.0, 6.0, 6.0, 8.0, 8.0]
Y = [0.061, 0.058, 0.118, 0.121, 0.236, 0.241, 0.468, 0.463, 0.688, 0.695, 0.905, 0.991]
N = len(X)
SHEET_ROWS = 1_048_576  # a whole-column reference
NA = "y, row 3 of 12: the cell holds the error #N/A; enter a number or clear the cell"
DIV0 = "y, column 3 of 12: the cell holds the error #DIV/0!; enter a number or clear the cell"
TEXT_READING = "reading, row 2 of 3: the text 'n.d.' is not a number; enter a number or clear the cell"


def with_error(values, i, error):
    return [error if j == i else v for j, v in enumerate(values)]


def com_column(values):
    return ComRange(tuple((v,) for v in values))


def com_row(values):
    return ComRange((tuple(values),))


def as_desktop(result):
    """What xlwings hands back to the desktop: empty cells as "", one cell as a scalar, one row as a list."""
    if not isinstance(result, list):
        return result
    rows = [["" if v is None else v for v in r] for r in result]
    if len(rows) == 1:
        return rows[0][0] if len(rows[0]) == 1 else rows[0]
    return rows


def as_browser(result):
    """What xlwings hands back to Office.js: empty cells as "", always rows."""
    return [["" if v is None else v for v in r] for r in (result if isinstance(result, list) else [[result]])]


# (what is called, the direct call it must equal; None where the result is a message checked by itself)
EXPECTED = [
    degreewise.calib_coefs(column(X), column(Y)),                       # column ranges
    degreewise.calib_coefs(column(X), column(Y)),                       # row ranges
    NA,                                                                 # #N/A among the standards
    DIV0,                                                               # #DIV/0! in a row range
    degreewise.calib_coefs(column(X), column(Y)),                       # a currency cell (desktop) / int
    degreewise.calib_order(column(X), column(Y)),                       # omitted optionals
    degreewise.calib_checks(column(X), column(Y), 1),                   # checks name rows
    degreewise.calib_checks([X], [Y], 1),                               # ... or columns
    None,                                                               # a text reading: a note in its row
    degreewise.calib_coefs(column(X), column(Y)),                       # trailing blank rows
]


def desktop_calls():
    y_currency = [decimal.Decimal(str(v)) if i == 4 else v for i, v in enumerate(Y)]
    return [
        ("CALIB_COEFS", (com_column(X), com_column(Y), MISSING, MISSING, MISSING)),
        ("CALIB_COEFS", (com_row(X), com_row(Y), MISSING, MISSING, MISSING)),
        ("CALIB_COEFS", (com_column(X), com_column(with_error(Y, 2, -2146826246)), MISSING, MISSING, MISSING)),
        ("CALIB_COEFS", (com_row(X), com_row(with_error(Y, 2, -2146826281)), MISSING, MISSING, MISSING)),
        ("CALIB_COEFS", (com_column(X), com_column(y_currency), MISSING, MISSING, MISSING)),
        ("CALIB_ORDER", (com_column(X), com_column(Y), MISSING, MISSING, MISSING, MISSING)),
        ("CALIB_CHECKS", (com_column(X), com_column(Y), 1.0, MISSING, MISSING)),
        ("CALIB_CHECKS", (com_row(X), com_row(Y), 1.0, MISSING, MISSING)),
        ("CALIB_INVERSE", (com_column(X), com_column(Y), com_column([0.3, "n.d.", 0.5]), MISSING, 1.0, MISSING,
                           MISSING)),
        ("CALIB_COEFS", (com_column(X + [None] * 40), com_column(Y + [None] * 40), MISSING, MISSING, MISSING)),
        # a date-formatted x cell counts as its serial day number: 2024-01-02 is day 45293 (from 1899-12-30)
        ("CALIB_COEFS", (com_column([datetime.datetime(2024, 1, 2)] + X[1:]), com_column(Y), MISSING, MISSING,
                         MISSING)),
        ("CALIB_RESIDUALS", (ComRange(tuple((v,) for v in X), SHEET_ROWS - N),
                             ComRange(tuple((v,) for v in Y), SHEET_ROWS - N), 1.0, MISSING)),
    ]


def browser_calls():
    def js(values):  # Office.js numbers reach Python as int when whole (Pyodide's conversion)
        return [int(v) if isinstance(v, float) and v.is_integer() else v for v in values]

    return [
        ("calib_coefs", (column(js(X)), column(Y), None, None, None)),
        ("calib_coefs", ([js(X)], [Y], None, None, None)),
        ("calib_coefs", (column(js(X)), column(with_error(Y, 2, JsError("#N/A", "NotAvailable"))), None, None, None)),
        ("calib_coefs", ([js(X)], [with_error(Y, 2, JsError("#DIV/0!", "Div0"))], None, None, None)),
        ("calib_coefs", (column(js(X)), column(js(Y)), None, None, None)),
        ("calib_order", (column(js(X)), column(Y), None, None, None, None)),
        ("calib_checks", (column(js(X)), column(Y), [[1]], None, None)),
        ("calib_checks", ([js(X)], [Y], [[1]], None, None)),
        ("calib_inverse", (column(js(X)), column(Y), column([0.3, "n.d.", 0.5]), None, [[1]], None, None)),
        ("calib_coefs", (column(js(X) + [None] * 40), column(Y + [None] * 40), None, None, None)),
        ("calib_residuals", (rt.Column(js(X), SHEET_ROWS - N), rt.Column(Y, SHEET_ROWS - N), [[1]], None)),
    ]


@pytest.fixture(scope="module")
def desktop():
    return rt.desktop(desktop_calls())


@pytest.fixture(scope="module")
def browser():
    return rt.browser(browser_calls())


def signature(name):
    return inspect.signature(getattr(degreewise, name)).parameters.values()


def test_import_functions_writes_one_wrapper_per_function_with_optional_arguments(desktop):
    vba = desktop["vba"]
    assert vba.count("\nFunction ") == len(degreewise.FUNCTIONS)
    for name in degreewise.FUNCTIONS:
        args = ", ".join(("Optional " if p.default is not p.empty else "") + p.name for p in signature(name))
        assert f"\nFunction {name.upper()}({args})\n" in vba
        assert f'Py.CallUDF("degreewise", "{name.upper()}", Array(' in vba  # Py. in xlwings 0.30, XLPy. later
    # VBA keywords cannot name arguments (the language reference's list, recalled from memory: the ones
    # that could plausibly name an argument)
    keywords = {"and", "as", "call", "case", "const", "date", "dim", "do", "each", "else", "end", "error", "for",
                "function", "get", "if", "in", "is", "let", "like", "me", "mod", "new", "next", "not", "nothing",
                "on", "or", "option", "optional", "print", "property", "resume", "select", "set", "step", "stop",
                "string", "sub", "then", "to", "type", "until", "while", "with", "xor"}
    assert not keywords & set(ARGUMENTS)


def test_import_functions_describes_every_function_and_argument_in_the_degreewise_category(desktop):
    options = {macro: kw for macro, kw in desktop["options"]}
    assert sorted(options) == sorted(f"'calibrations.xlsm'!{n.upper()}" for n in degreewise.FUNCTIONS)
    for name in degreewise.FUNCTIONS:
        kw = options[f"'calibrations.xlsm'!{name.upper()}"]
        assert kw["Category"] == "Degreewise"
        assert kw["Description"] == " ".join(getattr(degreewise, name).__doc__.split()) and "\n" not in kw[
            "Description"] and len(kw["Description"]) <= 255
        expected = [ARGUMENTS[p.name] for p in signature(name)] or None
        assert kw["ArgumentDescriptions"] == expected


def test_custom_function_metadata_lists_every_function_with_optional_flags_and_descriptions(browser):
    meta = {f["id"]: f for f in browser["meta"]["functions"]}
    assert sorted(meta) == sorted(n.upper() for n in degreewise.FUNCTIONS)
    for name in degreewise.FUNCTIONS:
        f = meta[name.upper()]
        assert f["name"] == name.upper() and "\n" not in f["description"] and "  " not in f["description"]
        assert [(p["name"], p["description"], p.get("optional", False)) for p in f["parameters"]] == [
            (p.name, ARGUMENTS[p.name], p.default is not p.empty) for p in signature(name)]
    assert browser["meta"]["allowErrorForDataTypeAny"] is True  # error cells reach the function as objects


@pytest.mark.parametrize("case", range(len(EXPECTED)))
def test_desktop_calls_give_the_direct_results_and_exact_messages(desktop, case):
    result = desktop["results"][case]
    if case == 8:  # the bad reading gets a note in its own row; the others are computed
        direct = degreewise.calib_inverse(column(X), column(Y), column([0.3, None, 0.5]), None, 1)
        assert result[1] == ["", "", "", TEXT_READING]
        assert [result[0], result[2]] == as_desktop([direct[0], direct[2]])
    else:
        assert result == as_desktop(EXPECTED[case])


@pytest.mark.parametrize("case", range(len(EXPECTED)))
def test_browser_calls_give_the_direct_results_and_exact_messages(browser, case):
    result = browser["results"][case]
    if case == 8:
        direct = degreewise.calib_inverse(column(X), column(Y), column([0.3, None, 0.5]), None, 1)
        assert result[1] == ["", "", "", TEXT_READING]
        assert [result[0], result[2]] == as_browser([direct[0], direct[2]])
    else:
        assert result == as_browser(EXPECTED[case])


def test_row_and_column_ranges_give_the_same_tables(desktop, browser):
    # messages about a cell say "row" or "column" (the #N/A and #DIV/0! cases above); the checks name
    # standards by their position, whichever way the range runs
    for results in (desktop["results"], browser["results"]):
        by_rows, by_columns = results[6], results[7]
        assert by_rows == by_columns
        outliers = [r for r in by_rows if r[0] == "outliers"][0]
        assert outliers[3] == "warning" and outliers[4].startswith(f"standard 12 of {N}, x = 8, y = 0.991 (")


def test_a_date_cell_counts_as_its_serial_day_number_on_the_desktop(desktop):
    assert desktop["results"][10] == as_desktop(degreewise.calib_coefs(column([45293.0] + X[1:]), column(Y)))


def test_whole_columns_as_the_runtimes_deliver_them_give_the_rows_up_to_the_last_filled_one(desktop, browser):
    # xlwings' conversion is declared to cut the blank rows before it cleans each cell (registration._reader)
    direct = degreewise.calib_residuals(column(X), column(Y), 1)
    assert desktop["results"][11] == as_desktop(direct) and browser["results"][10] == as_browser(direct)


def test_the_refresh_gives_the_same_message_for_an_error_among_the_standards(tmp_path):
    workbook(tmp_path / "book.xlsx", {1: X, 2: with_error(Y, 2, "#N/A")}, {"D1": f"=CALIB_COEFS(A1:A{N},B1:B{N})"})
    assert openpyxl.load_workbook(tmp_path / "book.xlsx").active["B3"].data_type == "e"  # an error cell, as the
    # spreadsheet stores #N/A
    assert refresh_file(tmp_path / "book.xlsx").error is None
    assert openpyxl.load_workbook(tmp_path / "book.xlsx", data_only=True).active["D1"].value == NA


def test_long_columns_are_cut_after_their_last_filled_row():
    rows = 100_000  # one blank row object each, as the refresh and Python callers pass them
    xs = column(X) + [[None] for _ in range(rows - N)]
    ys = column(Y) + [[None] for _ in range(rows - N)]
    assert degreewise.calib_residuals(xs, ys, 1) == degreewise.calib_residuals(column(X), column(Y), 1)
    stats = dict(map(tuple, degreewise.calib_stats(xs, ys, 1)[1:]))
    assert stats["points skipped"] == 0
    assert degreewise.calib_coefs(xs, ys[:-1]) == [[
        f"x has {rows} cells and y has {rows - 1}: give ranges of the same size"]]
    assert np.isfinite(degreewise.calib_coefs(xs, ys)[1][1])
