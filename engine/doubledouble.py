"""Double-double arithmetic on numpy arrays, in plain IEEE double.

A double-double number is an unevaluated sum ``hi + lo`` with ``|lo| <= ulp(hi)/2``,
about 32 significant digits. The error-free transformations are those of
Knuth (TwoSum) and Dekker (Split, TwoProduct): T. J. Dekker, "A floating-point
technique for extending the available precision", Numer. Math. 18 (1971) 224-242.
Nothing here relies on fused multiply-add or on an extended ``long double``,
so the results are the same on every platform. Splitting assumes
``|a| < 2**996`` (no overflow of ``a * 134217729``).
"""

from __future__ import annotations

import math

import numpy as np

_SPLITTER = 134217729.0  # 2**27 + 1


def ldexp(value: float, e: int) -> float:
    """value * 2**e (exact unless it under- or overflows); inf with the sign of value beyond the double range."""
    try:
        return math.ldexp(value, e)
    except OverflowError:
        return math.copysign(math.inf, value)


def two_sum(a, b):
    """``s + e == a + b`` exactly, ``s = fl(a + b)`` (Knuth)."""
    s = a + b
    bb = s - a
    e = (a - (s - bb)) + (b - bb)
    return s, e


def _fast_two_sum(a, b):
    """``s + e == a + b`` exactly, for ``|a| >= |b|`` (Dekker)."""
    s = a + b
    e = b - (s - a)
    return s, e


def _split(a):
    c = _SPLITTER * a
    hi = c - (c - a)
    return hi, a - hi


def two_prod(a, b, a_split=None):
    """``p + e == a * b`` exactly, ``p = fl(a * b)`` (Dekker); ``a_split`` may give split(a)."""
    p = a * b
    ah, al = _split(a) if a_split is None else a_split
    bh, bl = _split(b)
    e = ((ah * bh - p) + ah * bl + al * bh) + al * bl
    return p, e


def split(a):
    """Dekker's split: a == hi + lo with hi and lo of at most 26 significant bits."""
    return _split(a)


def add(ah, al, bh, bl):
    """Double-double sum (the accurate variant, QD library ``ieee_add``)."""
    s, e = two_sum(ah, bh)
    t, f = two_sum(al, bl)
    e = e + t
    s, e = _fast_two_sum(s, e)
    e = e + f
    return _fast_two_sum(s, e)


def mul_double(ah, al, b, b_split=None):
    """Double-double times a plain double; ``b_split`` may give split(b)."""
    p, e = two_prod(b, ah, b_split)
    e = e + al * b
    return _fast_two_sum(p, e)


def add_double(ah, al, b):
    """Double-double plus a plain double."""
    s, e = two_sum(ah, b)
    return _fast_two_sum(s, e + al)


def powers(x, order):
    """Columns ``x**0 .. x**order`` as double-double arrays of shape (n, order+1): x^k = x^(k-1) x by
    Dekker's product with x split once (``mul_double`` written out). The arrays are transposed views of
    (order+1, n) arrays, so that each power is a contiguous row."""
    x = np.asarray(x, dtype=float)
    hi = np.empty((order + 1, x.size))
    lo = np.empty_like(hi)
    hi[0], lo[0] = 1.0, 0.0
    if order >= 1:
        hi[1], lo[1] = x, 0.0
    if order >= 2:
        xh, xl = _split(x)
    for k in range(2, order + 1):
        a = hi[k - 1]
        p = x * a
        ah, at = _split(a)
        e = ((xh * ah - p) + xh * at + xl * ah) + xl * at + lo[k - 1] * x
        hi[k] = s = p + e
        lo[k] = e - (s - p)
    return hi.T, lo.T
