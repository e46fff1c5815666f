"""`degreewise refresh` of a workbook against openpyxl load + save of the same workbook.

What each side computes. openpyxl: loads the workbook and saves it again (every stored cell read into an
object and written out; no formula is computed). The refresh: reads the workbook, computes every CALIB_*
formula through the worksheet functions (SHEETS x 6 formulas: order, coefficients, sequential table, inverse
predictions, residuals, statistics), writes the cells that change (a first refresh writes about 5 times the
cells openpyxl reads), renders the changed sheets and the zip, and writes the audit trail to a file.

The workbook is SHEETS invented calibration sheets (6 CALIB_* formulas a sheet, default 200) or a
workbook file given by its path (a demo workbook: what one refresh of one calibration costs).
Each run is a fresh process (imports included) on a fresh copy (a first refresh), which also reports its
peak memory: the peak RSS of the process plus that of every process it forked (with --jobs, summed over
processes; each forked worker notes its own as it ends; a page a forked worker shares with its parent
counts in both). The refresh runs as the command `degreewise refresh BOOK > report.txt` does, with pandas
hidden as in an install from the README's first command. Rounds alternate (openpyxl then refresh, refresh
then openpyxl, ...); each round gives a time ratio and a memory ratio, both ours / reference = refresh /
openpyxl (below 1: the refresh is faster or smaller); the medians and quartiles of the per-round ratios are
what to quote on a noisy machine.

With --split, one first refresh (--jobs 1) also runs in a fresh process with the CPU time of each of its
stages summed (reading and parsing, dependency ordering, computing by function, writing cells with the audit
text, rendering sheets, zip), beside the CPU time of openpyxl's load + save of the workbook before and after
that refresh (after: with every cell the refresh wrote).
Run: python benchmarks/bench_refresh.py [SHEETS|BOOK.xlsx] [ROUNDS] [--split] [--jobs N]   (default 200, 5 rounds)
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
import os, resource, sys, time
kind, path = sys.argv[1], sys.argv[2]
sys.modules["pandas"] = None  # as installed by the README's first command: pandas comes only with the test extra
peaks, leave = path + ".peaks", os._exit


def noted_exit(code):  # a forked worker (multiprocessing ends one through os._exit) notes its own peak RSS
    with open(peaks, "a") as f:
        f.write(f"{resource.getrusage(resource.RUSAGE_SELF).ru_maxrss}\n")
    leave(code)


os._exit = noted_exit
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
seconds, cpu = time.perf_counter() - t0, time.process_time()
own, largest = (resource.getrusage(who).ru_maxrss for who in (resource.RUSAGE_SELF, resource.RUSAGE_CHILDREN))
forked = [int(line) for line in open(peaks)] if os.path.exists(peaks) else []
assert max(forked, default=0) >= largest, "a forked process ended without noting its peak"
print(seconds, cpu, own + sum(forked))  # CPU of this process, imports included; KiB summed over processes
"""

SPLIT = r"""
import contextlib, gc, sys, time
sys.modules["pandas"] = None
clock = time.process_time
start = clock()
from degreewise.commands import main, _defer_unused_numpy_modules
from degreewise.registration import headless
headless()
_defer_unused_numpy_modules()
import degreewise.commands.refresh as command
from degreewise.workbook import compute
from degreewise.xlsx import sheet
spent = {"imports": clock() - start}
inside = []


def timed(owner, name, stage):  # CPU time of each call, less that of the timed calls inside it
    f = getattr(owner, name)

    def g(*a, **k):
        t = clock()
        inside.append(0.0)
        try:
            return f(*a, **k)
        finally:
            dt, within = clock() - t, inside.pop()
            spent[stage] = spent.get(stage, 0.0) + dt - within
            if inside:
                inside[-1] += dt

    setattr(owner, name, g)


timed(command, "read_package", "zip reading (inflate)")
timed(command, "write_package", "zip writing (deflate)")
timed(sheet.Sheet, "_read", "reading: each sheet's first parse")
timed(sheet.Sheet, "_cells", "reading: rows' cells parsed")
timed(compute, "_block", "reading: arguments' cells")
timed(compute, "parse_call", "formulas parsed")
for name in ("graph_of", "order_of", "late_reads"):
    timed(compute, name, "dependency ordering")
for name in ("dynamic_array_metadata", "set_full_calc_on_load"):
    timed(compute, name, "workbook part edits")
for name in compute.CALLABLE:
    holder = type("Holder", (), {"f": staticmethod(compute.CALLABLE[name])})
    timed(holder, "f", "computing: " + name)
    compute.CALLABLE[name] = holder.f
timed(compute, "write", "writing cells (with the audit text)")
timed(compute.Refresher, "_finish", "rendering sheets")
COLLECTING = "garbage collection (inside the stages)"
began = [0.0]


def collection(phase, info):
    if phase == "start":
        began[0] = clock()
    else:
        spent[COLLECTING] = spent.get(COLLECTING, 0.0) + clock() - began[0]


gc.callbacks.append(collection)
t0 = clock()
with open(sys.argv[1] + ".txt", "w") as out, contextlib.redirect_stdout(out):
    main(["refresh", sys.argv[1], "--jobs", "1"])
total = clock() - t0 + spent["imports"]
spent["other (command, audit printing, files)"] = total - sum(v for k, v in spent.items() if k != COLLECTING)
for stage, seconds in sorted(spent.items(), key=lambda kv: -kv[1]):
    print(f"{seconds:.3f} {stage}")
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


def measure(kind: str, source: Path, folder: Path, extra: list[str], copy: Path | None = None):
    """Seconds, CPU seconds of the calling process and peak MiB (summed over processes) of one run in a fresh
    process, on a fresh copy of ``source`` (a first refresh), or on ``copy`` as it is."""
    if copy is None:
        copy = folder / ("copy" + source.suffix)
        shutil.copy(source, copy)
    Path(str(copy) + ".peaks").unlink(missing_ok=True)
    out = subprocess.run([sys.executable, "-c", CHILD, kind, str(copy)] + extra, capture_output=True, text=True,
                         check=True)
    seconds, cpu, kib = out.stdout.split()
    return float(seconds), float(cpu), int(kib) / 1024


def split(source: Path, folder: Path) -> None:
    """Where a first refresh's CPU time goes, stage by stage (one process), beside openpyxl's CPU time."""
    before = measure("openpyxl", source, folder, [])[1]
    copy = folder / ("split" + source.suffix)
    shutil.copy(source, copy)
    out = subprocess.run([sys.executable, "-c", SPLIT, str(copy)], capture_output=True, text=True, check=True)
    after = measure("openpyxl", source, folder, [], copy=copy)[1]
    lines = [(float(s), stage) for s, stage in (line.split(" ", 1) for line in out.stdout.splitlines())]
    total = sum(s for s, stage in lines if "inside" not in stage)
    print(f"where a first refresh's CPU time goes (--jobs 1, one run): {total:.2f} s; openpyxl load + save "
          f"(CPU, imports included) of the workbook before the refresh {before:.2f} s (ratio {total / before:.2f}), "
          f"after it {after:.2f} s (ratio {total / after:.2f})")
    for seconds, stage in lines:
        print(f"  {stage:44s} {seconds:7.3f} s {100 * seconds / total:5.1f} %")


def quartiles(values) -> str:
    q1, q2, q3 = statistics.quantiles(values, n=4) if len(values) > 1 else values * 3
    return f"{q2:.2f} (quartiles {q1:.2f}-{q3:.2f})"


def main(book: str = str(SHEETS), rounds: int = 5, extra: list[str] | None = None, stages: bool = False):
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
              "each run a first refresh in a fresh process (imports included) against openpyxl load + save; "
              "ratios ours / reference = refresh / openpyxl (below 1: the refresh is faster or smaller); "
              "memory: peak RSS summed over processes")
        time_ratios, memory_ratios = [], []
        for i in range(rounds):
            order = ("openpyxl", "refresh") if i % 2 == 0 else ("refresh", "openpyxl")
            got = {kind: measure(kind, source, Path(tmp), extra if kind == "refresh" else []) for kind in order}
            (ot, _, om), (rt, _, rm) = got["openpyxl"], got["refresh"]
            time_ratios.append(rt / ot)
            memory_ratios.append(rm / om)
            print(f"  round {i + 1}: openpyxl {ot:6.2f} s {om:6.1f} MiB | refresh {rt:6.2f} s {rm:6.1f} MiB | "
                  f"time refresh/openpyxl {rt / ot:5.2f}  memory refresh/openpyxl {rm / om:5.2f}")
        if rounds:
            print(f"median time ratio refresh/openpyxl {quartiles(time_ratios)}; "
                  f"median memory ratio refresh/openpyxl {quartiles(memory_ratios)}")
        if stages:
            split(source, Path(tmp))


if __name__ == "__main__":
    args = sys.argv[1:]
    stages = "--split" in args
    args = [a for a in args if a != "--split"]
    cut = args.index("--jobs") if "--jobs" in args else len(args)
    positional = args[:cut]
    main(positional[0] if positional else str(SHEETS), int(positional[1]) if len(positional) > 1 else 5, args[cut:],
         stages)
