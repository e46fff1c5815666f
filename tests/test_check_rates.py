"""How often the checks table warns on correct calibrations (fixed seeds, deterministic).

Straight lines with independent normal errors of constant SD, checked at their true order 1, on the
designs 6 levels x 3, 8 x 2 and 10 x 1. Lack of fit warns below alpha (where replicates allow it) and
each other test below alpha / FAMILY, so the table as a whole should warn on at most 2 alpha = 10 % of
these curves (Bonferroni), lack of fit on about alpha and each other test on about alpha / FAMILY.
Tolerances are three binomial standard errors of the simulated rate.
"""

import math

import numpy as np
import pytest

from degreewise import engine
from degreewise.engine.diagnostics import FAMILY

pytestmark = pytest.mark.slow  # simulations of thousands of calibrations

ALPHA = 0.05
RUNS = 1000  # calibrations per design
DESIGNS = {"6 x 3": (6, 3), "8 x 2": (8, 2), "10 x 1": (10, 1)}
EXACT_F = ("lack of fit", "Mandel linear vs quadratic")  # tests whose p is exact under these curves


def _se(rate: float, n: int) -> float:
    return math.sqrt(rate * (1 - rate) / n)


@pytest.fixture(scope="module")
def warnings_by_design():
    out = {}
    for seed, (name, (levels, reps)) in enumerate(DESIGNS.items()):
        rng = np.random.default_rng(1000 + seed)
        x = np.repeat(np.linspace(1.0, 10.0, levels), reps)
        y = 0.5 + 2.0 * x + rng.normal(0.0, 0.3, (RUNS, x.size))
        rows = []
        for yi in y:
            checks = engine.curve_checks(engine.Calibration(x, yi), 1, ALPHA)
            rows.append({c.name: c.verdict for c in checks})
        out[name] = rows
    return out


def test_the_table_warns_on_at_most_two_alpha_of_correct_curves(warnings_by_design):
    for name, rows in warnings_by_design.items():
        rate = sum("warning" in r.values() for r in rows) / len(rows)
        print(f"\n{name}: the table warns on {rate:.1%} of {len(rows)} correct straight lines")
        assert rate <= 2 * ALPHA + 3 * _se(2 * ALPHA, len(rows))


def test_each_check_warns_near_its_own_level(warnings_by_design):
    names = [n for n in next(iter(warnings_by_design.values()))[0]]
    for name in names:
        level = ALPHA if name == "lack of fit" else ALPHA / FAMILY
        verdicts = [r[name] for rows in warnings_by_design.values() for r in rows if r[name] != "n/a"]
        rate = verdicts.count("warning") / len(verdicts)
        print(f"\n{name}: warns on {rate:.2%} of {len(verdicts)} (level {level:.3%})")
        assert rate <= level + 3 * _se(level, len(verdicts))
        if name in EXACT_F:
            assert rate >= level - 3 * _se(level, len(verdicts))
