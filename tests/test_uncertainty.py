"""Standard uncertainty of a read-back x (engine.uncertainty, CALIB_UNCERTAINTY), against a published worked
example, the straight-line formula, an independent weighted fit (statsmodels) and Monte Carlo propagation.

Sources: EURACHEM/CITAC Guide CG4, Quantifying Uncertainty in Analytical Measurement, example A5 (data
recalled from memory and confirmed against its stored summary: b = 0.241, a = 0.0087, s = 0.005486,
Sxx = 1.2, u(c0 = 0.26 mg/L, p = 2) = 0.018 mg/L); JCGM 101:2008 (GUM Supplement 1) for propagation of
distributions by Monte Carlo; statsmodels' WLS for the coefficients' covariance.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
import statsmodels.api as sm
from scipy import stats

import degreewise
from degreewise import engine

# EURACHEM/CITAC CG4 example A5 (recalled from memory, confirmed against its stored summary)
A5_X = np.repeat([0.1, 0.3, 0.5, 0.7, 0.9], 3)
A5_Y = np.array([0.028, 0.029, 0.029, 0.084, 0.083, 0.081, 0.135, 0.131, 0.133, 0.180, 0.181, 0.183,
                 0.215, 0.230, 0.216])
A5_C0, A5_P = 0.26, 2


def column(values):
    return [[float(v)] for v in values]


def a5_reading():
    a, b = engine.fit(A5_X, A5_Y, 1).coefficients
    return a + b * A5_C0


def straight_line_u(x, y, reading, p):
    """u(x0) = (s/b) sqrt(1/p + 1/n + (x0 - xbar)^2 / Sxx), by the textbook sums (EURACHEM/CITAC A5)."""
    n, xbar = x.size, x.mean()
    sxx = ((x - xbar) ** 2).sum()
    b = ((x - xbar) * (y - y.mean())).sum() / sxx
    a = y.mean() - b * xbar
    s = math.sqrt(((y - a - b * x) ** 2).sum() / (n - 2))
    x0 = (reading - a) / b
    return x0, s / b * math.sqrt(1 / p + 1 / n + (x0 - xbar) ** 2 / sxx), (a, b, s, sxx)


def test_the_worked_example_a5_gives_its_published_figures():
    x0, u_line, (a, b, s, sxx) = straight_line_u(A5_X, A5_Y, a5_reading(), A5_P)
    # the example's figures (EURACHEM/CITAC A5, from memory, confirmed against its stored summary)
    assert b == pytest.approx(0.241, abs=5e-4) and a == pytest.approx(0.0087, abs=5e-5)
    assert s == pytest.approx(0.005486, abs=5e-7) and sxx == pytest.approx(1.2, rel=1e-12)
    assert x0 == pytest.approx(A5_C0, rel=1e-9)
    u = engine.uncertainty(engine.Calibration(A5_X, A5_Y, 1), [a5_reading()], 1, A5_P)[0]
    assert u.x == pytest.approx(A5_C0, rel=1e-9)
    assert u.u == pytest.approx(0.0178, abs=5e-5)  # the example: 0.018 mg/L
    assert u.u == pytest.approx(u_line, rel=1e-10)  # the general formula is the straight-line one here
    assert u.df == 13 and u.k == pytest.approx(stats.t.ppf(0.975, 13), rel=1e-12)  # scipy
    assert u.expanded == pytest.approx(u.k * u.u, rel=1e-15)
    assert u.relative_percent == pytest.approx(100 * u.u / u.x, rel=1e-15)
    assert u.note == ""


def test_the_general_and_straight_line_formulas_agree_with_monte_carlo_propagation():
    # JCGM 101:2008: draw the coefficients from N(estimate, V) and the mean of p readings from N(y0, s^2/p),
    # and take the SD of x = (y - a) / b; first-order propagation must agree to within the Monte Carlo error
    # and the small nonlinearity of 1/b (u(b)/b is 1.7 % here)
    reading = a5_reading()
    _, u_line, (a, b, s, sxx) = straight_line_u(A5_X, A5_Y, reading, A5_P)
    u_general = engine.uncertainty(engine.Calibration(A5_X, A5_Y, 1), [reading], 1, A5_P)[0].u
    design = np.column_stack([np.ones(A5_X.size), A5_X])
    v = s**2 * np.linalg.inv(design.T @ design)
    rng = np.random.default_rng(25)
    draws = 400_000
    coef = rng.multivariate_normal([a, b], v, draws)
    y0 = reading + rng.normal(0.0, s / math.sqrt(A5_P), draws)
    u_mc = ((y0 - coef[:, 0]) / coef[:, 1]).std(ddof=1)
    assert u_general == pytest.approx(u_line, rel=1e-10)
    assert u_mc == pytest.approx(u_general, rel=0.01)  # measured: 0.17 % apart


def _weighted_quadratic():
    rng = np.random.default_rng(2512)
    x = np.repeat([1.0, 2.0, 5.0, 10.0, 20.0, 35.0, 50.0], 3)
    y = 0.4 + 2.0 * x - 0.012 * x**2 + rng.normal(0.0, 0.03, x.size) * np.sqrt(x)
    return x, y


def test_a_weighted_quadratic_matches_an_independent_fit_and_monte_carlo():
    x, y = _weighted_quadratic()
    cal = engine.Calibration(x, y, 2, "1/x")
    readings, p = np.array([5.0, 40.0, 65.0]), 3
    found = engine.uncertainty(cal, readings, 2, p)
    # statsmodels' WLS: coefficients and covariance; u^2 = [s^2/(w0 p) + g'Vg] / f'(x)^2 with w0 = 1/x0
    res = sm.WLS(y, np.column_stack([np.ones_like(x), x, x**2]), weights=1 / x).fit()
    c, v, s2 = res.params, res.cov_params(), res.scale
    rng = np.random.default_rng(26)
    for r, reading in zip(found, readings):
        x0 = np.roots([c[2], c[1], c[0] - reading])
        x0 = float(x0[np.argmin(abs(x0 - r.x))].real)
        g = np.array([1.0, x0, x0**2])
        u = math.sqrt(s2 * x0 / p + g @ v @ g) / abs(c[1] + 2 * c[2] * x0)
        assert r.x == pytest.approx(x0, rel=1e-9) and r.u == pytest.approx(u, rel=1e-8)
        # Monte Carlo propagation (JCGM 101): coefficients ~ N(c, V), the mean reading ~ N(y0, s^2 / (w0 p))
        draws = 100_000
        cc = rng.multivariate_normal(c, v, draws)
        y0 = reading + rng.normal(0.0, math.sqrt(s2 * x0 / p), draws)
        disc = cc[:, 1] ** 2 - 4 * cc[:, 2] * (cc[:, 0] - y0)
        xs = (-cc[:, 1] + np.sqrt(disc)) / (2 * cc[:, 2])  # the root on the rising branch, as x0 is
        assert xs.std(ddof=1) == pytest.approx(r.u, rel=0.01)  # measured: within 0.15 %


def test_the_worksheet_table_keeps_rows_aligned_and_leaves_what_does_not_apply_empty():
    x, y = column(A5_X), column(A5_Y)
    rows = degreewise.calib_uncertainty(x, y, [[a5_reading()], ["n.d."], [None], [0.5]], 2, 1)
    u = engine.uncertainty(engine.Calibration(A5_X, A5_Y), [a5_reading()], 1, 2)[0]  # the sheet's max order
    assert rows[0] == [u.x, u.u, 13, u.k, u.expanded, u.relative_percent, None]
    assert rows[1] == [None] * 6 + ["reading, row 2 of 4: the text 'n.d.' is not a number; enter a number or "
                                    "clear the cell"]
    assert rows[2] == [None] * 7
    assert rows[3] == [None] * 6 + ["reading above the calibrated response range [0.0328, 0.2256], above the "
                                    "highest standard: no estimate outside the calibrated range"]
    assert degreewise.calib_uncertainty(x, y, [[None]]) == [
        [None] * 6 + ["reading: no values yet; the results appear when the cells are filled"]]
    # the level sets the coverage factor only
    at99 = degreewise.calib_uncertainty(x, y, a5_reading(), 2, 1, 0.99)[0]
    assert at99[1] == u.u and at99[3] == pytest.approx(stats.t.ppf(0.995, 13), rel=1e-12)
    assert degreewise.calib_labels("uncertainty") == [["x estimate", "standard uncertainty", "df",
                                                       "coverage factor", "expanded uncertainty",
                                                       "relative uncertainty %", "note"]]


def test_the_estimate_is_the_inverse_predictions_and_a_flat_curve_says_so():
    x, y = _weighted_quadratic()
    cal = engine.Calibration(x, y, 2, "1/x")
    readings = [5.0, 40.0, 65.0]
    assert [u.x for u in engine.uncertainty(cal, readings, 2, 3)] == [e.x for e in engine.inverse(cal, readings,
                                                                                                   2, 3)]
    # a curve that turns inside the range: a reading near the top has two x, no estimate and the inverse's note
    xs = np.repeat(np.linspace(0.0, 10.0, 6), 2)
    ys = 10 * xs - xs**2 + np.tile([0.05, -0.05], 6)
    turned = engine.uncertainty(engine.Calibration(xs, ys, 2), [24.0], 2)[0]
    assert math.isnan(turned.x) and turned.note.startswith("several x in the calibrated range give this reading")


def test_a_reading_near_the_end_of_the_range_says_that_its_uncertainty_is_itself_uncertain():
    top = engine.uncertainty(engine.Calibration(A5_X, A5_Y, 1), [0.224], 1)[0]
    assert math.isfinite(top.u)
    assert top.note == ("first-order uncertainty, uncertain itself here: upper bound lies beyond the calibrated "
                        "range")


@settings(max_examples=30, deadline=None, derandomize=True)
@given(st.floats(0.04, 0.22), st.integers(1, 5), st.sampled_from([0.5, 3.0, 1024.0]))
def test_uncertainty_falls_with_replicates_and_scales_with_x(reading, p, c):
    # invariants of u^2 = [s^2/(w0 p) + g'Vg] / f'^2: more replicates never raise u; x in other units (x c)
    # scales x and u by c (c a power of two here, so exactly up to the root finder's rounding)
    cal = engine.Calibration(A5_X, A5_Y, 1)
    one, more = (engine.uncertainty(cal, [reading], 1, m)[0] for m in (p, p + 1))
    assert more.u <= one.u
    scaled = engine.uncertainty(engine.Calibration(A5_X * c, A5_Y, 1), [reading], 1, p)[0]
    assert scaled.x == pytest.approx(c * one.x, rel=1e-9) and scaled.u == pytest.approx(c * one.u, rel=1e-9)
