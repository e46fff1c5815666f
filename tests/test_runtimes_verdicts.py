"""CALIB_ACCEPTANCE and CALIB_UNCERTAINTY as the spreadsheet runtimes call them: xlwings' own desktop and
browser code (tests/xlwings_runtimes.py) against direct calls, a criteria set by name and by cells, and the
exact messages."""

import pytest
import xlwings_runtimes as rt
from xlwings_runtimes import MISSING, ComRange

import degreewise

# invented: seven levels in duplicate, one standard at 20 reads 21 % high
X = [1.0, 1.0, 2.0, 2.0, 5.0, 5.0, 10.0, 10.0, 20.0, 20.0, 50.0, 50.0, 100.0, 100.0]
Y = [0.051, 0.049, 0.102, 0.099, 0.251, 0.248, 0.502, 0.497, 1.21, 0.996, 2.51, 2.49, 4.98, 5.03]
READINGS = [0.3, "n.d.", 2.2]
BAD_LEVELS = ("criteria, row 4 of 4: the minimum levels 5.5 must be a whole number of at least 2, or empty")


def column(values):
    return [[v] for v in values]


def com_column(values):
    return ComRange(tuple((v,) for v in values))


EXPECTED = [
    degreewise.calib_acceptance(column(X), column(Y), "ICH M10 chromatographic"),
    degreewise.calib_acceptance(column(X), column(Y), column([15, None, 75, 6]), 1),
    BAD_LEVELS,
    degreewise.calib_uncertainty(column(X), column(Y), column(READINGS), 2, 1),
]


def as_desktop(result):
    if not isinstance(result, list):
        return result
    rows = [["" if v is None else v for v in r] for r in result]
    return rows[0][0] if len(rows) == 1 and len(rows[0]) == 1 else rows


def as_browser(result):
    return [["" if v is None else v for v in r] for r in (result if isinstance(result, list) else [[result]])]


@pytest.fixture(scope="module")
def desktop():
    return rt.desktop([
        ("CALIB_ACCEPTANCE", (com_column(X), com_column(Y), "ICH M10 chromatographic", MISSING, MISSING, MISSING)),
        ("CALIB_ACCEPTANCE", (com_column(X), com_column(Y), com_column([15.0, None, 75.0, 6.0]), 1.0, MISSING,
                              MISSING)),
        ("CALIB_ACCEPTANCE", (com_column(X), com_column(Y), com_column([15.0, None, 75.0, 5.5]), MISSING, MISSING,
                              MISSING)),
        ("CALIB_UNCERTAINTY", (com_column(X), com_column(Y), com_column(READINGS), 2.0, 1.0, MISSING, MISSING,
                               MISSING)),
    ])["results"]


@pytest.fixture(scope="module")
def browser():
    whole = [int(v) if v.is_integer() else v for v in X]  # Office.js whole numbers reach Python as int
    return rt.browser([
        ("calib_acceptance", (column(whole), column(Y), [["ICH M10 chromatographic"]], None, None, None)),
        ("calib_acceptance", (column(whole), column(Y), column([15, None, 75, 6]), [[1]], None, None)),
        ("calib_acceptance", (column(whole), column(Y), column([15, None, 75, 5.5]), None, None, None)),
        ("calib_uncertainty", (column(whole), column(Y), column(READINGS), [[2]], [[1]], None, None, None)),
    ])["results"]


def test_direct_calls_hold_what_the_runtimes_must_show():
    acceptance = EXPECTED[0]
    assert acceptance[0] == ["item", "x", "back-calculated x", "value", "limit", "result", "detail"]
    assert [r[5] for r in acceptance if r[0] == "standard 9 of 14"] == ["fail"]
    # unweighted over two decades the lowest level reads 31 % and 35 % low: not acceptable, three exclusions
    assert [r[5] for r in acceptance if r[0] == "verdict"] == ["not acceptable"]
    assert [r[5] for r in acceptance if r[0].startswith("could exclude ")] == [
        "then not acceptable", "then not acceptable", "then acceptable"]
    assert EXPECTED[3][1][-1] == ("reading, row 2 of 3: the text 'n.d.' is not a number; enter a number or clear "
                                  "the cell")


@pytest.mark.parametrize("case", range(len(EXPECTED)))
def test_desktop_calls_give_the_direct_results(desktop, case):
    assert desktop[case] == as_desktop(EXPECTED[case])


@pytest.mark.parametrize("case", range(len(EXPECTED)))
def test_browser_calls_give_the_direct_results(browser, case):
    assert browser[case] == as_browser(EXPECTED[case])
