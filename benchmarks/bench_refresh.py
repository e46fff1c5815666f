"""Refresh of a 200-sheet calibration workbook (6 CALIB_* formulas a sheet) against openpyxl load + save.

Each is timed in its own fresh process (imports included), which also reports its peak memory
(max RSS of the process plus its largest worker). The refresh runs as the command `degreewise
refresh BOOK --jobs N` does (the command line never imports xlwings or pandas); "no-pandas" hides
pandas, as in an install from the README's first command, and "pandas" leaves it importable.
Run: python benchmarks/bench_refresh.py [SHEETS] [ROUNDS]   (default 200 sheets, 3 rounds)
"""

from __future__ import annotations

import os
import shutil
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np
import openpyxl

SHEETS = 200

CHILD = r"""
import resource, sys, time
kind, path = sys.argv[1], sys.argv[2]
if sys.argv[3] == "no-pandas":  # as installed by the README's first command: pandas comes only with the test extra
    sys.modules["pandas"] = None
t0 = time.perf_counter()
if kind.startswith("refresh"):
    import contextlib, io
    from degreewise.commands import main
    with contextlib.redirect_stdout(io.StringIO()) as out:  # the one-line summary
        code = main(["refresh", path, "--jobs", kind[len("refresh"):]])
    assert code == 0, out.getvalue()
else:
    import openpyxl
    wb = openpyxl.load_workbook(path)
    wb.save(path)
seconds = time.perf_counter() - t0
own, children = (resource.getrusage(who).ru_maxrss for who in (resource.RUSAGE_SELF, resource.RUSAGE_CHILDREN))
print(seconds, own + children)  # peak of this process plus the largest worker: an upper bound of the peak total
"""

def build(path: Path, sheets: int = SHEETS) -> None:
    rng = np.random.default_rng(8)
    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    for s in range(sheets):
        ws = wb.create_sheet(f"Cal {s + 1}")
        x = np.repeat(np.linspace(1, 50, 8), 3)
        y = 3 + (2 + s / 100) * x + 0.01 * x**2 + rng.normal(0, 1, x.size)
        for i, (a, b) in enumerate(zip(x, y), start=2):
            ws.cell(i, 1, float(a))
            ws.cell(i, 2, float(b))
        for i, v in enumerate(np.linspace(5, 150, 10), start=2):
            ws.cell(i, 3, float(v))
        ws["E1"] = "=CALIB_ORDER(A2:A25,B2:B25)"
        ws["E3"] = "=CALIB_COEFS(A2:A25,B2:B25,E1)"
        ws["E9"] = "=CALIB_SEQF(A2:A25,B2:B25)"
        ws["M1"] = "=CALIB_INVERSE(A2:A25,B2:B25,C2:C11,,E1)"
        ws["R1"] = "=CALIB_RESIDUALS(A2:A25,B2:B25,E1)"
        ws["E20"] = "=CALIB_STATS(A2:A25,B2:B25,E1)"
    wb.save(path)


def measure(kind: str, path: Path, pandas: str) -> tuple[float, int]:
    out = subprocess.run([sys.executable, "-c", CHILD, kind, str(path), pandas], capture_output=True, text=True,
                         check=True)
    seconds, rss = out.stdout.split()
    return float(seconds), int(rss)


def main(rounds: int = 3, sheets: int = SHEETS):
    """Each case ``rounds`` times, the cases interleaved; the median of each is reported."""
    cores = os.cpu_count() or 1
    cases = [(f"refresh{cores}", "no-pandas"), ("refresh1", "no-pandas"), (f"refresh{cores}", "pandas"),
             ("openpyxl", "no-pandas")]
    with tempfile.TemporaryDirectory() as tmp:
        source = Path(tmp) / "book.xlsx"
        build(source, sheets)
        results: dict = {case: [] for case in cases}
        for _ in range(rounds):
            for case in cases:
                copy = Path(tmp) / "copy.xlsx"
                shutil.copy(source, copy)
                results[case].append(measure(case[0], copy, case[1]))
        median = {case: (statistics.median(t for t, _ in r), max(m for _, m in r)) for case, r in results.items()}
        ot, om = median[("openpyxl", "no-pandas")]
        print(f"workbook: {sheets} calibration sheets x 6 CALIB_* formulas, {source.stat().st_size // 1024} KiB; "
              f"each run in a fresh process (imports included), median of {rounds}")
        names = {(f"refresh{cores}", "no-pandas"): f"degreewise refresh, {cores} processes",
                 ("refresh1", "no-pandas"): "degreewise refresh, 1 process",
                 (f"refresh{cores}", "pandas"): f"degreewise refresh, {cores} processes, pandas installed",
                 ("openpyxl", "no-pandas"): "openpyxl load + save"}
        for case in cases:
            t, m = median[case]
            print(f"  {names[case]:45s} {t:6.2f} s  peak memory {m / 1024:6.1f} MiB  "
                  f"time ratio openpyxl/this {ot / t:5.2f}")


if __name__ == "__main__":
    args = [int(a) for a in sys.argv[1:3]]
    main(sheets=args[0] if args else SHEETS, rounds=args[1] if len(args) > 1 else 3)
