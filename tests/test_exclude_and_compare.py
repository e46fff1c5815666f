"""Excluded standards stay on the record, and today's calibration against a reference, as the worksheet
functions give them. The reference for exclusion is the same calibration with the row removed (the
functions' own numbers on other input); for CALIB_COMPARE the engine's comparison, itself checked
against statsmodels in test_compare.py."""

import math

import numpy as np
import openpyxl
import pytest

import degreewise
from degreewise import engine
from degreewise.prepared import clear_caches
from degreewise.commands.refresh import refresh_file

# invented: a probe calibrated at six levels in duplicate; row 6 (x = 25) had an air bubble
X = [0.0, 0.0, 10.0, 10.0, 25.0, 25.0, 50.0, 50.0, 75.0, 75.0, 100.0, 100.0]
Y = [0.0064, 0.0030, 0.2059, 0.1954, 0.4959, 0.4000, 0.9936, 0.9961, 1.4958, 1.4939, 1.9877, 1.9910]
BAD = 5
REASON = "air bubble, inj. 3"


def column(values):
    return [[v] for v in values]


def without(values, i=BAD):
    return column([v for j, v in enumerate(values) if j != i])


EXCLUDE = column([REASON if i == BAD else None for i in range(len(X))])


@pytest.fixture(autouse=True)
def fresh_caches():
    clear_caches()


@pytest.mark.parametrize("call", [
    lambda x, y, e: degreewise.calib_order(x, y, None, None, None, None, *e),
    lambda x, y, e: degreewise.calib_order(x, y, 3, 0.1, "bic", None, *e),
    lambda x, y, e: degreewise.calib_orders(x, y, None, None, None, *e),
    lambda x, y, e: degreewise.calib_seqf(x, y, None, None, *e),
    lambda x, y, e: degreewise.calib_coefs(x, y, None, 0.9, None, *e),
    lambda x, y, e: degreewise.calib_predict(x, y, column([5.0, 60.0]), None, None, None, *e),
    lambda x, y, e: degreewise.calib_inverse(x, y, column([0.3, 1.2]), 2, None, None, None, *e),
])
def test_an_excluded_standard_gives_the_numbers_of_the_calibration_without_it(call):
    assert call(column(X), column(Y), (EXCLUDE,)) == call(without(X), without(Y), ())


def test_stats_count_and_name_the_excluded_standard_and_agree_otherwise():
    got = degreewise.calib_stats(column(X), column(Y), None, None, EXCLUDE)
    plain = degreewise.calib_stats(without(X), without(Y))
    assert got[3] == ["points excluded", 1]
    assert got[4] == ["excluded standard", f"standard 6 of 12, x = 25, y = 0.4: {REASON}"]
    assert got[:3] + got[5:] == plain[:3] + plain[4:]  # the rest: the row-removed calibration's
    assert plain[3] == ["points excluded", 0]


def test_residual_rows_keep_the_excluded_standard_against_the_curve():
    rows = degreewise.calib_residuals(column(X), column(Y), None, None, EXCLUDE)
    plain = degreewise.calib_residuals(without(X), without(Y))
    assert len(rows) == len(X)
    assert rows[:BAD] + rows[BAD + 1:] == plain
    fitted, resid, stud, lev, cook, back, dev, note = rows[BAD]
    cal = engine.Calibration(np.delete(X, BAD), np.delete(Y, BAD))
    order = degreewise.calib_order(column(X), column(Y), None, None, None, None, EXCLUDE)
    assert fitted == engine.predict(cal, [25.0], order)[0].fitted
    assert resid == pytest.approx(0.4 - fitted, rel=1e-15)
    assert back == engine.inverse(cal, [0.4], order)[0].x  # the inverse of its response on the curve
    assert dev == pytest.approx(100 * (back - 25.0) / 25.0, rel=1e-14)
    assert (stud, lev, cook) == (None, None, None)  # not in the fit
    assert note == f"excluded: {REASON}"
    assert dev < -15  # the air bubble reads about 20 % low


def test_checks_name_excluded_standards_apart_from_flagged_ones():
    rows = {r[0]: r for r in degreewise.calib_checks(column(X), column(Y), None, None, None, EXCLUDE)}
    for name in ("outliers", "influential points"):
        assert rows[name][4].endswith(f"excluded from the fit (not tested): standard 6 of 12, x = 25, y = 0.4: {REASON}")
    assert "excluded" not in rows["lack of fit"][4]


def test_true_excludes_without_a_reason_and_false_zero_blank_keep():
    keep = column([False, 0, 0.0, None, "", "  "] + [None] * 6)
    assert degreewise.calib_coefs(column(X), column(Y), None, None, None, keep) == degreewise.calib_coefs(column(X), column(Y))
    marked = column([True if i == BAD else None for i in range(len(X))])
    assert degreewise.calib_residuals(column(X), column(Y), None, None, marked)[BAD][7] == "excluded: no reason given"


def test_changing_one_exclude_cell_changes_every_result_at_once():
    first = degreewise.calib_coefs(column(X), column(Y), None, None, None, EXCLUDE)
    other = column([REASON if i == 7 else None for i in range(len(X))])
    second = degreewise.calib_coefs(column(X), column(Y), None, None, None, other)
    assert first != second
    assert second == degreewise.calib_coefs(without(X, 7), without(Y, 7))
    renamed = column(["pipetting" if i == BAD else None for i in range(len(X))])
    assert degreewise.calib_residuals(column(X), column(Y), None, None, renamed)[BAD][7] == "excluded: pipetting"


def test_an_excluded_row_may_hold_a_failed_reading():
    y = list(Y)
    y[BAD] = "#N/A"
    rows = degreewise.calib_residuals(column(X), column(y), None, None, EXCLUDE)
    assert rows[BAD] == [None] * 7 + [f"excluded: {REASON}"]
    stats = degreewise.calib_stats(column(X), column(y), None, None, EXCLUDE)
    assert stats[4] == ["excluded standard", f"standard 6 of 12, x = 25, y not a number: {REASON}"]


@pytest.mark.parametrize("cell, message", [
    (2, "exclude, row 6 of 12: the number 2 is not a reason; enter TRUE or a reason to exclude the standard, "
        "or FALSE, 0 or nothing to keep it"),
    ("#N/A", "exclude, row 6 of 12: the cell holds the error #N/A; enter TRUE or a reason to exclude the "
             "standard, or FALSE, 0 or nothing to keep it"),
    (-2146826281, "exclude, row 6 of 12: the cell holds the error #DIV/0!; enter TRUE or a reason to exclude "
                  "the standard, or FALSE, 0 or nothing to keep it"),
])
def test_bad_exclude_cells_are_answered_with_their_position(cell, message):
    exclude = column([cell if i == BAD else None for i in range(len(X))])
    assert degreewise.calib_coefs(column(X), column(Y), None, None, None, exclude) == [[message]]


def test_exclude_of_another_size_is_refused():
    assert degreewise.calib_order(column(X), column(Y), None, None, None, None, column([True] * 3)) == (
        "exclude has 3 cells and x has 12: give one cell per standard (TRUE or a reason excludes it; blank, "
        "FALSE or 0 keeps it)")


def test_refresh_passes_exclude_like_any_other_range(tmp_path):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Probe"
    for i, (a, b, c) in enumerate(zip(X, Y, [r[0] for r in EXCLUDE]), start=2):
        ws.cell(i, 1, a), ws.cell(i, 2, b)
        if c:
            ws.cell(i, 3, c)
    ws["E1"] = "=CALIB_COEFS(A2:A13,B2:B13,,,,C2:C13)"
    ws["E10"] = "=CALIB_RESIDUALS(A2:A13,B2:B13,,,C2:C13)"
    path = tmp_path / "probe.xlsx"
    wb.save(path)
    report = refresh_file(path)
    assert report.error is None and sorted(report.refreshed) == ["Probe!E1", "Probe!E10"]
    got = openpyxl.load_workbook(path, data_only=True)["Probe"]
    coefs = degreewise.calib_coefs(without(X), without(Y))
    assert [[got.cell(1 + i, 5 + j).value for j in range(7)] for i in range(len(coefs))] == coefs
    assert got.cell(10 + BAD, 12).value == f"excluded: {REASON}"


# -- CALIB_COMPARE --------------------------------------------------------------------------------

REF_X = [0.0, 0.0, 10.0, 10.0, 25.0, 25.0, 50.0, 50.0, 75.0, 75.0, 100.0, 100.0]
REF_Y = [0.0041, 0.0052, 0.1990, 0.2011, 0.5012, 0.4968, 0.9920, 1.0013, 1.4890, 1.4975, 1.9850, 1.9902]


def test_compare_rows_carry_the_engine_comparison_in_words():
    rows = degreewise.calib_compare(column(X), column(Y), column(REF_X), column(REF_Y), column([10.0, 80.0]),
                                    None, None, None, EXCLUDE)
    assert rows[0] == ["item", "reference", "today", "difference", "lower", "upper", "F", "df num", "df den",
                       "p-value", "verdict", "detail"]
    assert [r[0] for r in rows[1:]] == ["same curve", "same shape", "same residual SD", "intercept", "x",
                                        "at x = 10", "at x = 80", "caution"]
    today = engine.Calibration(np.delete(X, BAD), np.delete(Y, BAD))
    reference = engine.Calibration(REF_X, REF_Y)
    assert engine.shared_order(today, reference).order == 1
    c = engine.compare(today, engine.Calibration(REF_X, REF_Y, 1), 1, 0.95, [10.0, 80.0])
    for row, test in zip(rows[1:4], (c.same_curve, c.same_shape, c.same_sd)):
        assert row[6:10] == [test.statistic, test.df_num, test.df_den, test.p_value]  # F and its df in cells
    assert rows[1][6:9] == [c.same_curve.statistic, 2, 19]
    assert rows[1][11].startswith(f"F = {c.same_curve.statistic:.4g} on 2 and 19 df: ")
    assert rows[1][11].endswith("both curves of order 1 (the order the default rule picks for both sets' standards "
                                "together); tested at 0.05")
    assert rows[3][1:3] == [c.reference_sd, c.today_sd]
    for row, diff in zip(rows[4:6], c.coefficients):
        assert row[1:10] == [diff.reference, diff.today, diff.difference, diff.lower, diff.upper, None, None, None,
                             diff.p_value]
        assert row[11] == f"{100 * diff.difference / diff.reference:+.3g} % of the reference"
    for row, diff, back in zip(rows[6:8], c.levels, c.read_back):
        assert row[1:10] == [diff.reference, diff.today, diff.difference, diff.lower, diff.upper, None, None, None,
                             diff.p_value]
        assert row[11].endswith(f"the reference curve reads today's response as x = {back:.6g}")


def test_compare_takes_a_scheme_only_and_names_the_reference_in_messages():
    args = column(X), column(Y), column(REF_X), column(REF_Y)
    assert degreewise.calib_compare(*args, None, None, None, column([1.0] * 12)) == [[
        "weights: CALIB_COMPARE takes a scheme ('1/x', '1/x^2', '1/y', '1/y^2') applied to each set on its own "
        "data, not a range of weights"]]
    bad_ref = column(REF_Y[:4] + ["n.d."] + REF_Y[5:])
    assert degreewise.calib_compare(column(X), column(Y), column(REF_X), bad_ref) == [[
        "reference calibration: ref_y, row 5 of 12: the text 'n.d.' is not a number; enter a number or clear "
        "the cell"]]
    assert degreewise.calib_compare(column(X), column(Y), column(REF_X[:4]), column(REF_Y[:4]), None, 3) == [[
        "reference calibration: order 3 needs at least 4 distinct x values and 5 points; there are 2 and 4"]]


def test_an_excluded_standard_beyond_the_responses_says_why_it_has_no_back_calculated_x():
    x, y = column([1, 2, 3, 4, 5, 6, 7]), column([2.1, 4.0, 6.1, 7.9, 10.2, 11.9, 30.0])
    rows = degreewise.calib_residuals(x, y, 1, None, [[None]] * 6 + [["spike"]])
    assert rows[6][2:7] == [None] * 5
    assert rows[6][7] == ("excluded: spike; reading above the calibrated response range [2.07619, 11.9905], above "
                          "the highest standard: no estimate outside the calibrated range")


def test_a_reference_too_small_to_choose_an_order_on_its_own_is_compared_at_the_shared_order():
    """Three reference standards cannot choose an order by themselves; with today's six they share order 1
    (each set fits it with a residual degree of freedom)."""
    today_x, today_y = column([0, 1, 2, 3, 4, 5]), column([0.1, 1.1, 2.0, 3.1, 4.0, 5.1])
    rows = degreewise.calib_compare(today_x, today_y, column([0, 1, 2]), column([0.0, 1.0, 2.1]))
    want = engine.compare(engine.Calibration([0, 1, 2, 3, 4, 5], [0.1, 1.1, 2.0, 3.1, 4.0, 5.1]),
                          engine.Calibration([0, 1, 2], [0.0, 1.0, 2.1], 1), 1).same_curve
    assert rows[1][6:10] == [want.statistic, 2, 5, want.p_value]
    assert rows[1][11].endswith("both curves of order 1 (the order the default rule picks for both sets' standards "
                                "together); tested at 0.05")
