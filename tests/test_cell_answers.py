"""What the worksheet layer answers for every input: results never served from a stale cache entry, empty
sample ranges, cells the engine cannot use, the number of arguments, and one wording per rule (the engine's
checks, with the engine's positions turned into cells). A fuzz of random cells ends with no "internal
error" cell, directly and through xlwings' own desktop and browser code."""

import datetime
import decimal
import math

import numpy as np
import openpyxl
import pytest
import xlwings_runtimes as rt
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from random_cells import as_com, as_js, internal, random_calls

import degreewise
from degreewise import engine
from degreewise.commands.freeze import freeze
from degreewise.commands.refresh import refresh_file
from degreewise.prepared import clear_caches
from conftest import column, workbook

# an invented calibration: six levels, nearly straight, the third standard excluded for a bubble
X = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0]
Y = [1.1, 2.0, 3.2, 3.9, 5.1, 6.0]
BUBBLE = [None, None, "air bubble", None, None, None]
ALPHA_MIN = 1e-4  # engine.validation.ALPHA_MIN
ALPHA_RULE = "alpha must be from 0.0001 to below 0.5 (for example 0.05), not "


def with_y3(value):
    return column([value if i == 2 else v for i, v in enumerate(Y)])


# ---- issue 28 item 1: the cache key covers everything a result depends on ----

def test_a_changed_excluded_standard_is_never_served_stale():
    clear_caches()
    before = degreewise.calib_residuals(column(X), with_y3(3.2), None, None, column(BUBBLE))
    after = degreewise.calib_residuals(column(X), with_y3(3.3), None, None, column(BUBBLE))
    stats = degreewise.calib_stats(column(X), with_y3(3.3), None, None, column(BUBBLE))
    checks = degreewise.calib_checks(column(X), with_y3(3.3), None, None, None, column(BUBBLE))
    clear_caches()
    assert after == degreewise.calib_residuals(column(X), with_y3(3.3), None, None, column(BUBBLE))
    # the fit leaves the excluded standard out, so its fitted value stays and its residual moves by 0.1
    assert after[2][0] == before[2][0] and after[2][1] == pytest.approx(before[2][1] + 0.1, abs=1e-12)
    assert ["excluded standard", "standard 3 of 6, x = 3, y = 3.3: air bubble"] in stats
    assert any("y = 3.3: air bubble" in (row[4] or "") for row in checks)


def _sheet(ws, y3):
    for i, (a, b, e) in enumerate(zip(X, Y, BUBBLE), start=1):
        ws.cell(i, 1, a)
        ws.cell(i, 2, y3 if i == 3 else b)
        ws.cell(i, 3, e)
    ws["E1"] = "=CALIB_RESIDUALS(A1:A6,B1:B6,,,C1:C6)"


def test_a_refresh_writes_each_sheet_its_own_excluded_standard(tmp_path):
    path = tmp_path / "two runs.xlsx"
    wb = openpyxl.Workbook()
    _sheet(wb.active, 3.2)
    _sheet(wb.create_sheet("Run 2"), 3.3)
    wb.save(path)
    assert refresh_file(path).error is None
    book = openpyxl.load_workbook(path, data_only=True)
    for sheet, y3 in ((book.worksheets[0], 3.2), (book["Run 2"], 3.3)):
        clear_caches()
        expected = degreewise.calib_residuals(column(X), with_y3(y3), None, None, column(BUBBLE))
        assert [[sheet.cell(r, c).value for c in range(5, 13)] for r in range(1, 7)] == expected


CELL = st.one_of(st.none(), st.sampled_from([1.0, 2.0, 2.5, 3.0, 4.0, 7.0, 0.0, -1.0, 1e300, "n.d.", "#N/A", True,
                                             False, " ", "reason"]),
                 st.floats(-10, 10, allow_nan=False), st.integers(-3, 9))
OPTION = st.one_of(st.none(), st.none(), st.none(), st.sampled_from([1, 2, 0.01, 0.9, 0.05, 3, "1/x", "1/y", "x"]))
FAMILY = [  # (function, its arguments after x and y: a range of the case, an option, or None)
    (degreewise.calib_order, ("opt", "opt", None, "w", "ex")),
    (degreewise.calib_orders, ("opt", "opt", "w", "ex")),
    (degreewise.calib_seqf, ("opt", "w", "ex")),
    (degreewise.calib_coefs, ("opt", "opt", "w", "ex")),
    (degreewise.calib_stats, ("opt", "w", "ex")),
    (degreewise.calib_predict, ("cells", "opt", "opt", "w", "ex")),
    (degreewise.calib_inverse, ("cells", "opt", "opt", "opt", "w", "ex")),
    (degreewise.calib_residuals, ("opt", "w", "ex")),
    (degreewise.calib_checks, ("opt", "opt", "w", "ex")),
    (degreewise.calib_limits, ("cells", "opt", "opt", "opt", "w", "ex")),
    (degreewise.calib_weighting, ("opt", "opt", "ex")),
    (degreewise.calib_compare, ("ref_x", "ref_y", "cells", "opt", "opt", None, "ex")),
    (degreewise.calib_acceptance, ("cells", "opt", "w", "ex")),  # the cells as the analyst's own criteria
    (degreewise.calib_uncertainty, ("cells", "opt", "opt", "opt", "w", "ex")),
]
NUMBER = st.one_of(st.sampled_from([1.0, 2.0, 3.0, 4.0, 5.0, 6.0]), st.floats(0.5, 9, allow_nan=False))
REASON = st.one_of(st.none(), st.none(), st.sampled_from([True, "reason", "bubble"]))


@st.composite
def inputs_and_change(draw):
    """The inputs of the family (x, y, weights, exclude, reference standards, a sample range, options, whether
    weights are given, whether the ranges are rows or columns), mostly usable, and the same with one thing
    changed: a cell, an option, the weighting or the ranges' direction."""
    n = draw(st.integers(5, 9))

    def cells(usual):  # a quarter of the ranges hold one cell of any kind
        values = draw(st.lists(usual, min_size=n, max_size=n))
        if draw(st.integers(0, 3)) == 0:
            values[draw(st.integers(0, n - 1))] = draw(CELL)
        return values

    case = {"x": cells(NUMBER), "y": cells(NUMBER), "ex": cells(REASON), "w": cells(st.floats(0.1, 5)),
            "ref_x": cells(NUMBER), "ref_y": cells(NUMBER),
            "cells": draw(st.lists(st.one_of(NUMBER, CELL), min_size=1, max_size=4)),
            "opt": draw(st.lists(OPTION, min_size=4, max_size=4)), "weighted": draw(st.booleans()), "row": False}
    changed = {k: v if isinstance(v, bool) else list(v) for k, v in case.items()}
    which = draw(st.sampled_from(sorted(case)))
    if which in ("weighted", "row"):
        changed[which] = not case[which]
    else:
        i = draw(st.integers(0, len(changed[which]) - 1))
        changed[which][i] = draw(OPTION if which == "opt" else st.one_of(NUMBER, REASON, CELL))
    return case, changed


def _call(f, spec, case):
    def cells(values):
        return [values] if case["row"] else column(values)

    options = iter(case["opt"])
    args = [next(options) if s == "opt" else None if s is None or (s == "w" and not case["weighted"])
            else cells(case[s]) for s in spec]
    return f(cells(case["x"]), cells(case["y"]), *args)


@pytest.mark.slow
@settings(max_examples=80, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(inputs_and_change())
def test_any_changed_input_gives_the_fresh_result(case_and_change):
    """Each function of the family called on inputs A, then on A with one thing changed (the caches warm):
    the result equals a fresh computation's (caches cleared), whether the key changed or not."""
    case, changed = case_and_change
    clear_caches()
    for f, spec in FAMILY:
        _call(f, spec, case)
    warm = [_call(f, spec, changed) for f, spec in FAMILY]
    clear_caches()
    fresh = [_call(f, spec, changed) for f, spec in FAMILY]
    assert repr(warm) == repr(fresh)  # repr: a nan equals itself


# ---- issue 28 item 4: empty sample ranges ----

NO_NEW_X = "new_x: no values yet; the results appear when the cells are filled"
NO_READING = "reading: no values yet; the results appear when the cells are filled"


@pytest.mark.parametrize("empty", [[[None]], [[None], [None], [None]], [[None, None]], [[" "]], None])
def test_an_empty_sample_range_gives_one_row_that_says_so(empty):
    assert degreewise.calib_predict(column(X), column(Y), empty) == [[None] * 5 + [NO_NEW_X]]
    assert degreewise.calib_inverse(column(X), column(Y), empty) == [[None] * 3 + [NO_READING]]


def test_a_range_of_bad_cells_only_gives_their_notes():
    assert degreewise.calib_inverse(column(X), column(Y), [["n.d."]]) == [[
        None, None, None, "reading, row 1 of 1: the text 'n.d.' is not a number; enter a number or clear the cell"]]


def test_a_template_without_samples_is_refreshed_and_frozen(tmp_path):
    path = tmp_path / "template.xlsx"
    workbook(path, {1: X, 2: Y}, {"D1": "=CALIB_PREDICT(A1:A6,B1:B6,C1:C4)", "D10": "=CALIB_INVERSE(A1:A6,B1:B6,C10:C14)",
                                  "D20": "=CALIB_ORDER(A1:A6,B1:B6)"})
    report = refresh_file(path)
    assert report.error is None and sorted(report.refreshed) == ["Sheet!D1", "Sheet!D10", "Sheet!D20"]
    sheet = openpyxl.load_workbook(path, data_only=True).active
    assert [sheet.cell(1, c).value for c in range(4, 10)] == [None] * 5 + [NO_NEW_X]
    assert [sheet.cell(10, c).value for c in range(4, 8)] == [None] * 3 + [NO_READING]
    assert sheet["D20"].value == degreewise.calib_order(column(X), column(Y))
    assert freeze(path, tmp_path / "frozen.xlsx").error is None


# ---- issue 28 item 11: answered in words ----

@pytest.mark.parametrize("call,message", [
    (lambda: degreewise.calib_order(column(X), column(Y), None, None, None, column([datetime.datetime(2024, 1, 2)] * 6)),
     1),  # a date-formatted weight is its serial day number, like any other date cell
    (lambda: degreewise.calib_order(column(X), column(Y), None, None, None, None, None, 1, 2),
     "CALIB_ORDER takes 2 to 7 arguments (x, y, max_order, alpha, rule, weights, exclude); 9 were given"),
    (lambda: degreewise.calib_coefs(column(X)),
     [["CALIB_COEFS takes 2 to 6 arguments (x, y, order, level, weights, exclude); 1 was given"]]),
    (lambda: degreewise.calib_version(1), "CALIB_VERSION takes no arguments; 1 was given"),
    (lambda: degreewise.calib_labels("predict", 2), [["CALIB_LABELS takes 1 argument (name); 2 were given"]]),
    (lambda: degreewise.calib_order(column([decimal.Decimal("sNaN")] + X[1:]), column(Y)),
     "x, row 1 of 6: the value is not a number (NaN); enter a number or clear the cell"),
    (lambda: degreewise.calib_order(column(X), column(Y), decimal.Decimal("NaN")),
     "max_order: the value is not a number (NaN); leave it empty or enter a whole number such as 3"),
    (lambda: degreewise.calib_order(column(X), column(Y[:5] + [decimal.Decimal("Infinity")])),
     "y, row 6 of 6: the value is infinite; enter a number or clear the cell"),
    (lambda: degreewise.calib_limits(column(X), column(Y), None, None, None, 1e-21), [[ALPHA_RULE + "1e-21"]]),
    (lambda: degreewise.calib_limits(column(X), column(Y), None, None, None, 1e-5), [[ALPHA_RULE + "1e-05"]]),
    (lambda: degreewise.calib_order(column([10**400] + X[1:]), column(Y)),
     "x, row 1 of 6: the number is too large for double precision (beyond 1.8e308); enter a number or clear the cell"),
    (lambda: degreewise.calib_order(column(X), column(Y), -10**400),
     "max_order: the number is too large for double precision (beyond 1.8e308); leave it empty or enter a whole "
     "number such as 3"),
    (lambda: degreewise.calib_order(column(X), column(Y), None, None, None, column([10**400] * 6)),
     "weights, row 1 of 6: the number is too large for double precision (beyond 1.8e308); enter a positive number"),
    (lambda: degreewise.calib_inverse(column(X), column(Y), [[10**400]]),
     [[None, None, None, "reading, row 1 of 1: the number is too large for double precision (beyond 1.8e308); "
                         "enter a number or clear the cell"]]),
])
def test_unusual_cells_are_answered_in_words(call, message):
    assert call() == message


def test_the_smallest_alpha_gives_limits():
    assert engine.validation.ALPHA_MIN == ALPHA_MIN
    rows = degreewise.calib_limits(column(X), column(Y), None, None, None, ALPHA_MIN)
    assert rows[1][0] == "prediction band" and all(math.isfinite(v) for v in rows[1][1:3])
    for df in range(1, 400):  # the ISO 11843-2 delta brackets its root at the smallest alpha
        assert math.isfinite(engine.limits.iso_delta(df, ALPHA_MIN, ALPHA_MIN))


# ---- issue 27 item 3: one wording per rule, the engine's positions as cells ----

@pytest.mark.parametrize("engine_call,cell_call,message", [
    (lambda c: engine.choose_order(c, alpha=0.7), lambda: degreewise.calib_order(column(X), column(Y), None, 0.7),
     ALPHA_RULE + "0.7"),
    (lambda c: engine.predict(c, [3.0], 1, 1.5), lambda: degreewise.calib_coefs(column(X), column(Y), None, 1.5),
     "level must be between 0 and 1 (for example 0.95), not 1.5"),
    (lambda c: engine.inverse(c, [3.0], 1, 0), lambda: degreewise.calib_inverse(column(X), column(Y), [[3.0]], 0),
     "replicates must be a whole number of at least 1, not 0"),
    (lambda c: engine.Calibration(X, Y, max_order=0), lambda: degreewise.calib_orders(column(X), column(Y), 0),
     "max_order must be at least 1, not 0"),
    (lambda c: engine.choose_order(c, rule="best"),
     lambda: degreewise.calib_order(column(X), column(Y), None, None, "best"),
     "rule 'best' is not known; use one of 'stepdown', 'forward', 'aicc', 'bic', 'press'"),
])
def test_the_engine_and_the_cells_say_the_same(engine_call, cell_call, message):
    with pytest.raises(engine.CalibrationError) as err:
        engine_call(engine.Calibration(X, Y))
    assert err.value.message == message
    assert cell_call() in (message, [[message]])


def test_a_scheme_that_needs_x_above_zero_names_the_cell():
    x = [None, 0.0] + X[1:]
    y = [None, 0.1] + Y[1:]
    with pytest.raises(engine.WeightError) as err:
        engine.Calibration([0.0] + X[1:], [0.1] + Y[1:], weights="1/x")
    assert err.value.message == "weights '1/x' need every x > 0, but x[0] is 0"
    assert degreewise.calib_coefs(column(x), column(y), None, None, "1/x") == [[
        "weights '1/x' need every x > 0, but x, row 2 of 7 is 0"]]
    note = [r for r in degreewise.calib_weighting(column(x), column(y)) if r[0] == "1/x"][0][-1]
    assert note == "does not apply: weights '1/x' need every x > 0, but x, row 2 of 7 is 0"


def test_a_fitted_response_below_zero_under_1_over_y_names_the_cell():
    x, y = [None, 0.0, 1.0, 2.0, 3.0, 4.0, 5.0], [None, -0.5, 2.1, 3.9, 6.2, 8.0, 9.9]
    assert degreewise.calib_coefs(column(x), column(y), None, None, "1/y") == [[
        "weights '1/y' need a fitted y > 0 at every standard, but the curve gives -0.417857 at x = 0 (x, row 2 of 7); "
        "use 1/x weights or none"]]


def test_a_weight_that_is_not_positive_names_the_cell():
    with pytest.raises(engine.WeightError) as err:
        engine.Calibration(X, Y, weights=[1, 1, -2, 1, 1, 1])
    assert err.value.message == "weights[2] is -2: every weight must be a positive finite number"
    assert degreewise.calib_coefs(column([None] + X), column([None] + Y), None, None,
                                  column([5, 1, 1, -2, 1, 1, 1])) == [[
        "weights, row 4 of 7 is -2: every weight must be a positive finite number"]]


def test_engine_entry_points_check_what_they_are_given():
    cal = engine.Calibration(X, Y)
    with pytest.raises(engine.DataError) as err:
        engine.compare(cal, cal, 1, at=[math.nan])
    assert err.value.message == "at[0] is nan: every value must be a finite number"
    with pytest.raises(engine.OrderError) as err:
        engine.compare(cal, cal, 0)
    assert err.value.message == "order must be at least 1, not 0"
    x = np.repeat([1.0, 2.0, 4.0, 8.0], 3)
    y = x * (1 + 0.05 * np.random.default_rng(3).standard_normal(x.size))
    with pytest.raises(engine.OptionError) as err:
        engine.spread_exponent(x, y, level=5)
    assert err.value.message == "level must be between 0 and 1 (for example 0.95), not 5"
    for entry in (engine.spread_exponent, engine.Calibration):  # the standards checked as a pair
        with pytest.raises(engine.DataError) as err:
            entry(x, y[:-1])
        assert (err.value.message, err.value.argument) == ("x has 12 values and y has 11: give one y for every x", "y")
    with pytest.raises(engine.WeightError) as err:  # each scheme is fitted from the unweighted standards
        engine.compare_weightings(engine.Calibration(x, y, weights="1/x"))
    assert (err.value.message, err.value.argument) == (
        "compare_weightings needs the unweighted calibration; each scheme is fitted from it", "weights")


# ---- the fuzz: random cells through the functions, directly and through xlwings' own code ----
# (benchmarks/fuzz_cells.py runs the same with more calls)

def test_random_calls_are_answered_in_words():
    bad = [(name, result) for name, args in random_calls(2000, seed=2026)
           if internal(result := getattr(degreewise, name)(*args))]
    assert bad == []


@pytest.mark.slow
def test_random_calls_through_the_runtimes_are_answered_in_words():
    calls = random_calls(200, seed=7)
    results = rt.desktop(as_com(calls))["results"] + rt.browser(as_js(calls))["results"]
    assert [r for r in results if internal(r)] == []


def test_a_message_quoting_a_message_stays_short():
    """A cell's text is quoted to 40 characters, so a chain of cells each reading the message of the one
    before does not grow its messages (8,000 such cells took 12 GB when every message quoted the last)."""
    from degreewise.coercion import describe

    long = "alpha must be from 0.0001 to below 0.5 (for example 0.05), not 1"
    assert describe(long) == "the text 'alpha must be from 0.0001 to below 0....' is not a number"
    assert describe("n.d.") == "the text 'n.d.' is not a number"
