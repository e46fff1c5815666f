"""The checks' procedures against their published descriptions and independent computations written here:
the runs distribution by enumeration, the Durbin-Watson p against Imhof's exact integral and a Monte Carlo,
the null distribution of Cook's distance against a Monte Carlo."""

import itertools
import math

import numpy as np
import pytest
from scipy import integrate

from degreewise.engine.diagnostics import cook_tail, durbin_watson_p, runs_distribution, runs_exact_p, runs_test


def _runs(signs) -> int:
    return 1 + sum(a != b for a, b in zip(signs, signs[1:]))


@pytest.mark.parametrize("n1, n2", [(5, 5), (3, 7), (6, 4), (1, 4), (8, 2), (7, 6)])
def test_runs_distribution_is_the_enumerated_one(n1, n2):
    # every arrangement of n1 plus and n2 minus signs, equally likely (Swed & Eisenhart 1943's setting)
    counts = {}
    for plus in itertools.combinations(range(n1 + n2), n1):
        signs = [i in plus for i in range(n1 + n2)]
        r = _runs(signs)
        counts[r] = counts.get(r, 0) + 1
    total = math.comb(n1 + n2, n1)
    r, pmf = runs_distribution(n1, n2)
    expected = np.array([counts.get(v, 0) / total for v in r.tolist()])
    np.testing.assert_allclose(pmf, expected, rtol=1e-12, atol=1e-15)


def test_exact_runs_test_holds_its_level_where_the_normal_approximation_does_not():
    # 5 positive and 5 negative residual signs, all 252 orders equally likely: the normal approximation
    # (Wald & Wolfowitz 1940, no continuity correction) rejects 20 of them at 0.05 (7.9 %); the exact
    # two-sided test at most 5 %
    exact, normal = 0, 0
    for plus in itertools.combinations(range(10), 5):
        e = np.array([1.0 if i in plus else -1.0 for i in range(10)])
        exact += runs_exact_p(e) < 0.05
        normal += runs_test(e)[1] < 0.05
    assert normal == 20
    assert exact / 252 <= 0.05
    assert exact == 4  # the two arrangements with 2 runs and the two with 10: p = 2 * 2/252 = 0.0159


def _dw_matrix(n):
    return np.diag(np.r_[1.0, np.full(n - 2, 2.0), 1.0]) - np.eye(n, k=1) - np.eye(n, k=-1)


def _imhof_cdf(d, q):
    """P(DW <= d) exactly: P(sum_j lambda_j chi2_1 < 0) with lambda the eigenvalues of M (A - d I) M,
    by Imhof's integral (Imhof, Biometrika 48 (1961) 419-426, from memory):
    P(Q < 0) = 1/2 - (1/pi) int_0^inf sin(theta(u)) / (u rho(u)) du, theta = sum arctan(lambda u) / 2,
    rho = prod (1 + lambda^2 u^2)^(1/4)."""
    n = q.shape[0]
    m = np.eye(n) - q @ q.T
    lam = np.linalg.eigvalsh(m @ (_dw_matrix(n) - d * np.eye(n)) @ m)
    lam = lam[np.abs(lam) > 1e-9]

    def integrand(u):
        return np.sin(0.5 * np.arctan(lam * u).sum()) / (u * np.prod((1 + lam**2 * u**2) ** 0.25))

    value, _ = integrate.quad(integrand, 0, np.inf, limit=500)
    return 0.5 - value / math.pi


@pytest.mark.parametrize("levels, order", [(6, 1), (8, 1), (10, 1), (8, 2), (20, 1)])
def test_durbin_watson_p_against_imhofs_exact_integral(levels, order):
    q, _ = np.linalg.qr(np.polynomial.polynomial.polyvander(np.linspace(-1, 1, levels), order))
    for d in (0.8, 1.0, 1.3, 1.6, 2.0, 2.5):
        exact, approx = _imhof_cdf(d, q), durbin_watson_p(d, q)
        if exact < 0.05:  # the beta on (0, 4) is conservative in the tail that warns
            assert exact - 1e-6 <= approx <= exact + 0.01
        else:
            assert approx == pytest.approx(exact, abs=0.015)


def test_imhof_integral_agrees_with_a_monte_carlo():
    # the reference above checked by simulation: 40000 draws of normal errors through a straight-line fit
    rng = np.random.default_rng(11)
    q, _ = np.linalg.qr(np.polynomial.polynomial.polyvander(np.linspace(-1, 1, 10), 1))
    e = rng.standard_normal((40000, 10))
    u = e - (e @ q) @ q.T
    d = (np.diff(u, axis=1) ** 2).sum(axis=1) / (u * u).sum(axis=1)
    for c in (1.0, 1.6, 2.0):
        rate = float((d <= c).mean())
        assert rate == pytest.approx(_imhof_cdf(c, q), abs=4 * math.sqrt(rate * (1 - rate) / d.size) + 1e-4)


def test_cook_tail_against_a_monte_carlo():
    # Cook's distance of a straight-line fit to 10 points (leverages 0.1 to 0.35) under normal errors
    rng = np.random.default_rng(12)
    x = np.array([1.0, 2, 3, 4, 5, 6, 7, 8, 9, 20])
    v = np.vander(x, 2, increasing=True)
    hat = v @ np.linalg.solve(v.T @ v, v.T)
    h = np.diag(hat)
    e = rng.standard_normal((40000, x.size)) @ (np.eye(x.size) - hat)
    s2 = (e * e).sum(axis=1, keepdims=True) / (x.size - 2)
    cook = e**2 / s2 * h / (2 * (1 - h) ** 2)
    for d in (0.2, 0.5, 1.0, 2.0):
        rate = (cook >= d).mean(axis=0)
        expected = cook_tail(d, h, 2, x.size - 2)
        np.testing.assert_allclose(rate, expected, atol=4 * np.sqrt(expected * (1 - expected) / 40000).max() + 2e-4)


def test_the_runs_row_shows_the_number_of_runs_its_exact_p_belongs_to():
    """The checks table's statistic is the count of runs of residual signs (not the normal z): its p-value is
    the two-sided exact one of that count, by enumeration of every arrangement of the signs."""
    from degreewise import engine

    x = np.arange(1.0, 13.0)
    y = 2.0 + 0.5 * x + np.array([0.3, 0.2, 0.1, -0.2, -0.3, -0.1, -0.2, 0.1, 0.3, 0.2, 0.25, -0.1])
    row = next(c for c in engine.curve_checks(engine.Calibration(x, y, max_order=1), 1)
               if c.name == "runs of residual signs")
    resid = y - np.polyval(np.polyfit(x, y, 1), x)  # numpy's own least-squares line
    signs = [v >= 0 for v in resid]
    runs, n1, n = _runs(signs), sum(signs), len(signs)
    counts = [_runs([i in plus for i in range(n)]) for plus in itertools.combinations(range(n), n1)]
    low = sum(c <= runs for c in counts) / len(counts)
    high = sum(c >= runs for c in counts) / len(counts)
    assert row.statistic == runs == 4
    assert row.p_value == pytest.approx(min(1.0, 2 * min(low, high)), rel=1e-12)
