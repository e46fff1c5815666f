"""Every bad input raises a typed engine error with an exact message."""

import math

import numpy as np
import pytest

from degreewise import engine
from degreewise.engine import DataError, OptionError, OrderError, WeightError, acceptance

X = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0]
Y = [1.1, 2.0, 2.9, 4.2, 5.0, 6.1]


@pytest.mark.parametrize("x,y,kind,message", [
    ([1, 2, 3], [1, 2], DataError, "x has 3 values and y has 2: give one y for every x"),
    ([1, 2], [1, 2], DataError, "only 2 points: a calibration curve needs at least 3"),
    ([1], [1], DataError, "only 1 point: a calibration curve needs at least 3"),
    ([2, 2, 2, 2], [1, 2, 3, 4], DataError,
     "all 4 x values are equal (2.0): a curve needs at least 2 distinct x values"),
    ([0, 0, 1, 2], [0, 0, 0, 0], DataError,
     "all 4 y values are equal (0.0): the response does not change with x, so there is no curve to fit"),
    ([2.0, 0, 0, 0, 0, 0, 0, 1.0, 2.401919801264265e16], [0, 0, 0, 0, 0, 0, 0, 0, 1.0], DataError,
     "the x values are too close together, compared with their range (0.0 to 2.401919801264265e+16), for "
     "order 2: in double precision they do not give 3 distinct positions; remove the outlying x or choose a "
     "lower max_order"),
    ([1, 2, math.nan, 4], [1, 2, 3, 4], DataError, "x[2] is nan: every value must be a finite number"),
    ([1, 2, 3, 4], [1, math.inf, 3, 4], DataError, "y[1] is inf: every value must be a finite number"),
    ([1, 2, 3], [1, 2, 3], OrderError,
     "3 points at 3 distinct x values are too few to choose an order: it takes at least 3 distinct x values "
     "and 4 points"),
    ([[1, 2], [3, 4]], [1, 2, 3, 4], DataError, "x must be one-dimensional, not of shape (2, 2)"),
    (["a", "b", "c"], [1, 2, 3], DataError, "x must hold numbers only"),
])
def test_bad_data(x, y, kind, message):
    with pytest.raises(kind) as err:
        engine.Calibration(x, y)
    assert str(err.value) == message


@pytest.mark.parametrize("call,kind,argument,index,located", [
    (lambda: engine.Calibration([1, 2, 3, 4], [1, 2, math.nan, 4]), DataError, "y", 2,
     "CELL is nan: every value must be a finite number"),
    (lambda: engine.Calibration(X, Y, weights=[1, 1, 1, 1, 0, 1]), WeightError, "weights", 4,
     "CELL is 0: every weight must be a positive finite number"),
    (lambda: engine.Calibration([-1.0] + X[1:], Y, weights="1/x^2"), WeightError, "x", 0,
     "weights '1/x^2' need every x > 0, but CELL is -1"),
    (lambda: engine.Calibration([0.0, 1, 2, 3, 4, 5], [-0.5, 2.1, 3.9, 6.2, 8.0, 9.9], weights="1/y"), WeightError,
     "x", 0, "weights '1/y' need a fitted y > 0 at every standard, but the curve gives -0.417857 at x = 0 (CELL); "
     "use 1/x weights or none"),
    (lambda: acceptance.custom([15, 20, 175]), OptionError, "criteria", 2,
     "CELL: the minimum % passing 175 is in percent, from 1 to 100 (75 for 75 %; a cell formatted as % holds 0.75, "
     "which would read as 0.75 %)"),
    (lambda: engine.inverse(engine.Calibration(X, Y), [2.0, 3.0], 1, replicates=[2, 1.5]), OptionError,
     "replicates", 1, "CELL must be a whole number of at least 1, not 1.5"),
])
def test_an_error_that_blames_one_value_names_it_once_for_the_caller_to_place(call, kind, argument, index, located):
    """The one validation path: the engine names the value as argument[index] and carries both; the worksheet
    layer puts its cell in that place (``located``), reading nothing out of the text."""
    with pytest.raises(kind) as err:
        call()
    e = err.value
    assert (e.argument, e.index, e.position) == (argument, index, f"{argument}[{index}]")
    assert e.located("CELL") == located
    assert e.message == located.replace("CELL", e.position) == str(e)


def test_a_count_of_criteria_blames_no_single_value():
    with pytest.raises(OptionError) as err:
        acceptance.custom([15, 20, 75, 3, 9])
    assert (err.value.argument, err.value.index) == ("criteria", None)


def test_an_error_that_blames_no_single_value_is_located_as_it_is():
    with pytest.raises(OrderError) as err:
        engine.Calibration(X, Y, max_order=0)
    assert (err.value.index, err.value.position) == (None, None)
    assert err.value.located("CELL") == "max_order must be at least 1, not 0"


@pytest.mark.parametrize("order,message", [
    (0, "max_order must be at least 1, not 0"),
    (6, "max_order 6 needs at least 7 distinct x values and 8 points; there are 6 and 6"),
    (2.5, "max_order must be a whole number, not 2.5"),
    ("two", "max_order must be a whole number, not 'two'"),
])
def test_bad_max_order(order, message):
    with pytest.raises(OrderError) as err:
        engine.Calibration(X, Y, max_order=order)
    assert str(err.value) == message


def test_order_the_data_cannot_support():
    with pytest.raises(OrderError) as err:
        engine.fit([1, 2, 3, 4], [1, 2, 3, 5], 3)
    assert str(err.value) == "max_order 3 needs at least 4 distinct x values and 5 points; there are 4 and 4"
    cal = engine.Calibration(X, Y, max_order=2)
    with pytest.raises(OrderError) as err:
        cal.fit(3)
    assert str(err.value) == "order 3 is outside 0..2, the orders this calibration was fitted to"


@pytest.mark.parametrize("weights,message", [
    ([1, 1, 1], "weights has 3 values but there are 6 points; give one weight per point"),
    ([1, 1, 0, 1, 1, 1], "weights[2] is 0: every weight must be a positive finite number"),
    ([1, 1, 1, -2, 1, 1], "weights[3] is -2: every weight must be a positive finite number"),
    ([1, 1, 1, 1, math.nan, 1], "weights[4] is nan: every weight must be a positive finite number"),
    ("1/z", "weights: unknown scheme '1/z'; use one of '1/x', '1/x^2', '1/y', '1/y^2' or a range of "
            "positive numbers"),
])
def test_bad_weights(weights, message):
    with pytest.raises(WeightError) as err:
        engine.Calibration(X, Y, weights=weights)
    assert str(err.value) == message


def test_scheme_needs_positive_values():
    with pytest.raises(WeightError) as err:
        engine.Calibration([0.0] + X[1:], Y, weights="1/x^2")
    assert str(err.value) == "weights '1/x^2' need every x > 0, but x[0] is 0"


def test_scheme_weights_beyond_the_double_range():
    with pytest.raises(WeightError) as err:  # 1/x^2 at x = 1e-200 is 1e400
        engine.Calibration([1e-200] + X[1:], Y, weights="1/x^2")
    assert (str(err.value), err.value.index) == (
        "weights[0] works out as inf: every weight must be a positive finite number", 0)


@pytest.mark.parametrize("call,message", [
    (lambda c: engine.choose_order(c, "best"),
     "rule 'best' is not known; use one of 'stepdown', 'forward', 'aicc', 'bic', 'press'"),
    (lambda c: engine.choose_order(c, alpha=5), "alpha must be from 0.0001 to below 0.5 (for example 0.05), not 5"),
    (lambda c: engine.predict(c, [1.0], 1, level=95),
     "level must be between 0 and 1 (for example 0.95), not 95"),
    (lambda c: engine.inverse(c, [2.0], 1, replicates=0),
     "replicates must be a whole number of at least 1, not 0"),
    (lambda c: engine.inverse(c, [2.0], 1, replicates=float("inf")),
     "replicates must be a whole number of at least 1, not inf"),
    (lambda c: engine.inverse(c, [2.0, 3.0], 1, replicates=[1, 2, 3]),
     "replicates has 3 values for 2 readings; give one number or one per reading"),
])
def test_bad_options(call, message):
    cal = engine.Calibration(X, Y, max_order=2)
    with pytest.raises(OptionError) as err:
        call(cal)
    assert str(err.value) == message


def test_huge_and_tiny_magnitudes_keep_their_digits():
    """Scaling by powers of two is exact: t statistics do not change (common practice check)."""
    rng = np.random.default_rng(2)
    x = np.repeat(np.linspace(1, 9, 5), 2)
    y = 1 + 2 * x + 0.1 * x**2 + rng.normal(0, 0.05, x.size)
    base = engine.fit(x, y, 2)
    for sx, sy in [(2.0**200, 2.0**-300), (2.0**-500, 2.0**400)]:
        other = engine.fit(x * sx, y * sy, 2)
        np.testing.assert_allclose(other.t_values, base.t_values, rtol=1e-13)
        assert other.coefficients[2] == pytest.approx(base.coefficients[2] * sy / sx**2, rel=1e-13)


@pytest.mark.slow
def test_a_million_points():
    x = np.tile(np.linspace(0.0, 100.0, 10), 100_000)
    y = 0.5 + 0.25 * x + np.tile(np.linspace(-1, 1, 7), 142858)[: x.size] * 0.01
    cal = engine.Calibration(x, y, max_order=3)
    assert cal.n_points == 1_000_000
    # the added pattern (period 7 against x's period 10) has nearly the same mean, within 1e-7, at every x:
    # the curve is a straight line, and x^2 and x^3 test far from significant
    choice = engine.choose_order(cal)
    assert choice.order == 1
    assert [cal.step_test(k).p_value > 0.9 for k in (2, 3)] == [True, True]
    assert cal.fit(1).coefficients[1] == pytest.approx(0.25, rel=1e-5)


def test_an_overflow_leaves_the_calibration_as_it_was(monkeypatch):
    # an overflow in one order's statistics (simulated here for order 3) must not leave a half-filled
    # cache: every later question meets the same overflow, not a missing entry
    import degreewise.engine.calibration as calibration

    real = calibration.OrderStats

    def overflowing(**fields):
        if fields["order"] == 3:
            raise OverflowError("math range error")
        return real(**fields)

    monkeypatch.setattr(calibration, "OrderStats", overflowing)
    cal = engine.Calibration(X + X, Y + Y)  # two replicates of each level
    for order in (4, 4, 1):
        with pytest.raises(OverflowError):
            cal.stats(order)
