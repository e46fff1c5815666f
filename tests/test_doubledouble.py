"""Double-double arithmetic against exact rational arithmetic (Python's fractions.Fraction: every double
is a rational number, and Fraction computes with them exactly)."""

from fractions import Fraction

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from degreewise.engine import doubledouble as dd

finite = st.floats(min_value=-1e300, max_value=1e300, allow_nan=False, allow_infinity=False)
# error-free products need the product and its error term above the underflow threshold, and no
# overflow in Dekker's split: magnitudes in [2^-450, 2^450] (or zero) keep both far inside the range
moderate = st.one_of(st.just(0.0), st.builds(lambda m, e: m * 2.0**e, st.floats(0.5, 1.0, exclude_max=True),
                                             st.integers(-450, 450)),
                     st.builds(lambda m, e: -m * 2.0**e, st.floats(0.5, 1.0, exclude_max=True),
                               st.integers(-450, 450)))


def exact(hi, lo) -> Fraction:
    return Fraction(float(hi)) + Fraction(float(lo))


@settings(max_examples=300, deadline=None)
@given(finite, finite)
def test_two_sum_is_error_free(a, b):
    # Knuth's TwoSum: s + e == a + b exactly
    s, e = dd.two_sum(np.float64(a), np.float64(b))
    assert exact(s, e) == Fraction(a) + Fraction(b)


@settings(max_examples=300, deadline=None)
@given(moderate, moderate)
def test_two_prod_is_error_free(a, b):
    # Dekker's TwoProduct: p + e == a * b exactly (no underflow, no overflow in the split)
    p, e = dd.two_prod(np.float64(a), np.float64(b))
    assert exact(p, e) == Fraction(a) * Fraction(b)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.one_of(st.just(0.0), st.floats(min_value=2.0**-60, max_value=8.0),
                          st.floats(min_value=-8.0, max_value=-(2.0**-60))), min_size=1, max_size=12),
       st.integers(min_value=1, max_value=11))
def test_powers_to_double_double_accuracy(values, order):
    x = np.array(values)
    hi, lo = dd.powers(x, order)
    assert hi.shape == lo.shape == (x.size, order + 1)
    for i, v in enumerate(values):
        for k in range(order + 1):
            want = Fraction(v) ** k
            got = exact(hi[i, k], lo[i, k])
            if want == 0:
                assert got == 0
            else:
                # a few units of 2^-106 per product, ceil(log2 order) products deep (the rule of thumb
                # for sloppy double-double products); 2^-100 leaves room and still fails a plain double
                assert abs((got - want) / want) <= Fraction(1, 2**100), (v, k)


def test_powers_of_order_zero_and_one_are_exact():
    x = np.array([0.1, -3.0, 7.5])
    hi, lo = dd.powers(x, 1)
    assert hi.tolist() == [[1.0, 0.1], [1.0, -3.0], [1.0, 7.5]]
    assert not lo.any()
