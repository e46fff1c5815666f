"""Detection and quantitation limits (engine.detection_limits), each against an independent computation.

Sources: closed forms for the straight line written out below from the published formulas
(Hubaux & Vos, Anal. Chem. 42 (1970) 849-855; DIN 32645; ISO 11843-2; ICH Q2(R1); the standards'
formulas recalled from memory); statsmodels' fitted-mean variances and a dense grid for the band
of curved and weighted fits; scipy.stats.nct for ISO 11843-2's delta; and the fluorescence worked
example of Miller & Miller, Statistics and Chemometrics for Analytical Chemistry (values recalled
from memory).
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
import statsmodels.api as sm
from scipy import optimize, stats

from degreewise import engine
from degreewise.engine.limits import iso_delta

# Miller & Miller, fluorescence of standards (pg/mL): data and the book's results RECALLED FROM MEMORY
MILLER_X = np.array([0.0, 2.0, 4.0, 6.0, 8.0, 10.0, 12.0])
MILLER_Y = np.array([2.1, 5.0, 9.0, 12.6, 17.3, 21.0, 24.7])
BLANKS = np.array([2.0, 2.3, 1.9, 2.2, 2.1])  # invented blank readings


def line(x, y):
    """Least-squares line by the textbook sums: a, b, s, n, xbar, Sxx."""
    n, xbar = x.size, x.mean()
    sxx = float(((x - xbar) ** 2).sum())
    b = float(((x - xbar) * (y - y.mean())).sum() / sxx)
    a = float(y.mean() - b * xbar)
    s = math.sqrt(float(((y - a - b * x) ** 2).sum()) / (n - 2))
    return a, b, s, n, xbar, sxx


def straight_line_limits(x, y, m, alpha):
    """Hubaux-Vos band limits and DIN 32645 quantitation for a straight line, in closed form.

    With q(x) = 1/m + 1/n + (x - xbar)^2/Sxx and c0 = t1 s sqrt(q(0)):
    xC = c0 / b; xD solves b x - t1 s sqrt(q(x)) = c0, i.e. (b^2 - g) x^2 - 2 (b c0 - g xbar) x = 0
    with g = t1^2 s^2 / Sxx (the constant term cancels), so xD = 2 (b c0 - g xbar) / (b^2 - g);
    xQ solves b x = k t2 s sqrt(q(x)), the positive root of
    (b^2 - h) x^2 + 2 h xbar x - (k t2 s)^2 (1/m + 1/n) - h xbar^2 = 0 with h = (k t2 s)^2 / Sxx.
    """
    a, b, s, n, xbar, sxx = line(x, y)
    t1, t2 = stats.t.ppf(1 - alpha, n - 2), stats.t.ppf(1 - alpha / 2, n - 2)
    c0 = t1 * s * math.sqrt(1 / m + 1 / n + xbar**2 / sxx)
    g = t1**2 * s**2 / sxx
    x_d = 2 * (b * c0 - g * xbar) / (b**2 - g)
    ks = 3 * t2 * s
    h = ks**2 / sxx
    qa, qb, qc = b**2 - h, 2 * h * xbar, -(ks**2) * (1 / m + 1 / n) - h * xbar**2
    x_q = (-qb + math.sqrt(qb**2 - 4 * qa * qc)) / (2 * qa)
    return a + c0, c0 / b, x_d, x_q


def rows_by_method(rows):
    return {r.method: r for r in rows}


def test_miller_fluorescence_example():
    """The book's a = 1.52, b = 1.93, s_y/x = 0.4329 and 3 s/b = 0.67 (recalled from memory)."""
    fit = engine.fit(MILLER_X, MILLER_Y, 1)
    assert fit.coefficients == pytest.approx((1.52, 1.93), abs=0.005)
    assert fit.residual_sd == pytest.approx(0.4329, abs=1e-4)  # 0.43285 here; the book's rounding
    got = rows_by_method(engine.detection_limits(engine.Calibration(MILLER_X, MILLER_Y), 1, BLANKS))
    a, b, s, n, xbar, sxx = line(MILLER_X, MILLER_Y)
    ich = got["ICH residual SD"]
    assert 3 * s / b == pytest.approx(0.67, abs=0.005)
    assert (ich.detection_limit, ich.quantitation_limit) == pytest.approx((3.3 * s / b, 10 * s / b), rel=1e-12)
    assert math.isnan(ich.critical_response) and math.isnan(ich.decision_limit)
    # ICH with sigma the intercept's standard error: s sqrt(sum x^2 / (n Sxx)) (Draper & Smith sec. 1.4)
    se_a = s * math.sqrt((MILLER_X**2).sum() / (n * sxx))
    se = got["ICH intercept SE"]
    assert (se.detection_limit, se.quantitation_limit) == pytest.approx((3.3 * se_a / b, 10 * se_a / b), rel=1e-12)
    # band (Hubaux-Vos) and DIN 32645 quantitation, closed forms above
    y_c, x_c, x_d, x_q = straight_line_limits(MILLER_X, MILLER_Y, 1, 0.05)
    band = got["prediction band"]
    assert (band.critical_response, band.decision_limit, band.detection_limit, band.quantitation_limit) == \
        pytest.approx((y_c, x_c, x_d, x_q), rel=1e-10)
    assert band.note == "Hubaux-Vos; quantitation in the DIN 32645 form, k = 3"
    # ISO 11843-2: the same decision limit; xd with delta from scipy's non-central t
    t1 = stats.t.ppf(0.95, n - 2)
    delta = optimize.brentq(lambda d: stats.nct.cdf(t1, n - 2, d) - 0.05, t1, 3 * t1 + 5, xtol=1e-13)
    iso = got["ISO 11843-2"]
    assert (iso.critical_response, iso.decision_limit) == pytest.approx((y_c, x_c), rel=1e-10)
    assert iso.detection_limit == pytest.approx(delta / t1 * x_c, rel=1e-9)
    assert math.isnan(iso.quantitation_limit)
    # DIN 32645 blank method from the invented blank readings
    nb, mean, sb = BLANKS.size, BLANKS.mean(), BLANKS.std(ddof=1)
    tb1, tb2 = stats.t.ppf(0.95, nb - 1), stats.t.ppf(0.975, nb - 1)
    root = math.sqrt(1 + 1 / nb)
    blank = got["blank readings"]
    assert (blank.critical_response, blank.decision_limit, blank.detection_limit, blank.quantitation_limit) == \
        pytest.approx((mean + tb1 * sb * root, tb1 * sb / b * root, 2 * tb1 * sb / b * root,
                       3 * tb2 * sb / b * root), rel=1e-10)
    # the figures the report states (this data): every one computed above
    assert (x_c, x_d, x_q) == pytest.approx((0.5468, 1.0736, 1.9628), abs=5e-5)
    assert iso.detection_limit == pytest.approx(1.0501, abs=5e-5)
    assert (se.detection_limit, ich.detection_limit) == pytest.approx((0.5042, 0.7400), abs=5e-5)


@pytest.mark.parametrize("m", [1, 3])
@pytest.mark.parametrize("slope", [1.7, -1.7])
def test_straight_line_closed_forms(m, slope):
    rng = np.random.default_rng(31)
    x = np.repeat([0.5, 1.0, 2.0, 4.0, 7.0, 10.0], 2)
    y = 0.3 + slope * x + rng.normal(0, 0.25, x.size)
    rows = rows_by_method(engine.detection_limits(engine.Calibration(x, y, max_order=1), 1, None, m, 0.01))
    y_c, x_c, x_d, x_q = straight_line_limits(x, y * np.sign(slope), m, 0.01)
    band = rows["prediction band"]
    assert band.critical_response == pytest.approx(np.sign(slope) * y_c, rel=1e-10)
    assert (band.decision_limit, band.detection_limit, band.quantitation_limit) == pytest.approx((x_c, x_d, x_q),
                                                                                                 rel=1e-10)
    assert "blank readings" not in rows


@pytest.mark.parametrize("nu", [2, 5, 10, 30])
def test_iso_delta_is_the_noncentral_t_not_twice_t(nu):
    """ISO 11843-2 delta(nu; alpha, beta) for alpha = beta = 0.05 against scipy.stats.nct."""
    t1 = stats.t.ppf(0.95, nu)
    delta = iso_delta(nu, 0.05, 0.05)
    assert stats.nct.cdf(t1, nu, delta) == pytest.approx(0.05, abs=1e-12)
    assert delta == pytest.approx(optimize.brentq(lambda d: stats.nct.cdf(t1, nu, d) - 0.05, t1, 4 * t1 + 5,
                                                  xtol=1e-13), abs=1e-10)
    assert 2 * t1 - delta > 0.01  # the approximation 2t overstates delta
    assert stats.nct.cdf(t1, nu, 2 * t1) < 0.05 - 1e-3


def brute_force_band(x, y, order, weights, x0_factor, m, alpha, grid):
    """Band limits by scanning a dense grid, with the fitted-mean variances from statsmodels (WLS).

    A new mean of m readings at x0 has variance scale * vf(x0) / m + Var(fitted mean); vf is the
    weighting's 1/w0 (1 without weights)."""
    design = lambda v: np.vander(v, order + 1, increasing=True)  # noqa: E731
    res = (sm.WLS(y, design(x), weights=weights) if weights is not None else sm.OLS(y, design(x))).fit()
    t1, t2 = stats.t.ppf(1 - alpha, res.df_resid), stats.t.ppf(1 - alpha / 2, res.df_resid)
    d = design(grid)
    f = d @ res.params
    slope = np.polynomial.polynomial.polyval(grid, np.polynomial.polynomial.polyder(res.params))
    s_new = np.sqrt(res.scale * x0_factor(grid) / m + np.einsum("ij,jk,ik->i", d, res.cov_params(), d))
    y_c = f[0] + t1 * s_new[0]

    def first(v):
        return grid[np.argmax(v >= 0)]

    return y_c, first(f - y_c), first(f - t1 * s_new - y_c), first(grid * slope - 3 * t2 * s_new)


def test_curved_fit_against_a_dense_grid():
    rng = np.random.default_rng(5)
    x = np.repeat([0.0, 1.0, 2.5, 5.0, 10.0, 20.0, 30.0], 3)
    y = 0.8 + 3.0 * x - 0.035 * x**2 + rng.normal(0, 0.6, x.size)
    grid = np.linspace(0.0, 60.0, 600001)
    want = brute_force_band(x, y, 2, None, np.ones_like, 2, 0.05, grid)
    band = engine.detection_limits(engine.Calibration(x, y), 2, None, 2)[0]
    assert band.critical_response == pytest.approx(want[0], rel=1e-10)
    np.testing.assert_allclose([band.decision_limit, band.detection_limit, band.quantitation_limit], want[1:],
                               atol=2e-4)


def test_weights_as_a_range_against_a_dense_grid():
    """Weights 1/(c + x)^2 (a variance model with a blank term); a new reading's 1/w0 interpolated
    linearly between the levels' mean 1/w, as the project documents for ranges of weights."""
    rng = np.random.default_rng(8)
    x = np.repeat([0.0, 1.0, 2.0, 5.0, 10.0, 20.0, 50.0], 3)
    y = 0.2 + 1.5 * x + rng.normal(0, 1, x.size) * 0.05 * (1.0 + x)
    w = 1 / (1.0 + x) ** 2
    grid = np.linspace(0.0, 100.0, 1000001)
    levels = np.unique(x)
    want = brute_force_band(x, y, 1, w, lambda v: np.interp(v, levels, (1.0 + levels) ** 2), 1, 0.05, grid)
    band = engine.detection_limits(engine.Calibration(x, y, max_order=1, weights=w), 1)[0]
    assert band.critical_response == pytest.approx(want[0], rel=1e-10)
    np.testing.assert_allclose([band.decision_limit, band.detection_limit, band.quantitation_limit], want[1:],
                               atol=2e-4)


def test_weights_that_vanish_at_zero_are_answered_in_words():
    x = np.repeat([1.0, 2.0, 5.0, 10.0, 20.0, 50.0], 2)
    y = 0.01 + 2.0 * x * (1 + np.random.default_rng(3).normal(0, 0.03, x.size))
    rows = rows_by_method(engine.detection_limits(engine.Calibration(x, y, weights="1/x^2"), 1))
    words = ("weights '1/x^2' give a new reading at x = 0 zero variance (1/w0 = 0), so the prediction band has no "
             "reading scatter at the blank and no band-based limit exists; use a variance model with a blank term "
             "(weights as a range, such as 1/(c + x)^2) or give blank readings")
    for method in ("prediction band", "ICH residual SD"):
        assert rows[method].note == words
        assert all(math.isnan(v) for v in rows[method][1:5])
    assert rows["ISO 11843-2"].note == ("does not apply: ISO 11843-2 covers a straight line with constant SD; this "
                                        "calibration is weighted "
                                        "('1/x^2') (see the prediction band row)")
    assert rows["ICH intercept SE"].detection_limit > 0  # the intercept's standard error still exists


def _turn_words(turns: str, up_to: str = "100") -> str:
    return (f"the curve is not monotonic from the blank (x = 0) to x = {up_to}: it turns at {turns}, so a limit at "
            "the blank would not be read on the branch the standards calibrate, and no limit is given; check the "
            "low standards and the order")


# Two audit cases (issue 24): order-2 curves that rise over the calibrated range [10, 100] but turn between the
# blank and the lowest standard. Limits computed at the blank came from the falling branch (critical response
# 5.130 below the fitted blank 5.175; ICH limits from S = -0.80 or -0.098); every row must refuse, in one wording.
TURN_BELOW = ([10, 10, 20, 20, 40, 40, 60, 60, 80, 80, 100, 100],
              [2.184, 2.174, 9.195, 9.208, 53.223, 53.202, 137.189, 137.184, 261.215, 261.233, 425.205, 425.175],
              "x = 7.99015")
TURN_BELOW_2 = ([10, 10, 20, 20, 30, 30, 40, 40, 60, 60, 80, 80, 100, 100],
                [2.2099, 2.1838, 4.2376, 4.271, 8.3068, 8.2555, 14.2224, 14.2108, 32.2874, 32.3317, 58.2636, 58.1883,
                 92.2021, 92.33], "x = 4.89257")


@pytest.mark.parametrize("x,y,turn", [TURN_BELOW, TURN_BELOW_2])
def test_a_curve_that_turns_between_the_blank_and_the_lowest_standard_gets_words_in_every_row(x, y, turn):
    cal = engine.Calibration(x, y)
    assert engine.choose_order(cal).order == 2
    rows = engine.detection_limits(cal, 2, [2.0, 2.1, 2.05])
    assert [r.method for r in rows] == ["prediction band", "ISO 11843-2", "ICH residual SD", "ICH intercept SE",
                                        "blank readings"]
    for r in rows:
        assert r.note == _turn_words(f"{turn}, between the blank and the lowest standard")
        assert all(math.isnan(v) for v in r[1:5])


def test_a_curve_that_turns_inside_the_range_near_the_blank_gets_words_in_every_row():
    x = np.repeat([0.0, 1.0, 2.0, 4.0, 6.0, 8.0, 10.0], 2)
    # falling at x = 0, minimum near x = 0.35 far above the critical response: no limit on the falling side
    y = 5.0 - 0.5 * x + 0.8 * x**2 + np.random.default_rng(4).normal(0, 0.3, x.size)
    for r in engine.detection_limits(engine.Calibration(x, y), 2, [5.0, 5.2, 4.9]):
        assert r.note == _turn_words("x = 0.345284, inside the calibrated range", "10")
        assert all(math.isnan(v) for v in r[1:5])


def _quadratic_turning_at(vertex: float):
    """Standards at 10..100 in duplicate on y = 2 + (x - vertex)^2 / 50 (rising over the range when the vertex
    lies below 10, falling when above 100), with small invented noise."""
    x = np.repeat([10.0, 20.0, 40.0, 60.0, 80.0, 100.0], 2)
    y = 2.0 + (x - vertex) ** 2 / 50 + np.random.default_rng(31).normal(0, 0.02, x.size)
    return engine.Calibration(x, y, max_order=2)


def test_a_curve_turning_just_below_the_lowest_standard_gives_no_limit():
    cal = _quadratic_turning_at(9.0)
    _, b, c = cal.fit(2).coefficients
    vertex = -b / (2 * c)  # the fitted quadratic's turn (a published formula)
    assert 8.9 < vertex < 9.1
    for r in engine.detection_limits(cal, 2):
        assert r.note == _turn_words(f"x = {vertex:.6g}, between the blank and the lowest standard")
        assert all(math.isnan(v) for v in r[1:5])


def test_a_curve_turning_just_above_the_highest_standard_keeps_its_limits():
    """The turn lies beyond the standards, far above the limits: the blank is on the calibrated (falling)
    branch, and every row gives its numbers (the same rows as the straight branch gives)."""
    cal = _quadratic_turning_at(101.0)
    rows = engine.detection_limits(cal, 2)
    band, _, ich_sd, ich_se = rows
    assert 0 < band.decision_limit < band.detection_limit < band.quantitation_limit < 10
    assert band.critical_response < float(engine.predict(cal, [0.0], 2)[0].fitted)  # falling: below the blank
    assert 0 < ich_se.detection_limit < ich_se.quantitation_limit < 10
    assert 0 < ich_sd.detection_limit < ich_sd.quantitation_limit < 10
    assert all("monotonic" not in r.note for r in rows)


def test_limits_beyond_the_calibrated_range_are_flagged():
    rng = np.random.default_rng(6)
    x = np.repeat([5.0, 10.0, 20.0, 30.0, 50.0], 2)
    y = 1.0 + 2.0 * x + rng.normal(0, 1.5, x.size)
    band = engine.detection_limits(engine.Calibration(x, y, max_order=1), 1)[0]
    assert band.decision_limit < band.detection_limit < 5.0 < band.quantitation_limit
    assert band.note == ("Hubaux-Vos; quantitation in the DIN 32645 form, k = 3; the blank (x = 0) lies below the "
                         "lowest standard: the band there is extrapolated; decision and detection limits"
                         " outside the calibrated range [5, 50]: a limit depends on where the standards lie "
                           "(through the xbar^2/Qx term), so confirm it with standards near the limit")


def test_blank_readings_in_words():
    cal = engine.Calibration(MILLER_X, MILLER_Y)
    one = engine.detection_limits(cal, 1, [2.0])[-1]
    assert one.note == "blank: 1 reading; the blank method needs at least 2 readings to estimate their SD"
    same = engine.detection_limits(cal, 1, [2.0, 2.0, 2.0])[-1]
    assert same.note == ("blank: all 3 readings are equal (2), so their SD is 0 and gives no limit; enter the "
                         "readings at full resolution")
    with pytest.raises(engine.DataError, match=r"^blank\[1\] is nan: every value must be a finite number$"):
        engine.detection_limits(cal, 1, [2.0, math.nan])


@settings(max_examples=25, deadline=None)
@given(scale=st.floats(1e-3, 1e3), shift=st.floats(-10.0, 10.0), falling=st.booleans(), m=st.integers(1, 4))
def test_limits_follow_the_units_of_y(scale, shift, falling, m):
    """Invariant: a response y' = shift + c y (c of either sign) leaves every x limit as it is and maps the
    critical response as y does (common practice: a limit in x does not depend on the units of y)."""
    c = -scale if falling else scale
    x = np.repeat([0.0, 1.0, 2.0, 5.0, 10.0], 2)
    y = 0.4 + 1.1 * x + np.random.default_rng(2).normal(0, 0.3, x.size)
    blank = np.array([0.3, 0.5, 0.45, 0.2])
    base = engine.detection_limits(engine.Calibration(x, y, max_order=1), 1, blank, m)
    moved = engine.detection_limits(engine.Calibration(x, shift + c * y, max_order=1), 1, shift + c * blank, m)
    for r0, r1 in zip(base, moved):
        np.testing.assert_allclose(r1[2:5], r0[2:5], rtol=1e-9, atol=1e-12)
        if not math.isnan(r0.critical_response):
            assert r1.critical_response == pytest.approx(shift + c * r0.critical_response, rel=1e-9, abs=1e-9)


def test_an_exact_fit_gives_limits_only_from_blank_readings():
    x = np.array([0.0, 1.0, 2.0, 3.0, 4.0])
    rows = engine.detection_limits(engine.Calibration(x, 1 + 2 * x, max_order=1), 1, [1.0, 1.1, 0.9])
    words = ("the curve passes through every standard (residual SD at rounding level), so its scatter gives no "
             "limit; give blank readings")
    assert [r.note for r in rows[:4]] == [words] * 4
    t = stats.t.ppf(0.95, 2)
    assert rows[4].decision_limit == pytest.approx(t * 0.1 / 2 * math.sqrt(1 + 1 / 3), rel=1e-12)


def test_response_weights_near_a_zero_response_at_the_blank_are_answered_in_words():
    x = np.repeat([1.0, 2.0, 5.0, 10.0, 20.0], 2)
    y = 2.0 * x * (1 + np.random.default_rng(13).normal(0, 0.05, x.size))  # through the origin
    band = engine.detection_limits(engine.Calibration(x, y, weights="1/y^2"), 1)[0]
    assert band.note.startswith("weights '1/y^2' take a reading's variance from the fitted response, which at "
                                "x = 0 (")
    assert band.note.endswith(") does not differ significantly from zero, so the prediction band has no reading "
                              "scatter at the blank and no band-based limit exists; use a variance model with a "
                              "blank term (weights as a range, such as 1/(c + x)^2) or give blank readings")


# DIN 32645 worked example: data and results as quoted in issue 24 (the standard's example data as distributed
# with an open-source package; the figures are not checked against the printed standard here). Straight line,
# one reading per sample, alpha = 0.01.
DIN_X = np.arange(1, 11) * 0.05
DIN_Y = np.array([3060.0, 3522.0, 3707.0, 4280.0, 5058.0, 5510.0, 5703.0, 6205.0, 7156.0, 7178.0])


def test_din_32645_example_values():
    cal = engine.Calibration(DIN_X, DIN_Y)
    assert engine.choose_order(cal).order == 1
    band, iso = engine.detection_limits(cal, 1, alpha=0.01)[:2]
    assert band.decision_limit == pytest.approx(0.0698, abs=5e-5)  # DIN 32645 example: decision limit 0.0698
    assert iso.decision_limit == pytest.approx(0.0698, abs=5e-5)
    assert band.quantitation_limit == pytest.approx(0.212, abs=5e-4)  # quantitation limit 0.212 (k = 3)
    assert engine.inverse(cal, [3500.0], 1)[0].x == pytest.approx(0.10548, abs=5e-6)  # x(3500) = 0.10548


@settings(max_examples=30, deadline=None)
@given(vertex=st.floats(-60.0, 160.0), seed=st.integers(0, 50))
def test_every_row_gives_the_same_answer_about_a_turn(vertex, seed):
    """Invariant (one rule for a turn): for a quadratic turning anywhere, either no row speaks of a turn, or
    every row gives the same words and no number; the words appear exactly when the fitted curve turns
    between the blank and the highest standard (a published formula for the turn: x = -b / 2c)."""
    x = np.repeat([10.0, 20.0, 40.0, 60.0, 80.0, 100.0], 2)
    y = 2.0 + (x - vertex) ** 2 / 50 + np.random.default_rng(seed).normal(0, 0.02, x.size)
    cal = engine.Calibration(x, y, max_order=2)
    rows = engine.detection_limits(cal, 2, [2.0, 2.1, 2.05])
    _, b, c = cal.fit(2).coefficients
    turn = -b / (2 * c)
    turned = [r for r in rows if r.note.startswith("the curve is not monotonic from the blank")]
    if 1e-6 < turn < 100.0 - 1e-6:
        assert len(turned) == len(rows) and len({r.note for r in rows}) == 1
        assert all(math.isnan(v) for r in rows for v in r[1:5])
    elif turn < -1e-6 or turn > 100.0 + 1e-6:  # the limits here lie far below the highest standard
        assert not turned


def test_standards_that_end_at_the_blank_give_no_limit_above_it():
    """Standards from x = -5 up to x = 0 exactly: nothing above the blank was calibrated, so no row gives a number
    (limits are read above the blank within the calibrated range: common practice)."""
    x = np.repeat([-5.0, -4, -3, -2, -1, 0], 2)
    y = 3 + 2 * x + np.random.default_rng(1).normal(0, 0.05, x.size)
    rows = engine.detection_limits(engine.Calibration(x, y), 1, blank=[2.9, 3.1, 3.0])
    words = "every standard lies at x <= 0 (the highest is 0): limits above the blank need x > 0"
    assert [r.method for r in rows] == ["prediction band", "ISO 11843-2", "ICH residual SD", "ICH intercept SE",
                                        "blank readings"]
    for r in rows:
        assert all(math.isnan(v) for v in r[1:5]) and r.note == words, r
