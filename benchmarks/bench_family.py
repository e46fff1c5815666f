"""One sheet's whole CALIB_* family after an edit, against a plain numpy/scipy computation of the same numbers.

Ours: the twelve worksheet functions in sheet order (CALIB_ORDER, ORDERS, SEQF, COEFS, STATS, PREDICT, INVERSE,
RESIDUALS, CHECKS, LIMITS, WEIGHTING, COMPARE), every cache cleared first (after an edit every cached result is
stale), inputs as the desktop runtime hands them over (lists of one-cell rows of floats): n standards at n / 5
levels (8 levels of 3 at n = 24), 10 new x, 10 readings, a reference calibration of the same size for COMPARE
and 3 x to compare at. Reference: ``plain_family.family``, the same numbers from plain numpy and scipy calls
(its docstring says what it computes and leaves out: messages, texts, refinement, caches).

First both sides are compared number by number (``agree``); then timed in alternating rounds (reference then
ours, ours then reference, ...), each side the median CPU time (``time.process_time``) of a few calls with new
data, the ratio ours / reference taken per round (below 1: ours faster); the median and quartiles of the
rounds are printed, with each function's share of our time. BLAS runs one thread unless OPENBLAS_NUM_THREADS
is set: on a shared machine a threaded QR of more than 5 columns mostly measures the other processes (both
sides use the same library, so the ratio holds either way).

Run: python benchmarks/bench_family.py [N ...]   (default 24 1000 100000)
"""

from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import statistics  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parent))
import plain_family  # noqa: E402

import degreewise as d  # noqa: E402
from degreewise.prepared import clear_caches  # noqa: E402

warnings.filterwarnings("ignore")  # scipy's shapiro warns above 5000 points (both sides)
NAMES = ("ORDER", "ORDERS", "SEQF", "COEFS", "STATS", "PREDICT", "INVERSE", "RESIDUALS", "CHECKS", "LIMITS",
         "WEIGHTING", "COMPARE")
PLAN = {24: (30, 5), 1000: (15, 3), 100_000: (5, 1)}  # rounds, calls per side per round


def desktop(v):
    return [[float(a)] for a in v]


def cells(n: int, variant: int):
    """x, y, new x, readings, reference x, reference y, x to compare at (desktop shape)."""
    levels = 8 if n == 24 else n // 5
    x = np.repeat(np.linspace(1.0, 50.0, levels), n // levels)
    rng = np.random.default_rng(1000 + variant)
    y = 2.0 + 3.0 * x + 0.01 * x**2 + rng.normal(0.0, 1.0, x.size)
    ry = 2.3 + 2.97 * x + 0.011 * x**2 + rng.normal(0.0, 1.0, x.size)
    return tuple(map(desktop, (x, y, np.linspace(2.0, 48.0, 10), np.linspace(12.0, 170.0, 10), x, ry,
                               [5.0, 25.0, 45.0])))


def ours(c, clock=time.process_time):
    """The twelve calls in sheet order after clearing the caches; each call's time."""
    xs, ys, nx, rd, rx, ry, at = c
    clear_caches()
    t = [clock()]
    k = d.calib_order(xs, ys)
    for call in (lambda: d.calib_orders(xs, ys), lambda: d.calib_seqf(xs, ys), lambda: d.calib_coefs(xs, ys, k),
                 lambda: d.calib_stats(xs, ys, k), lambda: d.calib_predict(xs, ys, nx, k),
                 lambda: d.calib_inverse(xs, ys, rd, None, k), lambda: d.calib_residuals(xs, ys, k),
                 lambda: d.calib_checks(xs, ys, k), lambda: d.calib_limits(xs, ys, None, None, k),
                 lambda: d.calib_weighting(xs, ys, k), lambda: d.calib_compare(xs, ys, rx, ry, at, k)):
        t.append(clock())
        call()
    t.append(clock())
    return np.diff(t)


def _close(a, b, rtol=1e-6):
    a, b = np.asarray(a, float), np.asarray(b, float)
    return bool(np.all((np.isnan(a) & np.isnan(b)) | (np.abs(a - b) <= rtol * np.maximum(np.abs(a), np.abs(b)))))


def agree(c) -> None:
    """Both sides give the same order, coefficients, order table, predictions, inverse readings, residual
    table, check p-values, limits and weighting deviations (1e-6 relative)."""
    xs, ys, nx, rd, rx, ry, at = c
    clear_caches()
    got = plain_family.family(*c)
    k = d.calib_order(xs, ys)
    assert k == got[0], (k, got[0])

    def nums(rows, cols):
        return [[np.nan if r[j] is None else r[j] for j in cols] for r in rows]

    pairs = {
        "coefs": (nums(d.calib_coefs(xs, ys, k)[1:], range(1, 7)), got[3]),
        "orders": (nums(d.calib_orders(xs, ys)[1:], range(1, 10)), [r[1:10] for r in got[1]]),
        "predict": (nums(d.calib_predict(xs, ys, nx, k), range(5)), got[5]),
        "inverse": (nums(d.calib_inverse(xs, ys, rd, None, k), range(3)), got[6]),
        "residuals": (nums(d.calib_residuals(xs, ys, k), range(2)), got[7][:, :2]),
        "checks": (nums(d.calib_checks(xs, ys, k)[1:6], [2]), [[g[1]] for g in got[8][:5]]),
        "limits": (nums(d.calib_limits(xs, ys, None, None, k)[1:2], range(1, 5)), [got[9][0]]),
        "weighting": (nums(d.calib_weighting(xs, ys, k)[1:], range(1, 4)), [r[1:4] for r in got[10]]),
    }
    for name, (a, b) in pairs.items():
        assert _close(a, b), (name, a, b)


def quartiles(v):
    q = statistics.quantiles(v, n=4) if len(v) > 2 else [statistics.median(v)] * 3
    return q[1], q[0], q[2]


def side_by_side(n: int, rounds: int, per: int) -> dict:
    data = [cells(n, v) for v in range(per + 1)]
    ours(data[0]), plain_family.family(*data[0])  # warm up
    ratios, mine, plain, shares = [], [], [], []
    for r in range(rounds):
        took = {}
        for side in (("ours", "plain") if r % 2 else ("plain", "ours")):
            times = []
            for c in data[1:]:
                t0 = time.process_time()
                if side == "ours":
                    shares.append(ours(c))
                else:
                    plain_family.family(*c)
                times.append(time.process_time() - t0)
            took[side] = statistics.median(times)
        mine.append(took["ours"])
        plain.append(took["plain"])
        ratios.append(took["ours"] / took["plain"])
    share = np.median(np.array(shares), axis=0)
    return dict(ratio=quartiles(ratios), ours=statistics.median(mine), plain=statistics.median(plain),
                share=dict(zip(NAMES, share / share.sum())))


def main(sizes):
    print("one sheet's twelve CALIB_* functions after an edit (caches cleared, desktop cells) against plain "
          f"numpy/scipy computing the same numbers; CPU time, BLAS threads {os.environ['OPENBLAS_NUM_THREADS']}")
    for n in sizes:
        agree(cells(n, 0))
        rounds, per = PLAN.get(n, (9, 1))
        r = side_by_side(n, rounds, per)
        (med, q1, q3), top = r["ratio"], sorted(r["share"].items(), key=lambda kv: -kv[1])[:4]
        print(f"  n = {n:>7,}: ours / plain {med:.2f} (quartiles {q1:.2f} to {q3:.2f}; {rounds} rounds); "
              "largest shares of ours: " + ", ".join(f"{k} {v:.0%}" for k, v in top), flush=True)


if __name__ == "__main__":
    main([int(float(a)) for a in sys.argv[1:]] or list(PLAN))
