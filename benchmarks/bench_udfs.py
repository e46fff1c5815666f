"""Worksheet functions with ranges shaped as the runtimes deliver them: a cache-hit call, one calibration's
whole family cold (against a statsmodels pipeline doing the same work), at 24 and 1000 rows; and one call on
whole-column references (1,048,576 rows, nearly all blank). CALIB_LIMITS and CALIB_WEIGHTING cold (24 rows,
desktop shape) as ratios to that family: no outside library does their work.

Shapes: "flat" is what xlwings hands over for an n x 1 range when the argument declares no ``ndim`` (a list
of values); "desktop 2-D" is what it hands over for ``ndim=2`` (a list of one-cell rows of floats);
"browser 2-D" is the same through Office.js and Pyodide, where a whole number arrives as a Python int.

Run: python benchmarks/bench_udfs.py   (needs the test extra: statsmodels, pandas)
"""

from __future__ import annotations

import subprocess
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
    """A column reference A:A under ndim=2, as xlwings' conversion hands it over without the declared cut:
    the values on top, then one blank row object per row."""
    return desktop(values) + [[None] for _ in range(SHEET_ROWS - len(values))]


def best_of(func, *args, repeat=5):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        func(*args)
        times.append(time.perf_counter() - t0)
    return min(times)


DESKTOP = """
import contextlib, io, sys, time
import xlwings_runtimes as r
time_type, pydll = r._windows_stand_ins()
platform, sys.platform = sys.platform, "win32"
with pydll:
    import xlwings
    from xlwings import com_server, conversion
sys.platform = platform
book = r._Workbook()
with contextlib.redirect_stdout(io.StringIO()):
    xlwings.import_udfs("degreewise", book)
server = com_server.XLPython()
from degreewise.prepared import clear_caches
x, y = {x!r}, {y!r}
blank = {rows} - len(x)
whole = (r.ComRange(tuple((v,) for v in x), blank), r.ComRange(tuple((v,) for v in y), blank))
def best(f):
    times = []
    for _ in range(3):
        clear_caches(); t0 = time.perf_counter(); f(); times.append(time.perf_counter() - t0)
    return min(times)
def read(rng):  # xlwings' conversion as declared before the cut: ndim=2, error values as text
    return conversion.read(xlwings.Range(impl=xlwings._xlwindows.Range(xl=rng)), None, dict(ndim=2, err_to_str=True))
plain = best(lambda: [read(rng) for rng in whole])
call = best(lambda: server.CallUDF("degreewise", "calib_coefs", whole + (r.MISSING,) * 3, book, None))
print(f"{{plain * 1e3:.0f}} {{call * 1e3:.0f}}")
"""


def desktop_whole_column(x, y):
    """xlwings' desktop conversion of two whole columns without the cut, and one CALIB_COEFS call through
    xlwings' desktop entry point as declared (tests/xlwings_runtimes.py runs xlwings' code on Linux)."""
    tests = Path(__file__).resolve().parent.parent / "tests"
    code = DESKTOP.format(x=[float(v) for v in x], y=[float(v) for v in y], rows=SHEET_ROWS)
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True,
                         env={"PYTHONPATH": str(tests), "PATH": "", "XLWINGS_LICENSE_KEY": ""})
    plain, call = map(float, out.stdout.split())
    return plain, call


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
            if rows == 24 and shape == "desktop 2-D":  # no outside library does their work: ratios to the family
                for name, f in (("CALIB_LIMITS", degreewise.calib_limits),
                                ("CALIB_WEIGHTING", degreewise.calib_weighting)):
                    mine = median_time(lambda: (clear_caches(), f(cells[0], cells[1])), repeat=100)
                    print(f"      {name} cold {mine * 1e3:.3f} ms (median; {mine / ours:.2f} x the family cold)")

    x, y, _, _ = workloads.typical()
    xs, ys = whole_column(x), whole_column(y)
    cold_call = best_of(lambda: (clear_caches(), degreewise.calib_coefs(xs, ys)))
    hit = best_of(degreewise.calib_coefs, xs, ys)
    print(f"whole columns ({SHEET_ROWS} rows, 24 filled), one blank row object per row: CALIB_COEFS cold "
          f"{cold_call * 1e3:.1f} ms, cache hit {hit * 1e3:.1f} ms (best of 5)")
    plain, call = desktop_whole_column(x, y)
    print(f"desktop, xlwings' conversion of both columns without the cut {plain:.0f} ms; one CALIB_COEFS call "
          f"through xlwings' desktop entry point as declared, cold, {call:.0f} ms (best of 3; the spreadsheet "
          "program's own hand-over of the cells is not included)")

if __name__ == "__main__":
    main()
