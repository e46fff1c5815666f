"""Worksheet functions with ranges shaped as the runtimes deliver them: a cache-hit call, one calibration's
whole family cold (against a statsmodels pipeline doing the same work), at 24 and 1000 rows; and one call on
whole-column references (1,048,576 rows, nearly all blank).

Shapes: "flat" is what xlwings hands over for an n x 1 range when the argument declares no ``ndim`` (a list
of values); "desktop 2-D" is what it hands over for ``ndim=2`` (a list of one-cell rows of floats);
"browser 2-D" is the same through Office.js and Pyodide, where a whole number arrives as a Python int.

Run: python benchmarks/bench_udfs.py   (needs the test extra: statsmodels, pandas)
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
import workloads  # noqa: E402
from bench_engine import median_time, ratio_words, side_by_side  # noqa: E402

import degreewise  # noqa: E402
from degreewise.prepared import clear_caches  # noqa: E402

SHEET_ROWS = 1_048_576


def flat(values):
    return [float(v) for v in values]


def desktop(values):
    return [[float(v)] for v in values]


def browser(values):
    return [[int(v) if float(v).is_integer() else float(v)] for v in values]


SHAPES = {"flat": flat, "desktop 2-D": desktop, "browser 2-D": browser}


def workload(rows: int):
    if rows == 24:
        return workloads.typical()
    rng = np.random.default_rng(2)
    x = np.repeat(np.linspace(1.0, 50.0, rows // 5), 5)
    y = 2.0 + 3.0 * x + 0.01 * x**2 + rng.normal(0.0, 1.0, x.size)
    return x, y, np.linspace(2.0, 48.0, 10), np.linspace(12.0, 170.0, 10)


def family(xs, ys, new_x, readings):
    order = degreewise.calib_order(xs, ys)
    degreewise.calib_orders(xs, ys)
    degreewise.calib_seqf(xs, ys)
    degreewise.calib_coefs(xs, ys, order)
    degreewise.calib_stats(xs, ys, order)
    degreewise.calib_predict(xs, ys, new_x, order)
    degreewise.calib_inverse(xs, ys, readings, None, order)
    degreewise.calib_residuals(xs, ys, order)
    degreewise.calib_checks(xs, ys, order)


def cold(*args):
    clear_caches()
    family(*args)


def whole_column(values):
    """A column reference A:A as the desktop delivers it under ndim=2: the values on top, then blank rows."""
    return desktop(values) + [[None] for _ in range(SHEET_ROWS - len(values))]


def once(func, *args, repeat=5):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        func(*args)
        times.append(time.perf_counter() - t0)
    return min(times)


def main():
    print(f"{'rows':>5} {'shape':<12} {'cache hit (us)':>15} {'family cold (ms)':>17} {'statsmodels (ms)':>17}  ratio")
    for rows in (24, 1000):
        x, y, new_x, readings = workload(rows)
        for shape, make in SHAPES.items():
            cells = (make(x), make(y), make(new_x), make(readings))
            family(*cells)
            assert len(degreewise.calib_coefs(cells[0], cells[1])) > 1  # a table, not a message
            hit = median_time(degreewise.calib_coefs, cells[0], cells[1], repeat=2000 if rows == 24 else 300)
            ours, ref, ratio = side_by_side(lambda *a: cold(*cells), workloads.statsmodels_pipeline,
                                            (x, y, new_x, readings), rounds=30 if rows == 24 else 8)
            print(f"{rows:>5} {shape:<12} {hit * 1e6:>15.1f} {ours * 1e3:>17.3f} {ref * 1e3:>17.3f}  "
                  f"{ratio_words(ratio)}")

    x, y, _, _ = workloads.typical()
    xs, ys = whole_column(x), whole_column(y)
    clear_caches()
    first = once(lambda: (clear_caches(), degreewise.calib_coefs(xs, ys)))
    again = once(degreewise.calib_coefs, xs, ys)
    print(f"whole columns ({SHEET_ROWS} rows, 24 filled): CALIB_COEFS cold {first * 1e3:.1f} ms, "
          f"same ranges again {again * 1e3:.1f} ms (best of 5)")


if __name__ == "__main__":
    main()
