"""Engine speed: one calibration's worth of work against a statsmodels pipeline, side by side.

Run: python benchmarks/bench_engine.py   (needs the test extra: statsmodels, pandas)
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
import workloads  # noqa: E402

from degreewise import engine  # noqa: E402
from degreewise.commands.validate import load as load_strd  # noqa: E402


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
    and the median and quartiles of the per-round ratios (our median in that round / reference: below 1,
    ours is faster)."""
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
        ratios.append(statistics.median(this_round) / theirs[-1])
    quartiles = statistics.quantiles(ratios, n=4)
    return statistics.median(mine), statistics.median(theirs), (statistics.median(ratios), quartiles[0], quartiles[2])


def ratio_words(ratio) -> str:
    middle, low, high = ratio
    return f"{middle:8.3f} ours / statsmodels (median of per-round ratios; quartiles {low:.3f} to {high:.3f})"


def main():
    data = workloads.typical()
    assert workloads.degreewise_engine(*data) == workloads.statsmodels_pipeline(*data)
    ours, ref, ratio = side_by_side(workloads.degreewise_engine, workloads.statsmodels_pipeline, data)
    print("typical calibration (8 levels x 3 replicates, max order 4): order choice, all tables,")
    print("10 predictions, 10 inverse predictions, residual diagnostics and checks")
    print(f"  degreewise engine     {ours * 1e3:8.3f} ms per calibration (median)")
    print(f"  statsmodels pipeline  {ref * 1e3:8.3f} ms per calibration (median)")
    print(f"  ratio                 {ratio_words(ratio)}")
    x, y, _ = load_strd("filip")
    filip = median_time(lambda: engine.Calibration(x, y, max_order=10).fit(10), repeat=100)
    print(f"Filip (82 points, order 10) fit with refined coefficients and standard errors: {filip * 1e3:.3f} ms")
    print("one million points: python benchmarks/bench_large.py")


if __name__ == "__main__":
    main()
