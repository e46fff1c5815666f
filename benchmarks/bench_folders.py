"""A folder refresh's memory and rate against the number of workbooks: 100, 1,000 and 10,000 copies of one small
invented workbook (one sheet, 12 standards, one CALIB_ORDER cell with no stored value, so each is rewritten).

Each size runs ``degreewise refresh FOLDER --jobs 1 --report-to FILE`` in a fresh process, which gives its own
peak resident set (``ru_maxrss``) and CPU time (user + system) at the end. Printed: the peak of each size
over the peak at 100 workbooks (ours / reference: memory flat in the number of workbooks reads near 1), the
workbooks refreshed per CPU-second (one core's throughput), and that the report file holds every workbook.

Run: python benchmarks/bench_folders.py [SIZES ...]   (default 100 1000 10000; a few minutes)
"""

from __future__ import annotations

import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

import openpyxl

X = [1.0, 2.0, 5.0, 10.0, 20.0, 40.0] * 2
Y = [2.1, 4.0, 10.3, 19.8, 40.5, 79.6, 1.9, 4.2, 9.9, 20.3, 39.6, 80.4]


def folder(where: Path, count: int) -> Path:
    one = where / "one.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    for i, (x, y) in enumerate(zip(X, Y), start=1):
        ws.cell(i, 1, x), ws.cell(i, 2, y)
    ws["D1"] = "=CALIB_ORDER(A1:A12,B1:B12)"
    wb.save(one)
    books = where / f"books{count}"
    books.mkdir()
    for i in range(count):
        shutil.copyfile(one, books / f"b{i:05d}.xlsx")
    return books


CHILD = """
import resource, sys
from degreewise.commands import main
main(["refresh", sys.argv[1], "--jobs", "1", "--report-to", sys.argv[2]])
use = resource.getrusage(resource.RUSAGE_SELF)
print(use.ru_maxrss, use.ru_utime + use.ru_stime)
"""


def measure(books: Path, trail: Path) -> tuple[float, float]:
    """Peak resident set (MiB) and CPU seconds of one refresh of ``books`` in a fresh process."""
    out = subprocess.run([sys.executable, "-c", CHILD, str(books), str(trail)], check=True, capture_output=True,
                         text=True).stdout.split()
    return int(out[-2]) / 1024, float(out[-1])


def main(sizes):
    print("folder refresh, --jobs 1, a fresh process per size (peak RSS; CPU time)")
    base = None
    for count in sizes:
        with tempfile.TemporaryDirectory() as tmp:
            books, trail = folder(Path(tmp), count), Path(tmp) / "trail.txt"
            peak, cpu = measure(books, trail)
            heads = sum(1 for line in trail.read_text(encoding="utf-8").splitlines() if line.startswith(str(books)))
            assert heads == count, (heads, count)
        base = base or peak
        print(f"  {count:>6,} workbooks: peak {peak:6.1f} MiB, ours / 100 workbooks {peak / base:.2f}; "
              f"{count / cpu:5.1f} workbooks per CPU-second (start-up included)", flush=True)


if __name__ == "__main__":
    main([int(a) for a in sys.argv[1:]] or [100, 1000, 10_000])
