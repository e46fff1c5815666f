"""Judgments that were wrong, each reproduced as a user met it (public functions only)."""

import math

import numpy as np
import pytest

from conftest import load_strd
import degreewise
from degreewise import engine
from degreewise.commands.demo.scenarios import curved_detector, weighted_assay


def _checks(cal, order):
    return {c.name: c for c in engine.curve_checks(cal, order)}


def test_serial_checks_do_not_depend_on_the_order_replicate_rows_were_typed():
    # NIST StRD Pontius (40 points, 20 levels in duplicate, certified quadratic): the same data in 200
    # row orders once gave Durbin-Watson 1.66 to 2.69 and runs p 0.034 to 0.88
    x, y, _ = load_strd("pontius")
    rng = np.random.default_rng(40)
    seen = set()
    for _ in range(200):
        rows = rng.permutation(x.size)
        c = _checks(engine.Calibration(x[rows], y[rows], max_order=2), 2)
        seen.add(tuple(round(c[name].statistic, 9) for name in ("Durbin-Watson", "runs of residual signs"))
                 + tuple(round(c[name].p_value, 9) for name in ("Durbin-Watson", "runs of residual signs")))
    assert len(seen) == 1


def test_breusch_pagan_on_the_weighted_demo_is_a_chance_result_and_never_advises_the_weights_in_use():
    sc = weighted_assay()
    c = _checks(engine.Calibration(sc.x, sc.y, weights=sc.weights), 1)["Breusch-Pagan"]
    assert c.p_value == pytest.approx(0.0485, abs=5e-4)  # 18 points, weighted 1/x^2: p once read as a warning
    assert c.verdict == "ok"
    assert "1/x" not in c.detail


def test_breusch_pagan_advice_fits_the_weights_in_use():
    # invented: the SD grows as x^2, far more than 1/x weights allow for
    rng = np.random.default_rng(0)
    x = np.repeat(np.linspace(1.0, 100.0, 10), 3)
    y = 2.0 + 3.0 * x + rng.normal(0, 1, x.size) * 0.002 * x**2
    none, inverse_x = (_checks(engine.Calibration(x, y, weights=w), 1)["Breusch-Pagan"] for w in (None, "1/x"))
    assert none.verdict == inverse_x.verdict == "warning"
    assert "the residual spread grows with x: consider weights such as 1/x or 1/x^2" in none.detail
    assert ("under weights '1/x' the weighted residual spread still grows with x: stronger weights may fit"
            in inverse_x.detail)


def test_mandel_reads_relative_to_the_chosen_order():
    sc = curved_detector()  # a quadratic term is justified, and order 2 is chosen
    cal = engine.Calibration(sc.x, sc.y)
    assert engine.choose_order(cal).order == 2
    c = _checks(cal, 2)["Mandel linear vs quadratic"]
    assert c.verdict == "ok"
    assert c.detail.endswith("the quadratic term is justified (order 2 chosen; p < 0.05)")
    assert _checks(cal, 1)["Mandel linear vs quadratic"].verdict == "warning"  # a straight line would not do


def test_too_many_runs_is_alternation_not_clustering():
    x = np.arange(1.0, 13.0)
    y = 1.0 + 2.0 * x + 0.1 * (-1.0) ** np.arange(12)  # residual signs alternate at every standard
    c = _checks(engine.Calibration(x, y, max_order=1), 1)["runs of residual signs"]
    assert c.p_value == pytest.approx(2 * 2 / math.comb(12, 6), rel=1e-12)  # 12 runs of 6 + and 6 -
    assert c.verdict == "warning"
    assert "the signs alternate more often than chance" in c.detail
    assert "cluster" not in c.detail


def test_misfit_is_named_and_not_taken_for_a_weighting_problem():
    # invented saturating response: no polynomial up to order 4 follows it within the replicate scatter
    rng = np.random.default_rng(9)
    x = np.repeat(np.linspace(0.5, 20.0, 9), 3)
    y = 100 * (1 - np.exp(-x / 3)) + rng.normal(0, 0.2, x.size) * (1 + x / 5)
    cal = engine.Calibration(x, y)
    c = _checks(cal, cal.max_order)
    assert c["lack of fit"].verdict == "warning"
    assert c["lack of fit"].detail.endswith(
        "a polynomial of order <= 4 does not describe these data; consider a narrower range or another model; "
        "warning below p = 0.05")
    for k in range(1, cal.max_order + 1):
        assert "consider weights" not in _checks(cal, k)["Breusch-Pagan"].detail


def test_response_weights_come_from_the_fitted_curve_without_slope_bias():
    # invented: errors with a CV of 20 %; weighting by the observed responses biased the slope by about
    # -2 CV^2 = -8 % under 1/y^2 (a standard's weight then shares its own error)
    rng = np.random.default_rng(21)
    x = np.repeat([1.0, 2.0, 5.0, 10.0, 20.0, 50.0], 3)
    slopes, observed = [], []
    while len(slopes) < 300:
        y = (0.2 + x) * (1 + 0.2 * rng.standard_normal(x.size))
        if (y <= 0).any():
            continue
        slopes.append(engine.fit(x, y, 1, weights="1/y^2").coefficients[1])
        observed.append(engine.fit(x, y, 1, weights=y**-2.0).coefficients[1])
    se = np.std(slopes) / np.sqrt(len(slopes))
    print(f"\nslope bias, 1/y^2 at CV 20 %: fitted-curve weights {np.mean(slopes) - 1:+.2%} (SE {se:.2%}), "
          f"observed-response weights {np.mean(observed) - 1:+.2%}")
    assert abs(np.mean(slopes) - 1) < 3 * se + 0.005
    assert np.mean(observed) - 1 < -0.05


def test_an_interval_bound_at_the_edge_of_the_weights_domain_is_open():
    # invented 1/x-weighted line; the band for a reading of 0.06 reaches x = 0, where 1/x is not defined:
    # the lower bound was once an arbitrary point of the grid cell there (-0.00825)
    x = np.repeat([0.2, 1, 2, 4, 6, 8, 10.0], 2)
    y = [0.0445, 0.0353, 0.1712, 0.1284, 0.1594, 0.2609, 0.6286, 0.5715, 0.4821, 0.372, 0.679, 0.8294,
         0.4318, 0.9646]
    est = engine.inverse(engine.Calibration(x, y, max_order=1, weights="1/x"), [0.06], 1)[0]
    assert est.x == pytest.approx(0.29874772359485213, rel=1e-9)
    assert math.isnan(est.lower)
    assert est.note == "lower bound open: the prediction band reaches x <= 0, where weights '1/x' are not defined"


def test_data_that_fit_exactly_are_not_tested_as_signal():
    # y = 2x exactly: Mandel's F was 9.3e29 ("a straight line is not adequate"), rounding tested as signal
    x = np.arange(1.0, 7.0)
    checks = engine.curve_checks(engine.Calibration(x, 2 * x), 1)
    assert [c.verdict for c in checks] == ["n/a"] * 6 + ["ok", "n/a", "n/a"]
    assert checks[1].detail == "the data fit exactly at order 1 (residuals at rounding level): nothing to test"


def test_identical_replicates_leave_lack_of_fit_untestable():
    # every level's duplicates read the same: pure error 0 once gave p = 0 and a warning
    x = np.repeat(np.arange(1.0, 7.0), 2)
    y = np.repeat(1 + 2 * np.arange(1.0, 7.0) + np.array([0, 0.1, -0.1, 0, 0.05, 0]), 2)
    lof = _checks(engine.Calibration(x, y), 1)["lack of fit"]
    assert (lof.verdict, lof.detail) == ("n/a", "not testable: replicates are identical")
    assert math.isnan(lof.p_value)


@pytest.mark.parametrize("weights", ["1/y", "1/y^2"])
def test_response_weighted_intervals_use_the_fits_own_variance_model(weights):
    # order 1 of a calibration fitted up to order 3: its weights come from the quadratic's fitted values,
    # and the inverse interval's bounds lie exactly on the prediction band CALIB_PREDICT reports
    rng = np.random.default_rng(8)
    x = np.repeat([1.0, 2.0, 5.0, 10.0, 20.0, 40.0], 3)
    y = 0.5 + 2.0 * x + rng.normal(0, 1, x.size) * 0.03 * x
    cal = engine.Calibration(x, y, max_order=3, weights=weights)
    quadratic = cal.fit(2).coefficients
    fitted = quadratic[0] + quadratic[1] * x + quadratic[2] * x**2
    np.testing.assert_allclose(cal.weighting.values, fitted ** -{"1/y": 1.0, "1/y^2": 2.0}[weights], rtol=1e-8)
    for reading in (6.0, 30.0, 60.0):
        est = engine.inverse(cal, [reading], 1)[0]
        low, high = engine.predict(cal, [est.lower, est.upper], 1)
        assert low.pred_upper == pytest.approx(reading, rel=1e-9)
        assert high.pred_lower == pytest.approx(reading, rel=1e-9)


def test_response_weights_need_a_positive_fitted_curve():
    x = np.arange(0.0, 6.0)
    with pytest.raises(engine.WeightError) as err:
        engine.Calibration(x, x - 0.5, max_order=1, weights="1/y")
    assert str(err.value) == ("weights '1/y' need a fitted y > 0 at every standard, but the curve gives -0.5 at "
                              "x = 0 (x[0]); use 1/x weights or none")


def test_response_weights_take_an_observed_y_at_or_below_zero_when_the_fitted_curve_is_positive():
    """weights '1/y' come from the fitted curve (README): a blank-level standard read as -0.02 is no reason to
    refuse them. The weights are the fixed point w = 1/f(x) of the weighted quadratic f (statsmodels WLS)."""
    import statsmodels.api as sm

    x = np.array([0.5, 0.5, 1.0, 1.0, 2.0, 2.0, 5.0, 5.0, 10.0, 10.0])
    y = np.array([-0.02, 0.07, 0.21, 0.16, 0.43, 0.38, 1.02, 1.05, 2.04, 1.98])
    cal = engine.Calibration(x, y, max_order=2, weights="1/y")
    w = cal.weighting.values
    fitted = sm.WLS(y, np.column_stack([np.ones_like(x), x, x**2]), weights=w).fit().fittedvalues
    assert (fitted > 0).all() and (y <= 0).any()
    np.testing.assert_allclose(w, 1.0 / fitted, rtol=1e-8)


def test_deviation_percent_is_relative_to_the_size_of_the_nominal_x():
    """Deviation % = 100 (back-calculated - nominal) / |nominal| (common practice: a back-calculated value above
    the nominal one deviates by a positive %, at negative x too); back-calculated x from numpy's own line."""
    x = np.array([-30.0, -20.0, -10.0, 10.0, 20.0, 30.0])
    y = 4.0 + 0.5 * x + np.array([0.2, -0.1, 0.05, -0.15, 0.1, -0.05])
    d = engine.point_diagnostics(engine.Calibration(x, y, max_order=1), 1)
    b, a = np.polyfit(x, y, 1)
    back = (y - a) / b
    np.testing.assert_allclose(d.back_calculated, back, rtol=1e-10)
    np.testing.assert_allclose(d.deviation_percent, 100 * (back - x) / np.abs(x), rtol=1e-9)
    assert back[0] > x[0] and d.deviation_percent[0] > 0  # above the nominal -30: positive


def test_a_calibration_keeps_its_own_copy_of_the_standards():
    x = np.arange(1.0, 9.0)
    y = 1.0 + 2.0 * x + np.array([0.1, -0.2, 0.15, 0.0, -0.1, 0.2, -0.05, 0.1])
    cal = engine.Calibration(x, y, max_order=1)
    before = engine.point_diagnostics(cal, 1)
    x[0], y[:] = 100.0, 0.0  # the caller reuses its arrays
    assert cal.x[0] == 1.0 and cal.y[1] == pytest.approx(4.8)
    assert engine.point_diagnostics(cal, 1) == before


def test_a_cubic_that_turns_twice_in_the_range_is_not_monotonic():
    """y = 100 + (x - 5)^3 - 12 (x - 5) turns where its slope 3 (x - 5)^2 - 12 is zero, at x = 3 and x = 7
    (calculus, exact); fitted at order 3 to standards from 0 to 10 with small scatter, the curve's turning
    points are those, and the monotonic check warns and counts both."""
    x = np.repeat(np.linspace(0.0, 10.0, 11), 2)
    y = 100 + (x - 5) ** 3 - 12 * (x - 5) + np.random.default_rng(5).normal(0, 0.05, x.size)
    cal = engine.Calibration(x, y, max_order=3)
    assert cal.raw_x(cal.order(3).curve.turning_points()) == pytest.approx([3.0, 7.0], abs=0.01)
    check = {c.name: c for c in engine.curve_checks(cal, 3)}["monotonic over the range"]
    assert (check.statistic, check.verdict) == (2.0, "warning")
    shown = check.detail.removeprefix("the curve turns at x = ").split(": a reading")[0].split(", ")
    assert [float(v) for v in shown] == pytest.approx([3.0, 7.0], abs=0.01)


@pytest.mark.parametrize("seed,flagged", [(58, []), (186, [11])])
def test_the_residual_notes_flag_the_influential_standards_the_checks_table_names(seed, flagged):
    """CALIB_RESIDUALS notes a standard as influential exactly when CALIB_CHECKS' influential row names it (one
    rule, Cook's distance against its distribution with k + 1 parameters); these seeds put a standard near the
    threshold, where a count of parameters off by one changes the verdict."""
    rng = np.random.default_rng(seed)
    x = np.repeat([1.0, 2, 4, 8, 16, 32], 2)
    y = 1 + 3 * x + rng.normal(0, 0.5, x.size)
    y[rng.integers(x.size)] += rng.normal(0, 2.5)
    cells = [[v] for v in x], [[v] for v in y]
    checks = {row[0]: row for row in degreewise.calib_checks(*cells, 1)}
    notes = [row[-1] or "" for row in degreewise.calib_residuals(*cells, 1)]
    assert checks["influential points"][1] == len(flagged)
    assert [i for i, note in enumerate(notes) if "influential" in note] == flagged
