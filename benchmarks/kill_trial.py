"""Kill trial: refresh and freeze stopped by KILL, TERM or INT at random moments (fixed seed).

Each run checks that the workbook is unchanged or byte-identical to a complete refresh (a frozen copy: absent
or complete), that the next run leaves no temporary file beside it and no spool folder of the killed run, and
that no process of the killed run is left. Prints one line per run and a summary; exit 1 on any failure.

    python benchmarks/kill_trial.py [RUNS]
"""

from __future__ import annotations

import random
import shutil
import signal
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import openpyxl

from degreewise.commands.refresh import refresh_file

CLI = [sys.executable, "-c", "from degreewise.commands import main; raise SystemExit(main())"]


def workbook(path: Path, sheets: int) -> Path:
    """An invented calibration per sheet, each with a table of coefficients."""
    wb = openpyxl.Workbook()
    for k in range(sheets):
        ws = wb.active if k == 0 else wb.create_sheet(f"S{k}")
        for i, x in enumerate((1, 2, 4, 8, 16, 32), start=1):
            ws.cell(i, 1, x)
            ws.cell(i, 2, 0.5 + 1.97 * x + 0.01 * ((i * 7 + k) % 5))
        ws["D1"] = "=CALIB_COEFS(A1:A6,B1:B6,1)"
    wb.save(path)
    return path


def alive(pid: int) -> bool:
    out = subprocess.run(["ps", "-eo", "pid,ppid"], capture_output=True, text=True).stdout.split()
    return str(pid) in out


def main(runs: int) -> int:
    rng = random.Random(20261204)
    work = Path(tempfile.mkdtemp(prefix="kill-trial-"))
    base = workbook(work / "base.xlsx", 1200)
    done = work / "done.xlsx"
    shutil.copy(base, done)
    refresh_file(done, workers=1)
    failures = 0
    for n in range(runs):
        folder = work / f"run{n}"
        folder.mkdir()
        book = folder / "book.xlsx"
        shutil.copy(base, book)
        command = rng.choice(("refresh", "freeze"))
        sig = rng.choice((signal.SIGKILL, signal.SIGTERM, signal.SIGINT))
        delay = rng.uniform(0.2, 2.5)
        args = [*CLI, "refresh", "--jobs", "2", str(book)] if command == "refresh" else \
            [*CLI, "freeze", str(book), str(folder / "copy.xlsx")]
        run = subprocess.Popen(args, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
        time.sleep(delay)
        run.send_signal(sig)
        _, err = run.communicate(timeout=120)
        data = book.read_bytes()
        state = "unchanged" if data == base.read_bytes() else "refreshed" if data == done.read_bytes() else "DAMAGED"
        copy = folder / "copy.xlsx"
        if command == "freeze" and copy.exists():
            try:
                openpyxl.load_workbook(copy, read_only=True).close()
                state += ", copy complete"
            except Exception:  # noqa: BLE001 - any failure to open is damage
                state = "DAMAGED copy"
        refresh_file(folder / "book.xlsx", check=True, workers=1)  # the next run sweeps what the killed one left
        subprocess.run([*CLI, "refresh", "--check", str(book)], capture_output=True)
        left = [p.name for p in folder.iterdir() if p.name.startswith(".~")]
        spool = list(Path(tempfile.gettempdir()).glob(f"degreewise-{run.pid}-*"))
        orphan = alive(run.pid)
        bad = state.startswith("DAMAGED") or left or spool or orphan or "Traceback" in err
        failures += bool(bad)
        print(f"{n:2d} {command:7s} {signal.Signals(sig).name:7s} at {delay:4.2f} s: exit {run.returncode:4d}, "
              f"{state}; leftovers {left or 'none'}, spool {len(spool)}, orphan {orphan}" + ("  FAIL" if bad else ""))
        if bad and err.strip():
            print("   " + "\n   ".join(err.strip().splitlines()[-3:]))  # what the killed run printed last
    shutil.rmtree(work)
    print(f"{runs} runs, {failures} failures")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main(int(sys.argv[1]) if len(sys.argv) > 1 else 24))
