"""Worksheet functions: a cache-hit call, and one calibration's whole family cold, against statsmodels.

Run: python benchmarks/bench_udfs.py   (needs the test extra: statsmodels, pandas)
"""

from __future__ import annotations

import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
import workloads  # noqa: E402
from bench_engine import median_time, ratio_words, side_by_side  # noqa: E402

import degreewise  # noqa: E402
from degreewise.prepared import clear_caches  # noqa: E402


def column(values):
    return [[float(v)] for v in values]


def family(xs, ys, new_x, readings):
    order = degreewise.calib_order(xs, ys)
    degreewise.calib_orders(xs, ys)
    degreewise.calib_seqf(xs, ys)
    degreewise.calib_coefs(xs, ys, order)
    degreewise.calib_predict(xs, ys, new_x, order)
    degreewise.calib_inverse(xs, ys, readings, None, order)
    degreewise.calib_residuals(xs, ys, order)
    degreewise.calib_checks(xs, ys, order)


def cold(*args):
    clear_caches()
    family(*args)


def main():
    x, y, new_x, readings = workloads.typical()
    cells = (column(x), column(y), column(new_x), column(readings))
    family(*cells)
    hit = median_time(degreewise.calib_coefs, cells[0], cells[1], repeat=2000)

    ours, ref, ratio = side_by_side(lambda *a: cold(*cells), workloads.statsmodels_pipeline, (x, y, new_x, readings))
    print(f"cache-hit CALIB_COEFS call (24 points)        {hit * 1e6:8.1f} us (median)")
    print(f"whole family cold, one calibration            {ours * 1e3:8.3f} ms (median)")
    print(f"statsmodels pipeline, same work               {ref * 1e3:8.3f} ms (median)")
    print(f"ratio                                         {ratio_words(ratio)}")


if __name__ == "__main__":
    main()
