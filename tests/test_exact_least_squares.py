"""Coefficients, covariance diagonals and residual sums of squares against exact rational least squares
(Python's fractions.Fraction: every double is a rational number, and the normal equations V'WV b = V'Wy
are solved exactly by Gauss-Jordan elimination). The refinement promises results correct to about one
rounding of a double; the check allows two units of 2^-53, relative. A plain figure (its error estimate,
``Calibration.plain_bounds``, at most ``refine.TARGET``) must be within that estimate.
"""

from fractions import Fraction

import numpy as np
import pytest

from degreewise import engine
from degreewise.engine.refine import TARGET

ULP = Fraction(1, 2**53)


def _solve(a, b):
    """Exact Gauss-Jordan elimination: a (p x p) and b (p x q) as lists of Fractions."""
    p = len(a)
    m = [row[:] + extra[:] for row, extra in zip(a, b)]
    for i in range(p):
        pivot = next(r for r in range(i, p) if m[r][i] != 0)
        m[i], m[pivot] = m[pivot], m[i]
        m[i] = [v / m[i][i] for v in m[i]]
        for r in range(p):
            if r != i and m[r][i] != 0:
                factor = m[r][i]
                m[r] = [u - factor * v for u, v in zip(m[r], m[i])]
    return [row[p:] for row in m]


def exact_fit(x, y, order, w=None):
    """Coefficients, diagonal of (V'WV)^-1 and the weighted RSS, exactly."""
    xs, ys = [Fraction(float(v)) for v in x], [Fraction(float(v)) for v in y]
    ws = [Fraction(1)] * len(xs) if w is None else [Fraction(float(v)) for v in w]
    v = [[xi**j for j in range(order + 1)] for xi in xs]
    a = [[sum(wn * vn[i] * vn[j] for wn, vn in zip(ws, v)) for j in range(order + 1)] for i in range(order + 1)]
    rhs = [[sum(wn * vn[i] * yn for wn, vn, yn in zip(ws, v, ys))] + [Fraction(int(i == j)) for j in range(order + 1)]
           for i in range(order + 1)]
    sol = _solve(a, rhs)
    b = [row[0] for row in sol]
    rss = sum(wn * (yn - sum(bj * vj for bj, vj in zip(b, vn))) ** 2 for wn, vn, yn in zip(ws, v, ys))
    return b, [sol[i][1 + i] for i in range(order + 1)], rss


def _relative(got: float, want: Fraction) -> Fraction:
    return abs(Fraction(got) - want) / abs(want)


CASES = {
    "replicated levels": (np.repeat(np.linspace(1.0, 50.0, 8), 3), None),
    "spread x": (np.sort(np.random.default_rng(21).uniform(-5.0, 80.0, 24)), None),
    "weights": (np.repeat(np.linspace(0.5, 12.0, 6), 4), np.random.default_rng(22).uniform(0.2, 5.0, 24)),
}


def _tolerance(bound: float) -> Fraction:
    """What a figure promises: two roundings where it is refined (its plain estimate above the target),
    otherwise its plain error estimate, itself at most the target."""
    return 2 * ULP if bound > TARGET else Fraction(bound)


@pytest.mark.parametrize("case", CASES)
def test_results_are_exact_to_a_rounding_or_within_their_estimate(case):
    x, w = CASES[case]
    y = 2 + 3 * x + 0.01 * x**2 + np.random.default_rng(len(case)).normal(0, 1, x.size)
    cal = engine.Calibration(x, y, max_order=4, weights=w)
    for order in range(1, 5):
        b, cov, rss = exact_fit(x, y, order, w)
        fit, bounds = cal.fit(order), cal.plain_bounds(order)
        sd = float(rss / (x.size - order - 1)) ** 0.5
        for got, want in zip(fit.coefficients, b):
            assert _relative(got, want) <= _tolerance(bounds.coefficients), (order, got, float(want))
        for got, want in zip(fit.std_errors, cov):
            # se = s sqrt(d): compare d = (se / s)^2 with the exact diagonal, allowing the roundings of s
            assert abs(got / sd) ** 2 == pytest.approx(float(want), rel=max(1e-14, 2 * bounds.variances)), (order, got)
        assert _relative(cal.stats(order).rss, rss) <= max(2 * ULP * x.size, _tolerance(bounds.rss)), order
