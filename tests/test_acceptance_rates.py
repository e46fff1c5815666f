"""How often ICH M10's chromatographic criteria reject a correct run (engine.acceptance), by simulation on
fixed seeds: true straight lines, 8 levels from 1 to 200 in duplicate, normal errors with a constant CV,
weights 1/x^2. `pytest -s` prints the table quoted in the README.

The share of single standards failing is checked against the normal approximation (common practice): a
standard reads back about CV N(0, 1) off, so it fails with chance about P(|Z| > limit / CV); the fit takes up
part of the scatter (each residual's SD is about sigma sqrt(1 - p/n)), so the measured share lies between
that approximation and the one with CV sqrt(1 - p/n).
"""

import numpy as np
import pytest
from scipy import stats

from degreewise import engine
from degreewise.engine import acceptance as A

LEVELS = np.array([1.0, 2.0, 5.0, 10.0, 20.0, 50.0, 100.0, 200.0])
X = np.repeat(LEVELS, 2)
RUNS = 400


def simulate(cv: float, seed: int):
    rng = np.random.default_rng(seed)
    rejected = failing = 0
    for _ in range(RUNS):
        y = (0.002 + 0.015 * X) * (1 + rng.normal(0.0, cv, X.size))
        verdict = A.judge(engine.Calibration(X, y, 1, "1/x^2"), 1, A.M10_CHROMATOGRAPHIC)
        rejected += not verdict.acceptable
        failing += sum(s.passed is False for s in verdict.standards)
    return rejected / RUNS, failing / (RUNS * X.size)


def approximate_fail_share(cv: float, shrink: float = 1.0) -> float:
    """P(a standard fails): 14 standards at +-15 %, the 2 of the lowest level at +-20 %, normal errors."""
    tail = lambda limit: 2 * stats.norm.sf(limit / (cv * shrink))  # noqa: E731
    return (14 * tail(0.15) + 2 * tail(0.20)) / 16


@pytest.mark.parametrize("cv, seed, rejected_range", [
    (0.05, 501, (0.0, 0.01)),     # measured on 1000 runs: 0.0 %; within 3 binomial SE of it
    (0.10, 502, (0.067, 0.163)),  # measured on 1000 runs: 11.5 %; within 3 binomial SE (1.6 %) of it
])
def test_correct_runs_are_rejected_about_as_often_as_measured(cv, seed, rejected_range):
    rejected, failing = simulate(cv, seed)
    print(f"CV {cv:.0%}: runs rejected {rejected:.1%}, standards failing {failing:.1%}")
    low, high = approximate_fail_share(cv, np.sqrt(1 - 2 / X.size)), approximate_fail_share(cv)
    margin = 3 * np.sqrt(high * (1 - high) / (RUNS * X.size))
    assert low - margin <= failing <= high + margin
    assert rejected_range[0] <= rejected <= rejected_range[1]
