"""Refresh of a 200-sheet calibration workbook (6 CALIB_* formulas a sheet) against openpyxl load + save.

Each is timed in its own fresh process, which also reports its peak memory (max RSS).
Run: python benchmarks/bench_refresh.py
"""

from __future__ import annotations

import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np
import openpyxl

SHEETS = 200

CHILD = r"""
import resource, sys, time
t0 = time.perf_counter()
if sys.argv[1] == "refresh":
    from udfs.refresh import refresh_file
    report = refresh_file(__import__("pathlib").Path(sys.argv[2]))
    assert report.error is None and not report.failed, report.lines()
else:
    import openpyxl
    wb = openpyxl.load_workbook(sys.argv[2])
    wb.save(sys.argv[2])
print(time.perf_counter() - t0, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)
"""


def build(path: Path) -> None:
    rng = np.random.default_rng(8)
    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    for s in range(SHEETS):
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


def measure(kind: str, path: Path) -> tuple[float, int]:
    out = subprocess.run([sys.executable, "-c", CHILD, kind, str(path)], capture_output=True, text=True, check=True)
    seconds, rss = out.stdout.split()
    return float(seconds), int(rss)


def main():
    with tempfile.TemporaryDirectory() as tmp:
        source = Path(tmp) / "book.xlsx"
        build(source)
        results = {}
        for kind in ("refresh", "openpyxl"):
            copy = Path(tmp) / f"{kind}.xlsx"
            shutil.copy(source, copy)
            results[kind] = measure(kind, copy)
        (rt, rm), (ot, om) = results["refresh"], results["openpyxl"]
        print(f"workbook: {SHEETS} calibration sheets x 6 CALIB_* formulas, {source.stat().st_size // 1024} KiB")
        print(f"  degreewise refresh      {rt:7.2f} s   peak memory {rm / 1024:7.1f} MiB")
        print(f"  openpyxl load + save    {ot:7.2f} s   peak memory {om / 1024:7.1f} MiB")
        print(f"  time ratio (openpyxl / refresh) {ot / rt:5.2f}; memory ratio {om / rm:5.2f}")


if __name__ == "__main__":
    main()
