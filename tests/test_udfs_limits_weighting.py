"""CALIB_LIMITS and CALIB_WEIGHTING called as the spreadsheet calls them (nested lists, None, text), and the
lists that register every worksheet function, tied together.

Values are checked against the engine (whose formulas are checked in test_limits.py and
test_weighting_choice.py against independent computations).
"""

import inspect
import math
import re
from pathlib import Path

import numpy as np
import pytest

import degreewise
from degreewise import catalogue, engine, functions
from degreewise.catalogue import HEADERS, LIMITS_AFTER_CHOICE, WEIGHTING_AFTER_CHOICE
from degreewise.workbook import compute

pytestmark = pytest.mark.usefixtures("fresh_caches")

# Miller & Miller's fluorescence standards (recalled from memory; see test_limits.py)
X = [[0.0], [2.0], [4.0], [6.0], [8.0], [10.0], [12.0]]
Y = [[2.1], [5.0], [9.0], [12.6], [17.3], [21.0], [24.7]]
METHODS = ["prediction band", "ISO 11843-2", "ICH residual SD", "ICH intercept SE"]


def flat(v):
    return [r[0] for r in v]


def test_limits_table_equals_the_engine():
    rows = degreewise.calib_limits(X, Y, [[2.0], [2.3], [1.9], [2.2], [2.1]], 2)
    assert rows[0] == list(HEADERS["limits"])
    assert [r[0] for r in rows[1:]] == [*METHODS, "blank readings", "caution"]
    assert all(len(r) == 6 for r in rows)
    want = engine.detection_limits(engine.Calibration(flat(X), flat(Y)), 1, [2.0, 2.3, 1.9, 2.2, 2.1], 2)
    for got, r in zip(rows[1:], want):
        assert got[1:5] == [None if math.isnan(v) else v for v in r[1:5]] and got[5] == r.note
    assert rows[2][4] is None and rows[3][1:3] == [None, None]  # ISO: no quantitation; ICH: no decision limit
    assert rows[-1][5].startswith("estimates from one calibration: confirm them with samples near the limit")
    # the order was chosen from the same standards: the caution states the false-positive rate that gives
    assert f"; {LIMITS_AFTER_CHOICE}. " in rows[-1][5]
    assert f"; {LIMITS_AFTER_CHOICE}. " not in degreewise.calib_limits(X, Y, None, None, 1)[-1][5]


def test_blank_cells_skip_as_everywhere_and_bad_blank_readings_are_answered_in_words():
    plain = degreewise.calib_limits(X, Y, [[2.0], [2.3], [1.9]])
    assert degreewise.calib_limits(X + [[None]], Y + [[3.0]], [[2.0], [None], [2.3], [""], [1.9]]) == plain
    cases = {
        "text": ([[2.0], ["n.d."], [2.3]],
                 "blank, row 2 of 3: the text 'n.d.' is not a number; enter a number or clear the cell"),
        "error": ([[2.0], ["#N/A"]], "blank, row 2 of 2: the cell holds the error #N/A; enter a number or clear "
                                     "the cell"),
        "one": ([[2.0], [None]], "blank: 1 reading; the blank method needs at least 2 readings to estimate their SD"),
        "empty": ([[None], [""]], "blank: the range holds no readings; enter at least 2 blank readings or leave "
                                  "the argument empty"),
    }
    for name, (blank, message) in cases.items():
        rows = degreewise.calib_limits(X, Y, blank)
        assert rows[5] == ["blank readings", None, None, None, None, message], name
        assert rows[1:5] == plain[1:5], name  # the other methods are computed
    assert degreewise.calib_limits(X, Y, None) == degreewise.calib_limits(X, Y, [[None]])
    assert [r[0] for r in degreewise.calib_limits(X, Y)[1:]] == [*METHODS, "caution"]


def test_limits_options_are_checked_in_words():
    assert degreewise.calib_limits(X, Y, None, 0) == [[
        "replicates must be a whole number of at least 1, not 0"]]
    assert degreewise.calib_limits(X, Y, None, None, None, 0.7) == [[
        "alpha must be from 0.0001 to below 0.5 (for example 0.05), not 0.7"]]
    assert degreewise.calib_limits([[1.0], ["x"]], [[1.0], [2.0]]) == [[
        "x, row 2 of 2: the text 'x' is not a number; enter a number or clear the cell"]]


def test_weighting_table_equals_the_engine():
    rng = np.random.default_rng(40)
    x = np.repeat([1.0, 2.0, 5.0, 10.0, 20.0, 50.0], 3)
    y = 0.2 + 1.8 * x * (1 + rng.normal(0, 0.05, x.size))
    rows = degreewise.calib_weighting([[v] for v in x], [[v] for v in y])
    assert rows[0] == list(HEADERS["weighting"])
    assert [r[0] for r in rows[1:]] == ["none", "1/x", "1/x^2", "1/y", "1/y^2", "1/x^2b"]
    assert all(len(r) == 7 for r in rows)
    assert [r[5] for r in rows[1:]].count("picked") == 1
    for got, r in zip(rows[1:], engine.compare_weightings(engine.Calibration(x, y))):
        after = f"; {WEIGHTING_AFTER_CHOICE}" if r.picked else ""  # the measured cost of picking from the data
        assert got == [r.scheme, r.order, r.sum_abs_deviation, r.max_abs_deviation, r.spread_p,
                       "picked" if r.picked else None, (r.note + after) or None]


def test_weighting_rows_at_a_given_order_are_the_residual_tables_under_each_scheme():
    """At a given order every scheme's deviation sums are CALIB_RESIDUALS' deviation % under that scheme: a 1/y
    scheme's weights come from the same curve in both (order min(2, max order), the default max order here)."""
    rng = np.random.default_rng(41)
    x = np.repeat([1.0, 2.0, 5.0, 10.0, 20.0, 50.0], 3)
    y = 0.2 + 1.8 * x + 0.004 * x**2 + x * rng.normal(0, 0.05, x.size)
    rows = degreewise.calib_weighting([[v] for v in x], [[v] for v in y], 1)
    for row in rows[1:6]:
        weights = None if row[0] == "none" else row[0]
        table = degreewise.calib_residuals([[v] for v in x], [[v] for v in y], 1, weights)
        deviation = np.abs([r[6] for r in table])
        assert row[1] == 1
        assert row[2] == pytest.approx(deviation.sum(), rel=1e-12) and row[3] == pytest.approx(deviation.max(),
                                                                                                 rel=1e-12)


def test_weighting_with_a_blank_standard_says_which_schemes_cannot_apply():
    rows = degreewise.calib_weighting(X, Y)
    assert rows[2] == ["1/x", None, None, None, None, None,
                       "does not apply: weights '1/x' need every x > 0, but x, row 1 of 7 is 0"]
    assert len(rows) == 6  # no replicates: no row from replicate SDs
    assert degreewise.calib_weighting(X, Y, 9) == [["order 9 needs at least 10 distinct x values and 11 points; "
                                                   "there are 7 and 7"]]


def test_labels_know_every_table():
    for name in ("limits", "weighting"):
        assert degreewise.calib_labels(name) == [list(HEADERS[name])]


def test_the_catalogue_is_the_one_list_of_the_family():
    """The catalogue lists each function once; the functions module defines exactly those, every argument has its
    description there, the refresh computes exactly those, and the README's reference table lists exactly those."""
    names = list(catalogue.FUNCTIONS)
    defined = [n for n, f in vars(functions).items() if n.startswith("calib_") and inspect.isfunction(f)]
    assert sorted(defined) == sorted(names) and degreewise.FUNCTIONS is catalogue.FUNCTIONS
    assert {n: f.__name__ for n, f in compute.CALLABLE.items()} == {n.upper(): n for n in names}
    assert set(catalogue.TEXT_ANSWERS) <= set(names)
    for n in names:
        assert set(inspect.signature(getattr(functions, n)).parameters) <= set(catalogue.ARGUMENTS), n
    readme = (Path(__file__).resolve().parent.parent / "README.md").read_text()
    assert sorted(set(f"calib_{m.lower()}" for m in re.findall(r"^\| `CALIB_([A-Z]+)\(", readme, re.M))) == sorted(names)


def test_readme_worked_example():
    """The README's worked example (invented probe data and blank readings) states these figures."""
    x = [[v] for v in (0.0, 0.0, 10.0, 10.0, 25.0, 25.0, 50.0, 50.0, 75.0, 75.0, 100.0, 100.0)]
    y = [[v] for v in (0.00638, 0.00299, 0.20592, 0.19535, 0.49588, 0.49997, 0.99361, 0.99608, 1.4958, 1.49393,
                       1.98768, 1.99095)]
    blank = [[v] for v in (0.0061, 0.0023, 0.0049, 0.0008, 0.0037, 0.0052)]
    rows = {r[0]: r[1:5] for r in degreewise.calib_limits(x, y, blank)[1:]}
    stated = {"prediction band": [0.0091504, 0.32493, 0.64937, 1.1950], "ISO 11843-2": [0.0091504, 0.32493, 0.63518],
              "ICH residual SD": [0.53846, 1.6317], "ICH intercept SE": [0.24507, 0.74264],
              "blank readings": [0.0081550, 0.21750, 0.43500, 0.83240]}
    for method, values in stated.items():
        assert [v for v in rows[method] if v is not None] == pytest.approx(values, rel=5e-5), method
    assert "delta = 3.543 from the non-central t (10 df; the approximation 2t would give 3.6249)" in \
        degreewise.calib_limits(x, y)[2][5]
    weighting = degreewise.calib_weighting(x, y)
    assert weighting[1][0] == "none" and weighting[1][5] == "picked" and round(weighting[1][4], 2) == 0.73


def test_an_excluded_standard_takes_no_part_in_limits_or_weighting():
    rng = np.random.default_rng(41)
    x = np.repeat([1.0, 2.0, 5.0, 10.0, 20.0, 50.0], 3)
    y = 0.2 + 1.8 * x * (1 + rng.normal(0, 0.05, x.size))
    y[4] *= 1.5  # a spoiled injection
    exclude = [[None]] * x.size
    exclude[4] = ["air bubble"]
    kept = np.delete(np.arange(x.size), 4)
    col = lambda v: [[float(u)] for u in v]  # noqa: E731
    limits = degreewise.calib_limits(col(x), col(y), None, None, None, None, "1/x", exclude)
    assert limits == degreewise.calib_limits(col(x[kept]), col(y[kept]), None, None, None, None, "1/x")
    weighting = degreewise.calib_weighting(col(x), col(y), None, None, exclude)
    assert weighting == degreewise.calib_weighting(col(x[kept]), col(y[kept]))
