"""Error rates of the order rules, measured by simulation (fixed seeds; `pytest -s` prints the table).

Correctly specified calibrations with normal errors (sigma = 1) on four designs (levels x replicates, levels
equally spaced): a true straight line, y = 1 + 2t, and a true quadratic that bends BEND sigma away from its
chord at mid-range, y = 1 + 2t + 4 BEND t (1 - t), t in [0, 1]. For each rule: the rate of choosing an order
above 1 for the line ("false higher order") and of choosing exactly 2 for the quadratic ("power").

What is asserted:
- stepdown (the default): false higher order <= alpha + 1 percentage point, plus two binomial standard
  errors of N_LINE calibrations at that rate (a rule whose true rate is exactly at the target fails with
  probability about 2.3 %); Bonferroni's inequality bounds the true rate by alpha.
- forward: under a true line its first step is the exact F(1, n - 3) test of the quadratic term, so its false
  higher order rate is alpha (textbook F test, e.g. Draper & Smith, Applied Regression Analysis, 3rd ed. 1998,
  sec. 6.1); asserted within three binomial standard errors.
- every stepdown pick equals an independent computation written here: nested least-squares fits by
  numpy.linalg.lstsq, extra-sum-of-squares F by scipy.stats.f, the top-down procedure as published
  (Anderson, Ann. Math. Statist. 33 (1962) 255-265, cited from memory) with levels alpha / (K - 1).
"""

import math

import numpy as np
import pytest
from scipy import stats

from degreewise import engine

pytestmark = pytest.mark.slow  # simulations of thousands of calibrations

ALPHA = 0.05
N_LINE, N_QUAD, BEND = 2000, 500, 2.0
DESIGNS = {"6 x 3": (6, 3), "8 x 2": (8, 2), "10 x 1": (10, 1), "8 x 1": (8, 1)}
MAX_ORDER = {"6 x 3": 4, "8 x 2": 4, "10 x 1": 4, "8 x 1": 3}  # default_max_order's documented formula


def _design(name):
    levels, reps = DESIGNS[name]
    x = np.repeat(np.arange(1.0, levels + 1), reps)
    return x, (x - 1) / (levels - 1)


def _responses(name, truth, count):
    x, t = _design(name)
    mean = 1 + 2 * t + (4 * BEND * t * (1 - t) if truth == "quadratic" else 0)
    seed = [12, *DESIGNS[name], truth == "quadratic"]
    return mean + np.random.default_rng(seed).standard_normal((count, x.size))


def _independent_stepdown(x, ys, big_k):
    """Top-down picks for each row of ys, from nested fits by lstsq (independent of the engine)."""
    n = x.size
    basis = np.vander((x - x.mean()) / np.ptp(x), big_k + 1, increasing=True)
    rss = np.array([((ys.T - basis[:, : k + 1] @ np.linalg.lstsq(basis[:, : k + 1], ys.T, rcond=None)[0]) ** 2)
                    .sum(axis=0) for k in range(big_k + 1)])
    picks = np.ones(ys.shape[0], dtype=int)
    undecided = np.ones(ys.shape[0], dtype=bool)
    for k in range(big_k, 1, -1):
        df = n - k - 1
        p = stats.f.sf((rss[k - 1] - rss[k]) / (rss[k] / df), 1, df)
        hit = undecided & (p < ALPHA / (big_k - 1))
        picks[hit], undecided = k, undecided & ~hit
    return picks


@pytest.fixture(scope="module")
def picks():
    """{(design, truth): {rule: array of picked orders}} and the independent stepdown picks."""
    out = {}
    for name in DESIGNS:
        x, _ = _design(name)
        for truth, count in (("line", N_LINE), ("quadratic", N_QUAD)):
            ys = _responses(name, truth, count)
            chosen = {rule: np.empty(count, dtype=int) for rule in engine.RULES}
            for i, y in enumerate(ys):
                cal = engine.Calibration(x, y)
                assert cal.max_order == MAX_ORDER[name]
                for rule in engine.RULES:
                    chosen[rule][i] = engine.choose_order(cal, rule, ALPHA).order
            out[name, truth] = chosen, _independent_stepdown(x, ys, MAX_ORDER[name])
    print(f"\norder rules, alpha {ALPHA}: false higher order on a true line ({N_LINE} calibrations) / power: "
          f"order 2 on a quadratic bending {BEND} sigma from its chord ({N_QUAD} calibrations)")
    print(f"{'rule':9}" + "".join(f"{name:>16}" for name in DESIGNS))
    for rule in engine.RULES:
        cells = [f"{(out[n, 'line'][0][rule] > 1).mean():7.1%} /{(out[n, 'quadratic'][0][rule] == 2).mean():6.1%}"
                 for n in DESIGNS]
        print(f"{rule:9}" + "".join(f"{c:>16}" for c in cells))
    return out


@pytest.mark.parametrize("name", DESIGNS)
def test_stepdown_holds_the_chance_of_too_high_an_order_at_alpha(picks, name):
    rate = (picks[name, "line"][0]["stepdown"] > 1).mean()
    target = ALPHA + 0.01
    assert rate <= target + 2 * math.sqrt(target * (1 - target) / N_LINE)


@pytest.mark.parametrize("name", DESIGNS)
def test_forward_first_step_is_an_exact_level_alpha_test(picks, name):
    rate = (picks[name, "line"][0]["forward"] > 1).mean()
    assert abs(rate - ALPHA) <= 3 * math.sqrt(ALPHA * (1 - ALPHA) / N_LINE)


@pytest.mark.parametrize("name", DESIGNS)
@pytest.mark.parametrize("truth", ["line", "quadratic"])
def test_stepdown_picks_equal_an_independent_computation(picks, name, truth):
    chosen, independent = picks[name, truth]
    np.testing.assert_array_equal(chosen["stepdown"], independent)
