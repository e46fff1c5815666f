"""Invariants of least squares (hypothesis property tests; textbook facts, common practice)."""

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from degreewise import engine

SETTINGS = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@st.composite
def calibrations(draw):
    levels = draw(st.integers(5, 9))
    reps = draw(st.integers(1, 3))
    x0 = draw(st.floats(-50, 50))
    span = draw(st.floats(0.5, 200))
    x = np.repeat(np.linspace(x0, x0 + span, levels), reps)
    coefs = draw(st.lists(st.floats(-5, 5), min_size=2, max_size=4))
    noise = draw(st.floats(0.01, 2.0))
    seed = draw(st.integers(0, 2**31 - 1))
    z = (x - x.mean()) / span
    y = np.polynomial.polynomial.polyval(z, coefs) * 10 + np.random.default_rng(seed).normal(0, noise, x.size)
    return x, y


@SETTINGS
@given(calibrations())
def test_rss_never_rises_with_order(data):
    x, y = data
    cal = engine.Calibration(x, y)
    rss = [cal.stats(k).rss for k in range(cal.max_order + 1)]
    for lower, higher in zip(rss, rss[1:]):
        assert higher <= lower * (1 + 1e-12) + 1e-300


@SETTINGS
@given(calibrations())
def test_sequential_ss_add_up_to_regression_ss(data):
    x, y = data
    table = engine.Calibration(x, y).sequential_table()
    regression = table.ss_total - table.ss_resid
    assert sum(r.ss for r in table.terms) == pytest.approx(regression, rel=1e-9, abs=1e-12 * table.ss_total)


@SETTINGS
@given(calibrations(), st.integers(0, 2**31 - 1), st.sampled_from(engine.RULES))
def test_row_order_does_not_matter(data, seed, rule):
    x, y = data
    perm = np.random.default_rng(seed).permutation(x.size)
    a, b = engine.Calibration(x, y), engine.Calibration(x[perm], y[perm])
    ca, cb = engine.choose_order(a, rule), engine.choose_order(b, rule)
    assume(_clear(a, 0.05))
    assert ca.order == cb.order
    fa, fb = a.fit(ca.order), b.fit(cb.order)
    np.testing.assert_allclose(fa.coefficients, fb.coefficients, rtol=1e-9, atol=1e-12 * np.max(np.abs(y)))
    assert fa.r_squared == pytest.approx(fb.r_squared, rel=1e-9, abs=1e-12)


def _clear(cal, alpha):
    """No sequential or step p-value within 1e-6 of alpha or of stepdown's alpha / (max order - 1), so that
    rounding cannot flip the choice."""
    levels = (alpha, alpha / max(cal.max_order - 1, 1))
    p_values = [r.test.p_value for r in cal.sequential_table().terms] + [t.p_value for t in cal.step_tests()]
    return all(abs(p - level) > 1e-6 for p in p_values for level in levels)


@SETTINGS
@given(calibrations(), st.floats(0.001, 1000), st.floats(-100, 100), st.floats(0.001, 1000), st.floats(-100, 100))
def test_affine_rescaling_of_x_and_y(data, ax, bx, ay, by):
    x, y = data
    # shifts far larger than the spread would round the data itself away
    assume(abs(bx) <= 100 * ax * np.ptp(x) and abs(by) <= 100 * ay * np.ptp(y))
    a = engine.Calibration(x, y)
    b = engine.Calibration(ax * x + bx, ay * y + by)
    assume(_clear(a, 0.05))
    assert engine.choose_order(a).order == engine.choose_order(b).order
    for ra, rb in zip(a.sequential_table().terms, b.sequential_table().terms):
        assert rb.test.p_value == pytest.approx(ra.test.p_value, rel=1e-6, abs=1e-12)
    for k in range(1, a.max_order + 1):
        assert b.stats(k).r_squared == pytest.approx(a.stats(k).r_squared, rel=1e-10, abs=1e-12)
    # a line transforms exactly: slope ay/ax times, intercept ay*b0 + by - slope*bx
    fa, fb = a.fit(1), b.fit(1)
    slope = fa.coefficients[1] * ay / ax
    assert fb.coefficients[1] == pytest.approx(slope, rel=1e-9)
    assert fb.coefficients[0] == pytest.approx(ay * fa.coefficients[0] + by - slope * bx,
                                               rel=1e-8, abs=1e-9 * (abs(by) + ay * np.max(np.abs(y))))
    assert fb.std_errors[1] == pytest.approx(fa.std_errors[1] * ay / ax, rel=1e-9)


@SETTINGS
@given(calibrations(), st.integers(-60, 60), st.integers(-60, 60))
def test_power_of_two_scaling_is_exact_in_t_values(data, ex, ey):
    x, y = data
    a = engine.Calibration(x, y).fit(2)
    b = engine.Calibration(np.ldexp(x, ex), np.ldexp(y, ey)).fit(2)
    np.testing.assert_allclose(b.t_values, a.t_values, rtol=1e-12)


@SETTINGS
@given(calibrations(), st.floats(-300, 300), st.floats(-300, 300))
def test_curve_checks_do_not_depend_on_magnitudes(data, ex, ey):
    # runs, Durbin-Watson, Shapiro-Wilk and Breusch-Pagan are scale free: at any magnitude of x and y
    # they equal their values at ordinary magnitudes, and no square over- or underflows on the way
    import warnings

    x, y = data
    plain = engine.Calibration(x, y)
    order = engine.choose_order(plain).order
    expected = {c.name: c.statistic for c in engine.curve_checks(plain, order)}
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        scaled = engine.Calibration(x * 10.0**ex, y * 10.0**ey)
        assume(engine.choose_order(scaled).order == order)
        got = {c.name: c.statistic for c in engine.curve_checks(scaled, order)}
    for name in ("runs of residual signs", "Durbin-Watson", "Shapiro-Wilk", "Breusch-Pagan"):
        np.testing.assert_allclose(got[name], expected[name], rtol=1e-7, atol=1e-9, err_msg=name)


@SETTINGS
@given(calibrations(), st.integers(-990, 990), st.integers(-990, 990))
def test_predictions_and_inverse_predictions_scale_exactly_at_any_magnitude(data, kx, ky):
    # x times 2^kx and y times 2^ky (exact scalings, up to about 1e298 and down to 1e-298): forward
    # predictions scale by 2^ky, inverse estimates and bounds by 2^kx, to the last bit
    x, y = data
    assume(np.ptp(y) > 0)
    cal = engine.Calibration(x, y)
    big = engine.Calibration(np.ldexp(x, kx), np.ldexp(y, ky))
    order = engine.choose_order(cal).order
    assert engine.choose_order(big).order == order
    new_x = np.linspace(x.min(), x.max(), 4)
    plain = engine.predict(cal, new_x, order)
    scaled = engine.predict(big, np.ldexp(new_x, kx), order)
    for p, q in zip(plain, scaled):
        assert [np.ldexp(v, ky) for v in (p.fitted, p.mean_lower, p.mean_upper, p.pred_lower, p.pred_upper)] == \
            [q.fitted, q.mean_lower, q.mean_upper, q.pred_lower, q.pred_upper]
    readings = np.array([p.fitted for p in plain])
    for e, f in zip(engine.inverse(cal, readings, order), engine.inverse(big, np.ldexp(readings, ky), order)):
        np.testing.assert_array_equal(np.ldexp([e.x, e.lower, e.upper], kx), [f.x, f.lower, f.upper])
