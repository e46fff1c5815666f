"""The CALIB_* functions called exactly as the spreadsheet calls them (nested lists, None, text, error codes).

Values are checked against the engine and against statsmodels (OLS/WLS, anova_lm typ=1,
get_prediction) on invented calibration data.
"""

import math

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf
from statsmodels.stats.anova import anova_lm

from degreewise import engine
import degreewise
from degreewise.catalogue import HEADERS
from degreewise.prepared import clear_caches


def column(values):
    return [[v] for v in values]


@pytest.fixture(autouse=True)
def fresh_caches():
    clear_caches()


@pytest.fixture
def data():
    """Invented: 7 levels x 3 replicates of a gently bending response."""
    rng = np.random.default_rng(77)
    x = np.repeat([1.0, 2.0, 5.0, 10.0, 20.0, 30.0, 40.0], 3)
    y = 12.0 + 41.0 * x - 0.3 * x**2 + rng.normal(0, 2.0, x.size)
    return x, y


def test_order_and_coefficients_match_statsmodels(data):
    x, y = data
    assert degreewise.calib_order(column(x), column(y)) == 2
    table = degreewise.calib_coefs(column(x), column(y))
    assert table[0] == list(HEADERS["coefs"])
    assert [r[0] for r in table[1:]] == ["intercept", "x", "x^2"]
    ref = sm.OLS(y, np.vander(x, 3, increasing=True)).fit()
    got = np.array([r[1:] for r in table[1:]], dtype=float)
    np.testing.assert_allclose(got[:, 0], ref.params, rtol=1e-10)
    np.testing.assert_allclose(got[:, 1], ref.bse, rtol=1e-9)
    np.testing.assert_allclose(got[:, 2], ref.tvalues, rtol=1e-9)
    np.testing.assert_allclose(got[:, 3], ref.pvalues, rtol=1e-6)
    np.testing.assert_allclose(got[:, 4:], ref.conf_int(0.05), rtol=1e-9)


def test_sequential_table_matches_anova_lm(data):
    x, y = data
    table = degreewise.calib_seqf(column(x), column(y), 3)
    assert table[0] == ["source", "df", "SS", "MS", "F", "p-value"]
    assert [r[0] for r in table[1:]] == ["x", "x^2", "x^3", "residual", "lack of fit (order 3)", "pure error", "total"]
    ref = anova_lm(smf.ols("y ~ x + I(x**2) + I(x**3)", pd.DataFrame({"x": x, "y": y})).fit(), typ=1)
    for row, (_, r) in zip(table[1:5], ref.iterrows()):
        assert row[1] == r["df"]
        assert row[2] == pytest.approx(r["sum_sq"], rel=1e-9)
        if row[0] != "residual":
            assert row[4] == pytest.approx(r["F"], rel=1e-9)
            assert row[5] == pytest.approx(r["PR(>F)"], rel=1e-7)
        else:
            assert row[4:] == [None, None]
    lof, pure, total = table[5], table[6], table[7]
    assert lof[1] + pure[1] == table[4][1]
    assert lof[2] + pure[2] == pytest.approx(table[4][2], rel=1e-12)
    assert total[1:] == [x.size - 1, pytest.approx(np.sum((y - y.mean()) ** 2), rel=1e-12), None, None, None]


def test_orders_table_shape_and_picks(data):
    x, y = data
    table = degreewise.calib_orders(column(x), column(y))
    assert table[0] == list(HEADERS["orders"])
    assert [r[0] for r in table[1:]] == [1, 2, 3, 4]
    assert all(len(r) == 12 for r in table)
    picked = {r[0]: r[11] for r in table[1:]}
    assert "stepdown" in picked[2]
    ref = sm.OLS(y, np.vander(x, 3, increasing=True)).fit()
    assert table[2][2] == pytest.approx(np.sqrt(ref.scale), rel=1e-10)
    assert table[2][3] == pytest.approx(ref.rsquared, rel=1e-12)


def test_predict_matches_get_prediction_and_keeps_rows_aligned(data):
    x, y = data
    new = [[3.0], [None], [25.0], [""]]
    rows = degreewise.calib_predict(column(x), column(y), new, 2, 0.9)
    assert len(rows) == 4 and all(len(r) == 6 for r in rows)
    assert rows[1] == [None] * 6 and rows[3] == [None] * 6
    frame = sm.OLS(y, np.vander(x, 3, increasing=True)).fit().get_prediction(
        np.vander([3.0, 25.0], 3, increasing=True)).summary_frame(alpha=0.1)
    ref = frame[["mean", "mean_ci_lower", "mean_ci_upper", "obs_ci_lower", "obs_ci_upper"]].to_numpy()
    np.testing.assert_allclose(np.array([rows[0][:5], rows[2][:5]]), ref, rtol=1e-10)
    assert rows[0][5] is None


def test_weighted_coefficients_match_wls(data):
    x, y = data
    w = 1 / x**2
    ref = sm.WLS(y, np.vander(x, 3, increasing=True), weights=w).fit()
    for weights in ("1/x^2", column(w)):
        rows = degreewise.calib_coefs(column(x), column(y), 2, None, weights)
        np.testing.assert_allclose([r[1] for r in rows[1:]], ref.params, rtol=1e-10)
        np.testing.assert_allclose([r[2] for r in rows[1:]], ref.bse, rtol=1e-9)


def test_inverse_rows_and_round_trip(data):
    x, y = data
    fit = engine.fit(x, y, 2)
    truth = [4.0, 17.5, 33.0]
    readings = [np.polynomial.polynomial.polyval(v, fit.coefficients) for v in truth]
    rows = degreewise.calib_inverse(column(x), column(y), [[readings[0]], [None], [readings[1]], [readings[2]], [1e6]], 2)
    assert len(rows) == 5 and all(len(r) == 4 for r in rows)
    assert rows[1] == [None] * 4
    for r, t in zip([rows[0], rows[2], rows[3]], truth):
        assert r[0] == pytest.approx(t, rel=1e-10)
        assert r[1] < t < r[2]
    assert rows[4][:3] == [None, None, None]
    assert rows[4][3].startswith("reading above the calibrated response range")


def test_residuals_align_with_input_rows(data):
    x, y = data
    xs, ys = column(x), column(y)
    xs[4] = [None]
    rows = degreewise.calib_residuals(xs, ys, 2)
    assert len(rows) == x.size and rows[4] == [None] * 8
    keep = np.arange(x.size) != 4
    d = engine.point_diagnostics(engine.Calibration(x[keep], y[keep]), 2)
    got = [r for i, r in enumerate(rows) if i != 4]
    np.testing.assert_allclose([r[0] for r in got], d.fitted, rtol=1e-12)
    np.testing.assert_allclose([r[4] for r in got], d.cooks_distance, rtol=1e-12)
    np.testing.assert_allclose([r[5] for r in got], d.back_calculated, rtol=1e-12)


def test_stats_and_checks_tables(data):
    x, y = data
    stats = degreewise.calib_stats(column(x), column(y))
    labels = [r[0] for r in stats]
    assert labels == ["statistic", "points used", "points skipped", "points excluded", "order", "why this order",
                      "settings", "residual df", "residual SD", "R²", "adjusted R²", "predicted R²", "AICc", "BIC", "F", "p-value",
                      "lack-of-fit p", "x min", "x max", "weights", "caution"]
    values = dict(stats[1:])
    assert values["points used"] == 21 and values["points skipped"] == 0 and values["order"] == 2
    assert values["why this order"].startswith("rule stepdown, alpha 0.05, max order 4: the highest term is tested "
                                               "first")
    assert values["settings"] == "rule stepdown, alpha 0.05, max order 4"
    checks = degreewise.calib_checks(column(x), column(y))
    assert checks[0] == list(HEADERS["checks"])
    assert [r[0] for r in checks[1:]] == ["lack of fit", "Mandel linear vs quadratic", "runs of residual signs",
                                          "Durbin-Watson", "Shapiro-Wilk", "Breusch-Pagan",
                                          "monotonic over the range", "outliers", "influential points", "caution"]
    assert all(r[3] in ("ok", "warning", "n/a", None) for r in checks[1:])


def test_checks_name_flagged_standards_by_their_input_row(data):
    x, y = data
    y = y.copy()
    y[5] += 60.0  # one wild standard: the sixth point
    xs, ys = column(x), column(y)
    xs.insert(1, [None])  # a blank row above it: the standard sits in input row 7
    ys.insert(1, [None])
    checks = {r[0]: r for r in degreewise.calib_checks(xs, ys, 2)}
    assert checks["outliers"][3] == "warning"
    n = len(xs)
    assert checks["outliers"][4].startswith(
        f"standard 7 of {n}, x = {x[5]:.6g}, y = {y[5]:.6g} (externally studentized residual, Bonferroni over")
    assert checks["influential points"][4].startswith("none (Cook's distance")  # low leverage there


def test_row_and_column_orientation_agree(data):
    x, y = data
    as_column = degreewise.calib_coefs(column(x), column(y))
    as_row = degreewise.calib_coefs([list(x)], [list(y)])
    assert as_column == as_row
    assert degreewise.calib_order([list(x)], column(y)) == degreewise.calib_order(column(x), column(y))


def test_optional_arguments_left_empty_take_defaults(data):
    x, y = data
    assert degreewise.calib_coefs(column(x), column(y), None, None, None) == degreewise.calib_coefs(column(x), column(y))
    assert degreewise.calib_coefs(column(x), column(y), "", [[None]], "") == degreewise.calib_coefs(column(x), column(y), 2)
    assert degreewise.calib_order(column(x), column(y), None, 0.05, "stepdown", None) == 2


def test_labels_and_version():
    assert degreewise.calib_labels("predict") == [["predicted y", "mean lower", "mean upper", "prediction lower",
                                             "prediction upper", "note"]]
    assert degreewise.calib_labels("INVERSE") == [["x estimate", "lower", "upper", "note"]]
    assert len(degreewise.calib_labels("residuals")[0]) == 8
    assert degreewise.calib_version().startswith(f"degreewise {degreewise.VERSION}; numpy {np.__version__}; scipy ")


@pytest.mark.parametrize("bad,message", [
    ("n.d.", "x, row 7 of 21: the text 'n.d.' is not a number; enter a number or clear the cell"),
    ("<LOQ", "x, row 7 of 21: the text '<LOQ' is not a number; enter a number or clear the cell"),
    ("12.5", "x, row 7 of 21: the text '12.5' is a number stored as text; enter a number or clear the cell"),
    (True, "x, row 7 of 21: the logical value TRUE is not a number; enter a number or clear the cell"),
    ("#DIV/0!", "x, row 7 of 21: the cell holds the error #DIV/0!; enter a number or clear the cell"),
    (-2146826246, "x, row 7 of 21: the cell holds the error #N/A; enter a number or clear the cell"),
    (-2146826265, "x, row 7 of 21: the cell holds the error #REF!; enter a number or clear the cell"),
    (math.nan, "x, row 7 of 21: the value is not a number (NaN); enter a number or clear the cell"),
    (math.inf, "x, row 7 of 21: the value is infinite; enter a number or clear the cell"),
])
def test_bad_cells_in_data(data, bad, message):
    x, y = data
    xs = column(x)
    xs[6] = [bad]
    for f in (degreewise.calib_coefs, degreewise.calib_seqf, degreewise.calib_residuals, degreewise.calib_checks):
        assert f(xs, column(y)) == [[message]]
    assert degreewise.calib_order(xs, column(y)) == message


def test_a_logical_never_shares_a_cached_result_with_the_number_it_equals(data):
    # True == 1.0 in Python; the caches must still see a logical cell as bad
    x, y = data
    assert x[0] == 1.0
    assert isinstance(degreewise.calib_order(column(x), column(y)), int)
    xs = column(x)
    xs[0] = [True]
    assert degreewise.calib_order(xs, column(y)) == (
        "x, row 1 of 21: the logical value TRUE is not a number; enter a number or clear the cell")


def test_a_ragged_range_never_shares_a_cached_result_with_the_column_it_flattens_to(data):
    # two cells in row 2 and none in row 1 hold the same numbers as a proper column: never the same key
    x, y = data
    assert isinstance(degreewise.calib_order(column(x), column(y)), int)
    ragged = [[]] + [[x[0], x[1]]] + column(x[2:])
    assert degreewise.calib_order(ragged, column(y)) == (
        "x: the range is 21 rows by 2 columns; give a single row or column")


def test_bad_cell_in_a_row_range(data):
    x, y = data
    row = [list(x)]
    row[0][2] = "n.d."
    assert degreewise.calib_coefs(row, [list(y)]) == [[
        "x, column 3 of 21: the text 'n.d.' is not a number; enter a number or clear the cell"]]


@pytest.mark.parametrize("call,message", [
    (lambda x, y: degreewise.calib_coefs(x, y[:-1]), "x has 21 cells and y has 20: give ranges of the same size"),
    (lambda x, y: degreewise.calib_order(x, y, None, 5), "alpha must be from 0.0001 to below 0.5 (for example 0.05), not 5"),
    (lambda x, y: degreewise.calib_order(x, y, None, None, "best"),
     "rule 'best' is not known; use one of 'stepdown', 'forward', 'aicc', 'bic', 'press'"),
    (lambda x, y: degreewise.calib_coefs(x, y, 2.5), "order must be a whole number, not 2.5"),
    (lambda x, y: degreewise.calib_coefs(x, y, 9), "order 9 needs at least 10 distinct x values and 11 points; "
                                              "there are 7 and 21"),
    (lambda x, y: degreewise.calib_coefs(x, y, None, "high"), "level: the text 'high' is not a number; leave it empty "
                                                         "or enter a level such as 0.95"),
    (lambda x, y: degreewise.calib_coefs(x, y, None, None, "1/z"),
     "weights: '1/z' is not a weighting; use one of '1/x', '1/x^2', '1/y', '1/y^2' or a range of positive numbers"),
    (lambda x, y: degreewise.calib_coefs(x, y, None, None, [[1.0]] * 20),
     "weights has 20 cells and x has 21: give one weight per row, or one of '1/x', '1/x^2', '1/y', '1/y^2'"),
    (lambda x, y: degreewise.calib_coefs(x, y, None, None, [[1.0]] * 4 + [[0.0]] + [[1.0]] * 16),
     "weights, row 5 of 21 is 0: every weight must be a positive finite number"),
    (lambda x, y: degreewise.calib_inverse(x, y, [[100.0]], 0), "replicates must be a whole number of at least 1, not 0"),
    (lambda x, y: degreewise.calib_orders(x, y, 9), "max_order 9 needs at least 10 distinct x values and 11 points; "
                                              "there are 7 and 21"),
    (lambda x, y: degreewise.calib_coefs([[1, 2], [3, 4]], y), "x: the range is 2 rows by 2 columns; give a single row "
                                                         "or column"),
    (lambda x, y: degreewise.calib_labels("chart"), "name: 'chart' is not known; use one of 'orders', 'seqf', 'coefs', "
                                              "'stats', 'predict', 'inverse', 'residuals', 'checks', 'compare', "
                                              "'limits', 'weighting', 'acceptance', 'uncertainty'"),
])
def test_bad_arguments(data, call, message):
    x, y = data
    result = call(column(x), column(y))
    assert result == message or result == [[message]]


def test_too_few_usable_points_and_all_x_equal():
    assert degreewise.calib_coefs([[1.0], [None], [2.0], [None]], [[1.0], [2.0], [3.0], [4.0]]) == [[
        "only 2 points: a calibration curve needs at least 3 (2 of 4 rows skipped as blank)"]]
    assert degreewise.calib_order([[2.0]] * 5, [[1.0], [2.0], [3.0], [4.0], [5.0]]) == (
        "all 5 x values are equal (2.0): a curve needs at least 2 distinct x values")
    assert degreewise.calib_order(5.0, 3.0) == "only 1 point: a calibration curve needs at least 3"


def test_scheme_weights_need_positive_values(data):
    x, y = data
    xs = column(x)
    xs[2] = [0.0]
    assert degreewise.calib_coefs(xs, column(y), None, None, "1/x") == [[
        "weights '1/x' need every x > 0, but x, row 3 of 21 is 0"]]


def test_cache_serves_identical_results_and_never_stale(data):
    x, y = data
    first = degreewise.calib_coefs(column(x), column(y))
    again = degreewise.calib_coefs(column(x), column(y))
    assert again == first and again is not first
    ys = column(y)
    ys[3] = [y[3] + 5.0]
    changed = degreewise.calib_coefs(column(x), ys)
    assert changed != first
    assert degreewise.calib_coefs(column(x), column(y)) == first


def test_one_factorisation_per_calibration(data, monkeypatch):
    x, y = data
    made = []
    original = engine.Calibration.__init__

    def counting(self, *args, **kwargs):
        made.append(1)
        original(self, *args, **kwargs)

    monkeypatch.setattr(engine.Calibration, "__init__", counting)
    xs, ys = column(x), column(y)
    order = degreewise.calib_order(xs, ys)
    degreewise.calib_coefs(xs, ys, order)
    degreewise.calib_seqf(xs, ys)
    degreewise.calib_predict(xs, ys, [[5.0]], order)
    degreewise.calib_inverse(xs, ys, [[300.0]], None, order)
    degreewise.calib_residuals(xs, ys)
    assert len(made) == 1


def test_every_argument_is_documented_for_the_function_wizard():
    import inspect

    from degreewise.catalogue import ARGUMENTS

    for name in degreewise.__all__:
        if name.startswith("calib_"):
            f = getattr(degreewise, name)
            assert f.__doc__, name
            for param in inspect.signature(f).parameters.values():
                # xlwings registers positional-or-keyword arguments only
                assert param.kind is inspect.Parameter.POSITIONAL_OR_KEYWORD, (name, param)
                assert param.name in ARGUMENTS, (name, param.name)


@pytest.mark.parametrize("exponent", [520, -660])  # responses near 1e156 and 1e-199
def test_huge_and_tiny_responses_give_the_same_curve(exponent):
    # y times a power of two: every table of the curve's use scales exactly (squares of the responses
    # alone would overflow or underflow; the curve works in scaled units), inverse x is unchanged
    x = np.repeat(np.linspace(1, 9, 5), 2)
    y = 1 + 2 * np.linspace(0, 1, 10) + np.random.default_rng(0).normal(0, 0.01, 10)
    xs, ys, scaled = column(x), column(y), column(np.ldexp(y, exponent))
    readings = [[float(y[3])], [2.0]]

    def times(rows):
        return [[np.ldexp(v, exponent) if isinstance(v, float) else v for v in row] for row in rows]

    assert degreewise.calib_predict(xs, scaled, [[2.5], [7.0]], 1) == times(degreewise.calib_predict(xs, ys, [[2.5], [7.0]], 1))
    assert degreewise.calib_inverse(xs, scaled, times(readings), 2, 1) == degreewise.calib_inverse(xs, ys, readings, 2, 1)
    plain, big = degreewise.calib_residuals(xs, ys, 1), degreewise.calib_residuals(xs, scaled, 1)
    assert [r[2:] for r in big] == [r[2:] for r in plain]  # studentized, leverage, Cook, back-calculated x
    assert [r[:2] for r in big] == [r[:2] for r in times(plain)]  # fitted and residual
    assert degreewise.calib_coefs(xs, scaled, 1)[2][1] == np.ldexp(degreewise.calib_coefs(xs, ys, 1)[2][1], exponent)


def test_blank_new_x_and_readings_keep_their_rows_in_cached_results(data):
    # the same numbers with the blank in another row must not be served from the cache (common practice:
    # outputs aligned with their input rows)
    x, y = data
    xs, ys = column(x), column(y)
    first = degreewise.calib_predict(xs, ys, [[5.0], [None], [15.0]], 2)
    moved = degreewise.calib_predict(xs, ys, [[5.0], [15.0], [None]], 2)
    assert first[1] == [None] * 6 and len(moved) == 2  # blank rows after the last filled one are cut
    assert first[0] == moved[0] and first[2] == moved[1]
    readings = degreewise.calib_inverse(xs, ys, [[None], [200.0]], None, 2)
    assert readings[0] == [None] * 4 and readings[1] == degreewise.calib_inverse(xs, ys, [[200.0], [None]], None, 2)[0]


def test_response_weights_accept_a_standard_read_at_or_below_zero():
    """weights "1/y" read the fitted curve (README): a blank-level standard read as -0.02 is used, and the
    coefficients are those of statsmodels' WLS under the settled weights."""
    x = [0.5, 0.5, 1.0, 1.0, 2.0, 2.0, 5.0, 5.0, 10.0, 10.0]
    y = [-0.02, 0.07, 0.21, 0.16, 0.43, 0.38, 1.02, 1.05, 2.04, 1.98]
    rows = degreewise.calib_coefs([[v] for v in x], [[v] for v in y], 1, None, "1/y")
    w = engine.Calibration(x, y, weights="1/y").weighting.values
    ref = sm.WLS(np.array(y), sm.add_constant(np.array(x)), weights=w).fit()
    assert [r[0] for r in rows[1:]] == ["intercept", "x"]
    np.testing.assert_allclose([r[1] for r in rows[1:]], ref.params, rtol=1e-10)
    np.testing.assert_allclose([r[2] for r in rows[1:]], ref.bse, rtol=1e-8)
