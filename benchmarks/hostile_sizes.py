"""Hostile sizes: each file of the reliability trial refreshed in its own process, with its wall time and
peak memory (the child's maximum resident set, from wait4). The bar: each refused or done within a minute,
peak under 1 GB, and a legal large sheet within a small multiple of its unpacked size.

    python benchmarks/hostile_sizes.py [ROWS]     (ROWS of the large sheet: 1,700,000 gives about 240 MiB)
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time
import zipfile
from pathlib import Path

import openpyxl

CLI = [sys.executable, "-c", "from degreewise.commands import main; raise SystemExit(main())"]
MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"


def _with_sheet(path: Path, write_rows) -> int:
    """An openpyxl workbook whose first sheet's XML is ``write_rows(file)`` inside <sheetData>; the sheet's
    unpacked size."""
    base = path.with_suffix(".base.xlsx")
    openpyxl.Workbook().save(base)
    xml = path.with_suffix(".xml")
    with open(xml, "w") as f:
        f.write(f'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n<worksheet xmlns="{MAIN}"><sheetData>')
        write_rows(f)
        f.write("</sheetData></worksheet>")
    with zipfile.ZipFile(base) as zin, zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for info in zin.infolist():
            if info.filename == "xl/worksheets/sheet1.xml":
                z.write(xml, info.filename)
            else:
                z.writestr(info, zin.read(info))
    size = xml.stat().st_size
    xml.unlink()
    base.unlink()
    return size


def large_sheet(path: Path, rows: int) -> int:
    """A legal sheet: a coefficient table over 12 standards, then ``rows`` rows of numbers and text."""
    def write(f):
        f.write('<row r="1"><c r="D1"><f>CALIB_COEFS(A2:A13,B2:B13,1)</f></c></row>')
        for r in range(2, rows + 2):
            x = (r - 2) % 12
            f.write(f'<row r="{r}"><c r="A{r}"><v>{x}</v></c><c r="B{r}"><v>{2.0 * x + 0.01 * (r % 7)}</v></c>'
                    f'<c r="C{r}" t="inlineStr"><is><t>sample text {r}</t></is></c></row>')
    return _with_sheet(path, write)


def formula(path: Path, text: str) -> int:
    """Twelve standards and one formula in D1."""
    def write(f):
        f.write(f'<row r="1"><c r="D1"><f>{text}</f></c></row>')
        for r in range(2, 14):
            f.write(f'<row r="{r}"><c r="A{r}"><v>{r}</v></c><c r="B{r}"><v>{2.0 * r + 0.01 * (r % 3)}</v></c></row>')
    return _with_sheet(path, write)


def many_formulas(path: Path, n: int) -> int:
    """``n`` formulas, each reading the standards and the result of the one before (a chain)."""
    def write(f):
        for r in range(2, 14):
            f.write(f'<row r="{r}"><c r="A{r}"><v>{r}</v></c><c r="B{r}"><v>{2.0 * r + 0.01 * (r % 3)}</v></c></row>')
        for k in range(n):
            r = 20 + k
            previous = f",,D{r - 1}" if k else ""
            f.write(f'<row r="{r}"><c r="D{r}"><f>CALIB_ORDER(A2:A13,B2:B13{previous})</f></c></row>')
    return _with_sheet(path, write)


def run(path: Path) -> tuple[str, float, float]:
    """First line of `degreewise refresh PATH`, seconds, peak resident MiB of that process."""
    start = time.perf_counter()
    child = subprocess.Popen(CLI + ["refresh", str(path)], stdout=subprocess.PIPE, stderr=subprocess.STDOUT)
    out = child.stdout.read().decode(errors="replace")
    _, status, usage = os.wait4(child.pid, 0)
    child.returncode = os.waitstatus_to_exitcode(status)
    return out.splitlines()[0] if out else "", time.perf_counter() - start, usage.ru_maxrss / 1024


def main() -> int:
    rows = int(sys.argv[1]) if len(sys.argv) > 1 else 1_700_000
    failures = 0
    with tempfile.TemporaryDirectory() as folder:
        folder = Path(folder)
        cases = [
            ("range A1:XFD1048576", lambda p: formula(p, "CALIB_ORDER(A1:XFD1048576,B2:B13)")),
            ("range to row 9,999,999", lambda p: formula(p, "CALIB_ORDER(A2:A9999999,B2:B9999999)")),
            ("8,000 chained formulas", lambda p: many_formulas(p, 8000)),
            ("50,000 chained formulas", lambda p: many_formulas(p, 50_000)),
            (f"legal sheet, {rows:,} rows", lambda p: large_sheet(p, rows)),
        ]
        print(f"{'case':30s} {'sheet MiB':>9s} {'s':>6s} {'peak MiB':>8s} {'peak/sheet':>10s}  first line")
        for k, (name, build) in enumerate(cases):
            path = folder / f"case{k}.xlsx"
            size = build(path) / 2**20
            line, seconds, peak = run(path)
            ok = seconds < 60 and peak < 1024
            failures += not ok
            print(f"{name:30s} {size:9.1f} {seconds:6.1f} {peak:8.0f} {peak / max(size, 1):10.2f}  "
                  f"{'' if ok else 'OVER THE BAR '}{line[:90]}")
    return 1 if failures else 0


if __name__ == "__main__":
    raise SystemExit(main())
