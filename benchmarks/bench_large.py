"""Large calibrations: time and memory against numpy, and every worksheet function's memory per point.

1. One million points (10 levels): ours is ``Calibration(x, y)`` (default max order K), the default rule's
   order and that order's fit (coefficients and standard errors: what CALIB_ORDER and CALIB_COEFS need): the
   data checked and sorted into levels, one QR of the basis up to order K, every order's residuals, sums of
   squares, F tests, AICc, BIC and PRESS, the order choice, and the chosen order's raw coefficients (refined
   to full double accuracy) and standard errors. The reference is ``numpy.linalg.lstsq`` (LAPACK dgelsd) of
   every order 0..K on the leading k + 1 columns of one raw power design ``np.vander(x, K + 1,
   increasing=True)`` (the least squares an analyst runs to compare the same orders): coefficients and
   residual sums of squares only, no standard errors, tests or choice. Ratios ours / reference per round,
   time and peak memory (below 1: ours faster or smaller).
2. Each of the fourteen worksheet functions alone on 300,000 points (desktop cells, caches cleared): the growth
   of the peak resident set over the one before the call, per point, the returned table included (the
   input cells are built before). CALIB_COMPARE's input is twice as many points (today and the reference).

Every measurement runs in a fresh subprocess (``ru_maxrss``, KiB on Linux), one BLAS thread unless
OPENBLAS_NUM_THREADS is set. Each round of part 1 runs reference, ours, ours, reference and compares the sums of
each side: on the shared development machine, with pairs in alternating order, the per-round ratios
alternated between about 0.7 and 1.6 with which side ran first (11 rounds, December 2026).

Run: python benchmarks/bench_large.py [rounds]
"""

from __future__ import annotations

import json
import os
import statistics
import subprocess
import sys

N, N_TABLE = 1_000_000, 300_000
FUNCTIONS = ("ORDER", "ORDERS", "SEQF", "COEFS", "STATS", "PREDICT", "INVERSE", "UNCERTAINTY", "RESIDUALS",
             "CHECKS", "LIMITS", "WEIGHTING", "COMPARE", "ACCEPTANCE")
ENV = {**os.environ, "OPENBLAS_NUM_THREADS": os.environ.get("OPENBLAS_NUM_THREADS", "1")}


def data(n: int):
    import numpy as np

    x = np.tile(np.linspace(0.0, 100.0, 10), n // 10)
    y = 1.0 + 0.5 * x + np.random.default_rng(0).normal(0.0, 0.1, x.size)
    return x, y


def ours(x, y):
    from degreewise import engine

    cal = engine.Calibration(x, y)
    fit = cal.fit(engine.choose_order(cal).order)
    return fit.coefficients, fit.std_errors


def reference(x, y, max_order=4):
    import numpy as np

    v = np.vander(x, max_order + 1, increasing=True)
    return [np.linalg.lstsq(v[:, : k + 1], y, rcond=None)[0] for k in range(max_order + 1)]


def function_call(name: str, n: int):
    """The worksheet function ``name`` on n desktop cells (x from 1 to 100 at 10 levels; nothing at x = 0)."""
    import numpy as np

    import degreewise as d

    x, y = data(n)
    x = x + 1.0
    cells = [[[float(v)] for v in a] for a in (x, y, y * 1.01 + 0.1)]
    xs, ys, ry = cells
    few = [[float(v)] for v in np.linspace(2.0, 90.0, 10)]
    calls = {"ORDER": lambda: d.calib_order(xs, ys), "ORDERS": lambda: d.calib_orders(xs, ys),
             "SEQF": lambda: d.calib_seqf(xs, ys), "COEFS": lambda: d.calib_coefs(xs, ys, 1),
             "STATS": lambda: d.calib_stats(xs, ys, 1), "PREDICT": lambda: d.calib_predict(xs, ys, few, 1),
             "INVERSE": lambda: d.calib_inverse(xs, ys, few, None, 1),
             "UNCERTAINTY": lambda: d.calib_uncertainty(xs, ys, few, None, 1),
             "RESIDUALS": lambda: d.calib_residuals(xs, ys, 1),
             "CHECKS": lambda: d.calib_checks(xs, ys, 1), "LIMITS": lambda: d.calib_limits(xs, ys, None, None, 1),
             "WEIGHTING": lambda: d.calib_weighting(xs, ys, 1),
             "COMPARE": lambda: d.calib_compare(xs, ys, xs, ry, few[:3], 1),
             "ACCEPTANCE": lambda: d.calib_acceptance(xs, ys, "relative standard error", 1)}
    return calls[name]


def measure(which: str) -> dict:
    """One call of ``which`` in this (fresh) process: seconds and peak growth in MiB."""
    import resource
    import time
    import warnings

    from degreewise import engine  # noqa: F401  loaded before the baseline
    from degreewise.prepared import clear_caches

    warnings.filterwarnings("ignore")  # scipy's Shapiro-Wilk warns above 5000 points
    if which in ("ours", "reference"):
        func = {"ours": ours, "reference": reference}[which]
        func(*data(100))
        args = data(N)
        call = lambda: func(*args)  # noqa: E731
    else:
        function_call(which, 100)()
        clear_caches()
        call = function_call(which, N_TABLE)
    before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    t0 = time.process_time()
    result = call()
    seconds = time.process_time() - t0
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss - before
    del result
    return {"seconds": seconds, "mib": peak / 1024}


def run(which: str) -> dict:
    out = subprocess.run([sys.executable, __file__, "--measure", which], check=True, capture_output=True, text=True,
                         env=ENV)
    return json.loads(out.stdout)


def main(rounds: int = 5):
    med = statistics.median
    print("one million points, CPU time and peak memory growth, fresh processes\n"
          "(each round: reference, ours, ours, reference)\n"
          "  ours: QR up to order K, every order's sums of squares, F tests, AICc, BIC, PRESS, the order choice,\n"
          "        the chosen order's refined raw coefficients and standard errors\n"
          "  reference: numpy lstsq of orders 0..K on one raw power design (coefficients, residual sums of squares)")
    rows = []
    for _ in range(rounds):
        first, a, b, last = run("reference"), run("ours"), run("ours"), run("reference")
        rows.append(tuple({key: x[key] + y[key] for key in x} for x, y in ((first, last), (a, b))))
    for key, what in (("seconds", "time"), ("mib", "peak memory")):
        ratios = [m[key] / ref[key] for ref, m in rows]
        print(f"  {what:<12} ours / lstsq: median {med(ratios):.2f} (rounds: {' '.join(f'{v:.2f}' for v in ratios)})")
    print(f"each worksheet function alone on {N_TABLE:,} points (desktop cells): peak memory growth per point, "
          "returned table included")
    for name in FUNCTIONS:
        got = run(name)
        print(f"  CALIB_{name:<10} {got['mib'] * 2**20 / N_TABLE:6.0f} bytes per point", flush=True)


if __name__ == "__main__":
    if sys.argv[1:2] == ["--measure"]:
        print(json.dumps(measure(sys.argv[2])))
    else:
        main(*map(int, sys.argv[1:]))
