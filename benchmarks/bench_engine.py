"""Engine speed: one calibration's worth of work against a statsmodels pipeline, side by side.

Run: python benchmarks/bench_engine.py   (needs the test extra: statsmodels, pandas)
"""

from __future__ import annotations

import statistics
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np
import pandas as pd
import statsmodels.api as sm
import statsmodels.formula.api as smf
from statsmodels.stats.anova import anova_lm

sys.path.insert(0, str(Path(__file__).resolve().parent))
import workloads  # noqa: E402

from degreewise import engine  # noqa: E402
from conftest_free import load_filip  # noqa: E402


def median_time(func, *args, repeat=200):
    for _ in range(min(20, repeat)):
        func(*args)
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        func(*args)
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def side_by_side(ours, reference, args, rounds=60, ours_per_round=10):
    """Both measured in alternating rounds (ours ``ours_per_round`` times, then the reference once),
    so that machine drift hits both alike. Returns the medians of our times and of the reference's,
    and the median and quartiles of the per-round ratios (reference / our median in that round)."""
    for _ in range(5):
        ours(*args)
        reference(*args)
    mine, theirs, ratios = [], [], []
    for _ in range(rounds):
        this_round = []
        for _ in range(ours_per_round):
            t0 = time.perf_counter()
            ours(*args)
            this_round.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        reference(*args)
        theirs.append(time.perf_counter() - t0)
        mine += this_round
        ratios.append(theirs[-1] / statistics.median(this_round))
    quartiles = statistics.quantiles(ratios, n=4)
    return statistics.median(mine), statistics.median(theirs), (statistics.median(ratios), quartiles[0], quartiles[2])


def ratio_words(ratio) -> str:
    middle, low, high = ratio
    return f"{middle:8.1f} x faster (median of per-round ratios; quartiles {low:.1f} to {high:.1f})"


def main():
    data = workloads.typical()
    assert workloads.degreewise_engine(*data) == workloads.statsmodels_pipeline(*data)
    ours, ref, ratio = side_by_side(workloads.degreewise_engine, workloads.statsmodels_pipeline, data)
    print("typical calibration (8 levels x 3 replicates, max order 4): order choice, all tables,")
    print("10 predictions, 10 inverse predictions, residual diagnostics and checks")
    print(f"  degreewise engine     {ours * 1e3:8.3f} ms per calibration (median)")
    print(f"  statsmodels pipeline  {ref * 1e3:8.3f} ms per calibration (median)")
    print(f"  ratio                 {ratio_words(ratio)}")
    x, y = load_filip()
    filip = median_time(lambda: engine.Calibration(x, y, max_order=10).fit(10), repeat=100)
    print(f"Filip (82 points, order 10) fit with refined coefficients and standard errors: {filip * 1e3:.3f} ms")
    n = 1_000_000
    big_x = np.tile(np.linspace(0, 100, 10), n // 10)
    big_y = 1 + 0.5 * big_x + np.random.default_rng(0).normal(0, 0.1, n)
    ours_s, ours_mib = traced(lambda: large_engine(big_x, big_y))
    ref_s, ref_mib = traced(lambda: large_statsmodels(big_x, big_y))
    print("one million points, max order 4: the sequential table, order choice and coefficients")
    print(f"  degreewise engine     {ours_s:6.2f} s  peak traced memory {ours_mib:7.1f} MiB  (best of 3)")
    print(f"  statsmodels           {ref_s:6.2f} s  peak traced memory {ref_mib:7.1f} MiB  (OLS of orders 1..3;"
          " order 4 by formula, anova_lm typ 1)")
    print(f"  ratios statsmodels/this: time {ref_s / ours_s:.2f}, peak memory {ref_mib / ours_mib:.2f}")


def large_engine(x, y):
    cal = engine.Calibration(x, y)
    order = engine.choose_order(cal).order
    return cal.fit(order).coefficients


def large_statsmodels(x, y):
    """What the pipeline does for the order and coefficients: every order's OLS fit and the sequential table."""
    fits = [sm.OLS(y, np.vander(x, k + 1, increasing=True)).fit() for k in range(1, 4)]
    table = anova_lm(smf.ols("y ~ x + I(x**2) + I(x**3) + I(x**4)", pd.DataFrame({"x": x, "y": y})).fit(), typ=1)
    return table, fits[0].params


def traced(func, repeat=3):
    """Seconds (the best of ``repeat`` untraced calls) and the peak traced allocations of one more call
    (tracemalloc sees numpy's arrays, and slows allocation, so it is not timed)."""
    seconds = min(_seconds(func) for _ in range(repeat))
    tracemalloc.start()
    func()
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return seconds, peak / 2**20


def _seconds(func):
    t0 = time.perf_counter()
    func()
    return time.perf_counter() - t0


if __name__ == "__main__":
    main()
