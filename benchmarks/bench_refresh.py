"""`degreewise refresh` of a workbook against openpyxl load + save of the same workbook.

The workbook is SHEETS invented calibration sheets (6 CALIB_* formulas a sheet, default 200) or a
workbook file given by its path (a demo workbook: what one refresh of one calibration costs).
Each run is a fresh process (imports included) on a fresh copy, which also reports its peak memory
(max RSS of the process plus its largest child, if any). The refresh runs as the command
`degreewise refresh BOOK > report.txt` does (the audit trail goes to a file), with pandas hidden as
in an install from the README's first command. Rounds alternate (openpyxl then refresh, refresh
then openpyxl, ...); each round gives a time ratio and a memory ratio, both refresh / openpyxl (below 1:
the refresh is faster or smaller); the medians and quartiles of the per-round ratios
are what to quote on a noisy machine.
Run: python benchmarks/bench_refresh.py [SHEETS|BOOK.xlsx] [ROUNDS] [--jobs N]   (default 200, 5 rounds)
"""

from __future__ import annotations

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
sys.modules["pandas"] = None  # as installed by the README's first command: pandas comes only with the test extra
t0 = time.perf_counter()
if kind == "refresh":
    import contextlib
    from degreewise.commands import main
    with open(path + ".txt", "w") as out, contextlib.redirect_stdout(out):  # the report, kept as a user keeps it
        code = main(["refresh", path] + sys.argv[3:])
    with open(path + ".txt") as out:
        head = out.readline()
    assert code in (0, 1) and "not refreshed" not in head, head
else:
    import openpyxl
    wb = openpyxl.load_workbook(path)
    wb.save(path)
seconds = time.perf_counter() - t0
own, children = (resource.getrusage(who).ru_maxrss for who in (resource.RUSAGE_SELF, resource.RUSAGE_CHILDREN))
print(seconds, own + children)  # KiB: peak of this process plus its largest child, an upper bound of the peak total
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


def measure(kind: str, source: Path, folder: Path, extra: list[str]) -> tuple[float, float]:
    """Seconds and peak MiB of one run in a fresh process, on a fresh copy of ``source`` (a first refresh)."""
    copy = folder / ("copy" + source.suffix)
    shutil.copy(source, copy)
    out = subprocess.run([sys.executable, "-c", CHILD, kind, str(copy)] + extra, capture_output=True, text=True,
                         check=True)
    seconds, kib = out.stdout.split()
    return float(seconds), int(kib) / 1024


def quartiles(values) -> str:
    q1, q2, q3 = statistics.quantiles(values, n=4) if len(values) > 1 else values * 3
    return f"{q2:.2f} (quartiles {q1:.2f}-{q3:.2f})"


def main(book: str = str(SHEETS), rounds: int = 5, extra: list[str] | None = None):
    extra = extra or []
    with tempfile.TemporaryDirectory() as tmp:
        if book.isdigit():
            source = Path(tmp) / "book.xlsx"
            build(source, int(book))
            what = f"{book} calibration sheets x 6 CALIB_* formulas"
        else:
            source = Path(tmp) / Path(book).name
            shutil.copy(book, source)
            what = Path(book).name
        print(f"workbook: {what}, {source.stat().st_size // 1024} KiB; refresh {' '.join(extra) or '(default)'}; "
              f"each run a first refresh in a fresh process (imports included)")
        time_ratios, memory_ratios = [], []
        for i in range(rounds):
            order = ("openpyxl", "refresh") if i % 2 == 0 else ("refresh", "openpyxl")
            got = {kind: measure(kind, source, Path(tmp), extra if kind == "refresh" else []) for kind in order}
            (ot, om), (rt, rm) = got["openpyxl"], got["refresh"]
            time_ratios.append(rt / ot)
            memory_ratios.append(rm / om)
            print(f"  round {i + 1}: openpyxl {ot:6.2f} s {om:6.1f} MiB | refresh {rt:6.2f} s {rm:6.1f} MiB | "
                  f"time refresh/openpyxl {rt / ot:5.2f}  memory refresh/openpyxl {rm / om:5.2f}")
        print(f"median time ratio refresh/openpyxl {quartiles(time_ratios)}; "
              f"median memory ratio refresh/openpyxl {quartiles(memory_ratios)}")


if __name__ == "__main__":
    args = sys.argv[1:]
    cut = args.index("--jobs") if "--jobs" in args else len(args)
    positional = args[:cut]
    main(positional[0] if positional else str(SHEETS), int(positional[1]) if len(positional) > 1 else 5, args[cut:])
