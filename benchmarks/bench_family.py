"""One sheet's CALIB_* family after an edit, against a plain numpy implementation of the same numbers.

After an edit every cached result is stale: each round clears the worksheet layer's caches and makes the
nine calls of ``bench_udfs.family`` (CALIB_ORDER, then the eight tables), inputs as the desktop runtime
hands them over (lists of one-cell rows of floats; the typical calibration of ``workloads``: 8 levels x 3
replicates, 10 new x, 10 readings). ``plain_family.family`` computes the same numbers plainly, without
refinement (its docstring says what else it leaves out). First the two are compared number by number (to
1e-6 relative); then timed in alternating rounds (reference then ours, ours then reference, ...), each
round the median of a few calls of each, and the ratio (ours / reference) taken per round. Times are CPU
time of this process (``time.process_time``): on a shared machine, wall time mostly measures the others.

Run: python benchmarks/bench_family.py [ROUNDS]
"""

from __future__ import annotations

import math
import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
import plain_family  # noqa: E402
import workloads  # noqa: E402
from bench_udfs import desktop, family  # noqa: E402

import degreewise  # noqa: E402
from degreewise.prepared import clear_caches  # noqa: E402


def ours(xs, ys, new_x, readings):
    clear_caches()
    family(xs, ys, new_x, readings)


def _numbers(row) -> list:
    return [v for v in row if not isinstance(v, str)]


def _agree(a, b, where: str, rtol: float = 1e-6) -> None:
    a = [math.nan if v is None else float(v) for v in a]
    b = [math.nan if v is None else float(v) for v in b]
    assert len(a) == len(b), f"{where}: {len(a)} numbers against {len(b)}"
    for i, (u, v) in enumerate(zip(a, b)):
        same = (u != u and v != v) or abs(u - v) <= rtol * max(abs(u), abs(v)) + 1e-300
        assert same, f"{where}, number {i + 1}: {u!r} against {v!r}"


def compare(cells) -> int:
    """Check that the worksheet functions and the plain reference give the same numbers; how many were compared."""
    xs, ys, new_x, readings = cells
    k, orders, seqf, coefs, st, predict, inverse, residuals, checks = plain_family.family(*cells)
    assert degreewise.calib_order(xs, ys) == k
    pairs = [
        ("CALIB_ORDERS", [r[:11] for r in degreewise.calib_orders(xs, ys)[1:]], [r[:11] for r in orders]),
        ("CALIB_SEQF", [r[1:] for r in degreewise.calib_seqf(xs, ys)[1:]], seqf),
        ("CALIB_COEFS", [r[1:] for r in degreewise.calib_coefs(xs, ys, k)[1:]], coefs),
        ("CALIB_PREDICT", [r[:5] for r in degreewise.calib_predict(xs, ys, new_x, k)], predict),
        ("CALIB_INVERSE", [r[:3] for r in degreewise.calib_inverse(xs, ys, readings, None, k)], inverse),
        ("CALIB_RESIDUALS", [r[:7] for r in degreewise.calib_residuals(xs, ys, k)], residuals),
        ("CALIB_CHECKS", [r[1:3] for r in degreewise.calib_checks(xs, ys, k)[1:-1]], checks),
    ]
    stats = {r[0]: r[1] for r in degreewise.calib_stats(xs, ys, k)[1:]}
    pairs.append(("CALIB_STATS", [[stats[label] for label in st]], [list(st.values())]))
    count = 1
    for name, mine, plain in pairs:
        assert len(mine) == len(plain), f"{name}: {len(mine)} rows against {len(plain)}"
        for i, (a, b) in enumerate(zip(mine, plain)):
            _agree(_numbers(a), _numbers(b), f"{name} row {i + 1}")
            count += len(_numbers(a))
        if name == "CALIB_ORDERS":  # the rules' picks, as text
            assert [r[11] for r in degreewise.calib_orders(xs, ys)[1:]] == [r[11] for r in orders]
    return count


def _median_of(func, args, calls: int) -> float:
    times = []
    for _ in range(calls):
        t0 = time.process_time()
        func(*args)
        times.append(time.process_time() - t0)
    return statistics.median(times)


def side_by_side(cells, rounds: int = 60, calls: int = 5):
    """Medians of our times and the reference's, and the per-round ratios ours / reference."""
    for _ in range(20):
        ours(*cells)
        plain_family.family(*cells)
    mine, plain, ratios = [], [], []
    for r in range(rounds):
        if r % 2:
            a = _median_of(ours, cells, calls)
            b = _median_of(plain_family.family, cells, calls)
        else:
            b = _median_of(plain_family.family, cells, calls)
            a = _median_of(ours, cells, calls)
        mine.append(a)
        plain.append(b)
        ratios.append(a / b)
    return mine, plain, ratios


def main():
    rounds = int(sys.argv[1]) if len(sys.argv) > 1 else 60
    cells = tuple(desktop(v) for v in workloads.typical())
    print(f"numbers compared with the plain reference: {compare(cells)}, all within 1e-6 relative")
    mine, plain, ratios = side_by_side(cells, rounds)
    q1, q2, q3 = statistics.quantiles(ratios, n=4)
    print("one sheet's family after an edit (caches cleared; 9 calls; 24 rows, desktop 2-D)")
    print(f"  degreewise     {statistics.median(mine) * 1e3:7.3f} ms (median of round medians)")
    print(f"  plain numpy    {statistics.median(plain) * 1e3:7.3f} ms")
    print(f"  ratio ours / plain: median {q2:.2f} (quartiles {q1:.2f} to {q3:.2f}; {rounds} rounds)")
    print("  per round: " + " ".join(f"{r:.2f}" for r in ratios))


if __name__ == "__main__":
    main()
