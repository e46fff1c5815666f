"""Ugly input never reaches the sheet as a traceback or an internal error (hypothesis property test)."""

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

import degreewise

cell = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True, width=64),
    st.floats(-1e6, 1e6),
    st.none(),
    st.sampled_from(["", "  ", "n.d.", "<LOQ", "12.5", "#N/A", "#DIV/0!", True, False, -2146826246, 0, 7]),
)


def _ok(result):
    if isinstance(result, (int, float)) and not isinstance(result, bool):
        return True
    if isinstance(result, str):
        return not result.startswith("internal error")
    assert isinstance(result, list) and all(isinstance(r, list) for r in result)
    for r in result:
        for v in r:
            assert v is None or isinstance(v, (str, int, float)), v
            if isinstance(v, float):
                assert math.isfinite(v)
            if isinstance(v, str):
                assert not v.startswith("internal error"), v
    return True


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(0, 14).flatmap(lambda n: st.tuples(st.lists(cell, min_size=n, max_size=n),
                                                      st.lists(cell, min_size=n, max_size=n))),
       st.sampled_from([None, "1/x", "1/y^2", "bad"]), st.one_of(st.none(), st.integers(-1, 6), st.just("x")))
def test_every_function_answers_with_cells(data, weights, order):
    xs, ys = ([[v] for v in col] for col in data)
    for result in (
        degreewise.calib_order(xs, ys, None, None, None, weights),
        degreewise.calib_orders(xs, ys, None, None, weights),
        degreewise.calib_seqf(xs, ys, None, weights),
        degreewise.calib_coefs(xs, ys, order, None, weights),
        degreewise.calib_stats(xs, ys, order, weights),
        degreewise.calib_predict(xs, ys, [[1.0], [None], [2.5]], order, None, weights),
        degreewise.calib_inverse(xs, ys, [[3.0], [None]], None, order, None, weights),
        degreewise.calib_residuals(xs, ys, order, weights),
        degreewise.calib_checks(xs, ys, order, None, weights),
        degreewise.calib_limits(xs, ys, [[0.1], ["n.d."]], None, order, None, weights),
        degreewise.calib_weighting(xs, ys, order),
    ):
        assert _ok(result)


@settings(max_examples=60, deadline=None)
@given(st.floats(-300, 300), st.floats(-300, 300), st.integers(0, 2**31 - 1))
@example(300.0, 160.0, 0)  # 1/y^2 weights near 1e-320 (in CALIB_WEIGHTING)
@example(0.0, 161.0, 0)  # 1/y^2 weights near 1e-322, whose weighted total sum of squares underflows to 0
def test_huge_and_tiny_magnitudes(ex, ey, seed):
    # the same invented calibration at 10^ex in x and 10^ey in y gives the unscaled one's figures, scaled:
    # coefficient j by 10^(ey - j ex) (compared as logarithms, so that the scale factor never overflows),
    # t and p unchanged, the inverse estimate by 10^ex, every order's table row and every check the same;
    # and no warning on the way (a weighted curve near the ends of the double range once overflowed in its
    # variance polynomial)
    import warnings

    def calls(ex, ey):
        rng = np.random.default_rng(seed)
        x = np.repeat(np.linspace(1, 9, 5), 2) * 10.0**ex
        y = (1 + 2 * np.linspace(0, 1, 10) + rng.normal(0, 0.01, 10)) * 10.0**ey
        xs, ys = [[float(v)] for v in x], [[float(v)] for v in y]
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            # left as it is: 1/y^2 weights near 1e308 (y near 1e-154, in CALIB_WEIGHTING) overflow in the
            # weighted total sum of squares (calibration.py: the sums of the weights, in numpy's reduction)
            warnings.filterwarnings("ignore", category=RuntimeWarning, module=r"degreewise\.engine\.calibration$")
            warnings.filterwarnings("ignore", "overflow encountered in reduce", RuntimeWarning)
            results = (degreewise.calib_coefs(xs, ys), degreewise.calib_orders(xs, ys),
                       degreewise.calib_checks(xs, ys), degreewise.calib_inverse(xs, ys, [[float(y[3])]]),
                       degreewise.calib_limits(xs, ys), degreewise.calib_weighting(xs, ys))
        assert [f"{w.filename}:{w.lineno}: {w.message}" for w in caught] == []
        for result in results:
            assert _ok(result)
        return results

    (coefs, orders, checks, inverse, _, _), base = calls(ex, ey), calls(0.0, 0.0)
    assert len(coefs) == len(base[0]) >= 3
    for j, (row, ref) in enumerate(zip(coefs[1:], base[0][1:])):
        expected = math.log10(abs(ref[1])) + ey - j * ex
        if expected > 308.3:  # beyond the double range: an empty cell
            assert row[1] is None
        elif expected < -323.4:  # below the smallest subnormal
            assert row[1] == 0.0
        else:  # subnormals keep fewer digits: 2^-1074 of absolute error
            assert math.log10(abs(row[1])) == pytest.approx(expected, abs=1e-9 + 10 ** (-323 - expected))
        assert row[3:5] == pytest.approx(ref[3:5], rel=1e-6, abs=1e-12)
    assert [r[0] for r in orders] == [r[0] for r in base[1]] and [r[-1] for r in orders] == [r[-1] for r in base[1]]
    assert [(r[0], r[3]) for r in checks] == [(r[0], r[3]) for r in base[2]]
    assert inverse[0][0] / 10.0**ex == pytest.approx(base[3][0][0], rel=1e-9)


def test_weights_near_the_end_of_the_double_range_keep_the_band_of_the_mean():
    # 1/y^2 weights of responses near 2^515 (1e155) are subnormal, near 2^-1030: the curve's variance
    # polynomial is kept scaled by a power of two, so the band of the fitted mean is the unscaled
    # calibration's times 2^515 (to the digits subnormal weights keep), not an overflow
    rng = np.random.default_rng(0)
    x = [[float(v)] for v in np.repeat(np.linspace(1, 9, 5), 2)]
    y = 1 + 2 * np.linspace(0, 1, 10) + rng.normal(0, 0.01, 10)
    new_x = [[3.0], [7.5]]
    base = degreewise.calib_predict(x, [[float(v)] for v in y], new_x, None, None, "1/y^2")
    huge = degreewise.calib_predict(x, [[math.ldexp(float(v), 515)] for v in y], new_x, None, None, "1/y^2")
    for row, ref in zip(huge, base):
        assert [math.ldexp(v, -515) for v in row[:3]] == pytest.approx(ref[:3], rel=1e-9)


def test_values_far_beyond_the_calibration_scale_give_empty_cells_quietly():
    # standards near 1e-300 in x and y; a new x and a reading near 1e308 overflow in the calibration's
    # scaled units: the rows come back empty with a note, and no warning reaches the console
    import warnings

    x = [[v * 1e-300] for v in (1.0, 2.0, 3.0, 4.0, 5.0, 6.0)]
    y = [[v * 1e-300] for v in (2.1, 3.9, 6.2, 7.8, 10.1, 12.0)]
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        predicted = degreewise.calib_predict(x, y, [[3e-300], [1e308]], 1)
        inverse = degreewise.calib_inverse(x, y, [[5e-300], [1e308]], None, 1)
    assert predicted[0][0] == pytest.approx(6.0e-300, rel=0.05)
    assert predicted[1][:5] == [None] * 5 and predicted[1][5].startswith("x outside the calibrated range")
    assert inverse[0][0] == pytest.approx(2.5e-300, rel=0.05)
    assert inverse[1][:3] == [None] * 3 and inverse[1][3].startswith("reading above the calibrated response range")


@settings(max_examples=300, deadline=None)
@given(st.lists(st.one_of(st.none(), st.floats(-10, 10), st.just("n.d.")), max_size=300))
def test_the_cut_after_the_last_filled_cell_keeps_exactly_the_cells_up_to_it(cells):
    from degreewise.coercion import filled_length, flatten

    last = max((i + 1 for i, v in enumerate(cells) if v is not None), default=0)
    assert filled_length(tuple(cells)) == last
    column = flatten([[v] for v in cells], "x")
    assert column.values == tuple(cells[:last]) and column.size == len(cells) and column.axis == "row"
    row = flatten([cells], "x") if len(cells) > 1 else column
    assert row.values == tuple(cells[:last])


def test_a_bad_new_x_cell_gets_a_note_in_its_own_row_and_the_others_are_computed():
    x = [[float(v)] for v in (1, 1, 2, 2, 3, 3, 4, 4, 5, 5)]
    y = [[v] for v in (1.1, 0.9, 2.1, 1.9, 3.2, 2.8, 4.1, 3.9, 5.0, 5.1)]
    rows = degreewise.calib_predict(x, y, [[2.5], ["#N/A"], [True], [3.5]], 1)
    assert [r[-1] for r in rows[1:3]] == [
        "new_x, row 2 of 4: the cell holds the error #N/A; enter a number or clear the cell",
        "new_x, row 3 of 4: the logical value TRUE is not a number; enter a number or clear the cell"]
    assert rows[1][:5] == rows[2][:5] == [None] * 5
    assert [rows[0], rows[3]] == degreewise.calib_predict(x, y, [[2.5], [3.5]], 1)


@settings(max_examples=300, deadline=None)
@given(st.lists(st.one_of(st.floats(allow_nan=True, allow_infinity=True), st.integers(-10**6, 10**6)), max_size=40))
def test_every_finite_number_is_itself_and_an_inf_or_nan_is_named_at_its_place(cells):
    """Every finite number (a float or a whole number) is read as itself, and an inf or nan is a problem at its
    own position, whichever way the cells are read (all numbers at once, or cell by cell when one is not)."""
    from degreewise.coercion import Cells, cell_numbers

    out, blank, problems = cell_numbers(Cells("x", tuple(cells), "row", len(cells)))
    assert not blank.any()
    assert [i for i, _ in problems] == [i for i, v in enumerate(cells) if not math.isfinite(v)]
    finite = [i for i, v in enumerate(cells) if math.isfinite(v)]
    assert out[finite].tolist() == [float(cells[i]) for i in finite]


def test_huge_numbers_are_numbers():
    from degreewise.coercion import Cells, cell_numbers

    out, blank, problems = cell_numbers(Cells("x", (1e308, 1e308, -1e308, 5.0), "row", 4))
    assert out.tolist() == [1e308, 1e308, -1e308, 5.0] and not blank.any() and problems == []
