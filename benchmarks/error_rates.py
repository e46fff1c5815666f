"""Error rates of the judgments that follow a choice made from the same data, by simulation with fixed seeds.

    python benchmarks/error_rates.py [N [PART ...]]  # N calibrations per design (default 2000; half for the
                                                     # weighting); PART: inverse, compare, limits, weighting

Every design is invented: straight lines with normal errors, so the true order is 1 and the truth is known.

1. Inverse interval at a sample at exactly the lowest or the top standard (6 levels 10..100 x 2): coverage of
   the 95 % interval, at the order the default rule picks and at the true order; a reading with neither an
   estimate nor an interval counts as a miss, an open bound as open.
2. CALIB_COMPARE on identical curves (today and reference drawn from the same line), with the default order:
   how often "same curve" and "same shape" warn at alpha = 0.05.
3. CALIB_LIMITS' prediction band row with the default order: how often a blank sample (true x = 0, one reading)
   reads above the critical response (false positive; alpha = 0.05); rows without a number are counted apart.
4. CALIB_WEIGHTING: how often its pick matches the variance structure (7 levels 1..100 x 3, SD = 0.1 x^b), and
   the coverage of the 95 % slope interval of the straight line fitted under the picked scheme.

Run it against another version of the package by putting that version first on PYTHONPATH.
"""

from __future__ import annotations

import math
import sys

import numpy as np

import degreewise
from degreewise import engine

N = int(sys.argv[1]) if len(sys.argv) > 1 else 2000
LINE = np.repeat([10.0, 20.0, 40.0, 60.0, 80.0, 100.0], 2)


def rate(hits: int, n: int) -> str:
    p = hits / n
    return f"{100 * p:5.1f} % (+- {100 * math.sqrt(p * (1 - p) / n):.1f})"


def inverse_coverage() -> None:
    for weights, b in ((None, 0.0), ("1/x^2", 1.0)):
        sd = (lambda v: 0.02 * v) if b else (lambda v: 0.2 + 0.0 * v)
        for x0 in (10.0, 100.0):
            rng = np.random.default_rng(240 + int(x0) + int(b))
            chosen = true = 0
            for _ in range(N):
                cal = engine.Calibration(LINE, 1.0 + 0.5 * LINE + rng.normal(0, 1, LINE.size) * sd(LINE),
                                         weights=weights)
                reading = 1.0 + 0.5 * x0 + rng.normal() * sd(np.array(x0))
                for k, first in ((engine.choose_order(cal).order, True), (1, False)):
                    e = engine.inverse(cal, [reading], k)[0]
                    if math.isnan(e.x) and math.isnan(e.lower) and math.isnan(e.upper):
                        continue
                    lo = -math.inf if math.isnan(e.lower) else e.lower
                    hi = math.inf if math.isnan(e.upper) else e.upper
                    if lo <= x0 <= hi:
                        chosen, true = chosen + first, true + (not first)
            print(f"inverse coverage, weights {weights or 'none'}, SD {'0.02 x' if b else '0.2'}, x0 = {x0:g}: "
                  f"default order {rate(chosen, N)}, true order {rate(true, N)}")


def compare_rejections() -> None:
    designs = {"6 x 2 (10..100)": LINE, "10 x 1 (10..100)": np.arange(1.0, 11.0) * 10}
    for name, x in designs.items():
        rng = np.random.default_rng(2401)
        counts = np.zeros((2, 2), int)  # default order, true order; same curve, same shape
        for _ in range(N):
            today, ref = (1.0 + 0.5 * x + rng.normal(0, 0.3, x.size) for _ in range(2))
            for i, order in enumerate((None, 1)):
                rows = degreewise.calib_compare(x.tolist(), today.tolist(), x.tolist(), ref.tolist(), None, order)
                verdict = rows[0].index("verdict")
                verdicts = {r[0]: r[verdict] for r in rows[1:]}
                counts[i] += (verdicts["same curve"] == "warning", verdicts["same shape"] == "warning")
        (curve, shape), (curve_1, shape_1) = counts
        print(f"compare on identical curves, {name}: default order: same curve {rate(curve, N)}, same shape "
              f"{rate(shape, N)}; true order: {rate(curve_1, N)}, {rate(shape_1, N)}")


def limit_false_positives() -> None:
    designs = {"10 x 1 (1..10), no blank standard": np.arange(1.0, 11.0),
               "6 x 2 (0..10), blank standard": np.repeat([0.0, 2.0, 4.0, 6.0, 8.0, 10.0], 2)}
    for name, x in designs.items():
        rng = np.random.default_rng(2402)
        hits = given = fixed = 0
        for _ in range(N):
            cal = engine.Calibration(x, 0.5 + x + rng.normal(0, 0.2, x.size))
            blank = 0.5 + rng.normal(0, 0.2)
            band = engine.detection_limits(cal, engine.choose_order(cal).order)[0]
            if math.isfinite(band.critical_response):
                given += 1
                hits += blank > band.critical_response
            fixed += blank > engine.detection_limits(cal, 1)[0].critical_response
        print(f"limits, {name}: false positives at the default order {rate(hits, given)} of {given} rows with a "
              f"number (of {N}); at the true order {rate(fixed, N)}")


def weighting_picks() -> None:
    levels = np.array([1.0, 2.0, 5.0, 10.0, 20.0, 50.0, 100.0])
    power = {"none": 0, "1/x": 1, "1/y": 1, "1/x^2": 2, "1/y^2": 2}
    n = max(N // 2, 1)
    for design, x in (("7 x 3", np.repeat(levels, 3)), ("6 x 2", np.repeat(levels[:6], 2))):
        for b in (0.0, 0.5, 1.0):
            if design == "6 x 2" and b != 1.0:
                continue
            rng = np.random.default_rng(2403 + int(10 * b))
            match = covered = 0
            for _ in range(n):
                y = 0.5 + 2.0 * x + rng.normal(0.0, 1.0, x.size) * 0.1 * x**b
                rows = engine.compare_weightings(engine.Calibration(x, y))
                picked = [r for r in rows if r.picked]
                scheme = picked[0].scheme if picked else "none"
                if scheme == "1/x^2b":
                    exponent = engine.spread_exponent(x, y, 0.95).b
                    weights, implied = np.abs(x) ** (-2.0 * exponent), 2 * exponent
                else:
                    weights, implied = (None if scheme == "none" else scheme), power[scheme]
                match += bool(picked) and abs(implied - 2 * b) <= 0.5
                lo, hi = engine.Calibration(x, y, max_order=1, weights=weights).fit(1).interval(0.95)[1]
                covered += lo <= 2.0 <= hi
            print(f"weighting, {design}, SD = 0.1 x^{b:g}: pick matches {rate(match, n)}; slope interval under "
                  f"the picked scheme covers {rate(covered, n)}")


if __name__ == "__main__":
    print(f"degreewise at {degreewise.__file__}, {N} calibrations per design")
    parts = {"inverse": inverse_coverage, "compare": compare_rejections, "limits": limit_false_positives,
             "weighting": weighting_picks}
    for name in sys.argv[2:] or parts:
        parts[name]()
        sys.stdout.flush()
