"""Order judgments on data where the tests must not speak, or must speak loudly (invented data, values written
out). Exact fits and identical replicates: a residual of rounding error tests nothing (common practice: an F
ratio needs an estimate of random error in its denominator). Inadequate curves: the words say that no
polynomial up to the max order describes the data.
"""

import math

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

import degreewise
from degreewise import engine
from degreewise.engine.validation import default_max_order
from degreewise.engine.words import lack_of_fit_note
from test_order_choice_words import X as CURVED_X, Y as CURVED_Y
from conftest import column


EXACT_X = np.arange(1.0, 7.0)
EXACT_WORDS = ("the data fit exactly at order 1 (the residual is at the rounding level of the responses), so no F "
               "test applies.")


@pytest.mark.parametrize("max_order", [None, 3, 4])
@pytest.mark.parametrize("rule", engine.RULES)
def test_an_exact_straight_line_is_order_1(max_order, rule):
    cal = engine.Calibration(EXACT_X, 2 * EXACT_X, max_order)
    choice = engine.choose_order(cal, rule)
    assert cal.exact_order == choice.order == 1
    assert engine.order_reason(cal, choice) == f"rule {rule}, alpha 0.05, max order {cal.max_order}: " + EXACT_WORDS
    assert degreewise.calib_order(column(EXACT_X), column(2 * EXACT_X), max_order, None, rule) == 1


def test_an_exact_fit_reports_no_test():
    xs, ys = column(EXACT_X), column(2 * EXACT_X)
    seqf = degreewise.calib_seqf(xs, ys, 4)
    assert [r[0] for r in seqf[1:]] == ["x", "x^2", "x^3", "x^4", "residual", "total",
                                       "the data fit exactly at order 1: the residual is rounding error, so no F "
                                       "test applies"]
    assert all(r[4:] == [None, None] for r in seqf[1:])
    orders = degreewise.calib_orders(xs, ys, 4)
    assert [r[8:11] for r in orders[1:]] == [[None, None, None]] * 4  # term p, step p, lack-of-fit p
    assert math.isnan(engine.mandel_test(engine.Calibration(EXACT_X, 2 * EXACT_X, 4)).p_value)
    stats = dict(degreewise.calib_stats(xs, ys))
    assert (stats["order"], stats["F"], stats["p-value"]) == (1, None, None)
    coefs = degreewise.calib_coefs(xs, ys)
    assert [r[1] for r in coefs[1:]] == [pytest.approx(0, abs=1e-14), pytest.approx(2, rel=1e-15)]
    assert [r[3:5] for r in coefs[1:]] == [[None, None]] * 2  # no t test on rounding error


def test_an_exact_fit_with_replicates_says_why_lack_of_fit_does_not_apply():
    x = np.repeat([1.0, 2.0, 3.0, 4.0, 5.0], 2)
    cal = engine.Calibration(x, 2 * x, 2)
    lof = cal.stats(1).lack_of_fit
    assert (lof.exact_order, lof.identical_replicates) == (1, True) and math.isnan(lof.test.p_value)
    assert lack_of_fit_note(lof) == "the data fit exactly at order 1"  # the exact fit comes first
    assert engine.lack_of_fit_words(cal, 1) == "Lack of fit at order 1: the data fit exactly at order 1."


def test_an_exact_quadratic_is_order_2_with_every_rule():
    y = 1 + 0.5 * EXACT_X**2
    for rule in engine.RULES:
        assert engine.choose_order(engine.Calibration(EXACT_X, y, 4), rule).order == 2


IDENTICAL_X = [1.0, 1.0, 2.0, 2.0, 3.0, 3.0, 4.0, 4.0, 5.0, 5.0]
IDENTICAL_Y = [1.0, 1.0, 2.1, 2.1, 2.9, 2.9, 4.2, 4.2, 4.9, 4.9]


def test_identical_replicates_make_lack_of_fit_untestable_not_significant():
    cal = engine.Calibration(IDENTICAL_X, IDENTICAL_Y)
    lof = cal.stats(1).lack_of_fit
    assert (lof.df_lack_of_fit, lof.ss_pure_error, lof.df_pure_error) == (3, 0.0, 5)
    assert (lof.identical_replicates, lof.exact_order) == (True, None)
    assert lack_of_fit_note(lof) == "not testable: replicates are identical"
    assert math.isnan(lof.test.statistic) and math.isnan(lof.test.p_value)
    assert engine.order_reason(cal, engine.choose_order(cal)).endswith(
        "Lack of fit at order 1: not testable: replicates are identical.")
    seqf = degreewise.calib_seqf(column(IDENTICAL_X), column(IDENTICAL_Y))
    assert seqf[5][:2] == ["lack of fit (order 3)", 1] and seqf[5][4:] == [None, None]
    assert seqf[-1] == ["lack of fit: not testable: replicates are identical", None, None, None, None, None]
    assert dict(degreewise.calib_stats(column(IDENTICAL_X), column(IDENTICAL_Y)))["lack-of-fit p"] is None


# an S-shaped response, duplicates at 0..10: the quadratic term is near zero by symmetry
S_X = [float(v) for v in range(11) for _ in range(2)]
S_Y = [0.11, 0.125, 0.252, 0.221, 0.607, 0.58, 1.422, 1.486, 2.866, 2.859, 5.024, 5.018, 7.115, 7.063, 8.58,
       8.616, 9.303, 9.347, 9.639, 9.67, 9.798, 9.878]
NOT_DESCRIBED = ("a polynomial of order <= 4 does not describe these data; consider a narrower range or another "
                 "model.")


def test_forward_on_an_s_shaped_curve_says_no_polynomial_describes_it():
    cal = engine.Calibration(S_X, S_Y)
    choice = engine.choose_order(cal, "forward")
    assert choice.order == 1
    assert engine.order_reason(cal, choice) == (
        "rule forward, alpha 0.05, max order 4: adding x^2 to order 1 is not significant "
        "(F = 0.00474, p = 0.95 >= 0.05). Lack of fit at order 1: significant (p = 1.9e-16): " + NOT_DESCRIBED)
    order = degreewise.calib_order(column(S_X), column(S_Y), None, None, "forward")
    why = dict(degreewise.calib_stats(column(S_X), column(S_Y), order))["why this order"]
    assert why.startswith("order 1 given as the order argument (a number, or a cell such as CALIB_ORDER with its "
                          "own rule, alpha and max order). Lack of fit at order 1: significant (p = 1.9e-16): "
                          + NOT_DESCRIBED + " For comparison, the default rule picks order 3: ")


# a saturating response in triplicate: lack of fit at every order up to 4
SAT_X = [1.0, 1.0, 1.0, 2.0, 2.0, 2.0, 4.0, 4.0, 4.0, 6.0, 6.0, 6.0, 8.0, 8.0, 8.0, 10.0, 10.0, 10.0]
SAT_Y = [4.987, 5.003, 5.002, 7.998, 7.975, 7.995, 11.428, 11.43, 11.413, 13.329, 13.324, 13.325, 14.556, 14.537,
         14.545, 15.393, 15.379, 15.383]


def test_a_saturating_curve_at_the_max_order_is_reported_as_not_described():
    cal = engine.Calibration(SAT_X, SAT_Y)
    choice = engine.choose_order(cal)
    assert choice.order == 4
    reason = engine.order_reason(cal, choice)
    assert reason.endswith("Lack of fit at order 4: significant (p = 2.4e-07): " + NOT_DESCRIBED)
    stats = dict(degreewise.calib_stats(column(SAT_X), column(SAT_Y)))
    assert stats["why this order"] == reason and stats["settings"] == "rule stepdown, alpha 0.05, max order 4"


def test_stopping_at_the_max_order_is_said_even_without_lack_of_fit():
    cal = engine.Calibration(SAT_X, SAT_Y, 2)
    choice = engine.choose_order(cal)
    assert choice.order == 2
    assert engine.order_reason(cal, choice).endswith(
        "Lack of fit at order 2: significant (p = 3.5e-20): a polynomial of order <= 2 does not describe these "
        "data; consider a narrower range or another model.")
    cal = engine.Calibration(CURVED_X, CURVED_Y, 2)
    choice = engine.choose_order(cal, "forward")
    assert engine.order_reason(cal, choice) == (
        "rule forward, alpha 0.05, max order 2: x^2 added significantly (p = 4.8e-22); every step up to the max "
        "order 2 is significant. Lack of fit at order 2: not significant (p = 0.45). The rule stopped at the max "
        "order 2, so no higher order was tried; if a polynomial of order <= 2 does not describe these data, "
        "consider a narrower range or another model.")


@pytest.mark.parametrize("n,m,expected", [
    (18, 6, 4), (16, 8, 4), (10, 10, 4), (9, 9, 4), (8, 8, 3), (7, 7, 2), (6, 6, 2), (5, 5, 2), (4, 4, 1), (12, 4, 2),
])
def test_default_max_order_keeps_residual_degrees_of_freedom(n, m, expected):
    # max(min(4, m - 2, n - 5), min(2, m - 2, n - 3)): at least 4 residual df up to order 4, a quadratic while
    # it leaves 2, and one distinct x beyond the curve
    assert default_max_order(n, m) == expected


@settings(max_examples=60, deadline=None)
@given(st.integers(1, 3), st.lists(st.integers(-5, 5), min_size=4, max_size=4), st.integers(5, 9),
       st.integers(1, 3), st.integers(-40, 40))
def test_exact_polynomials_are_recognised_at_their_order(degree, coefs, levels, reps, scale):
    # integer coefficients on integer x: y is exact in double precision, so the order-`degree` fit leaves
    # rounding error only, and every lower order a real residual; an exact power-of-two scaling changes nothing
    assume(coefs[degree] != 0 and levels >= degree + 2)
    x = np.repeat(np.arange(1.0, levels + 1), reps)
    y = np.polynomial.polynomial.polyval(x, coefs[: degree + 1])
    cal = engine.Calibration(np.ldexp(x, scale), np.ldexp(y, -scale), min(degree + 1, levels - 1, x.size - 2))
    assert cal.exact_order == degree
    assert {engine.choose_order(cal, rule).order for rule in engine.RULES} == {degree}
