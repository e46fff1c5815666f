"""`degreewise refresh`: recompute every CALIB_* cell of a workbook and store the results in place.

Each CALIB_* formula is evaluated through the same ``degreewise`` functions the
spreadsheet calls, in dependency order. The anchor keeps its formula; a result
of more than one cell is stored as a dynamic-array formula over the range it
covers (with the metadata that marks it dynamic); cells the previous result
covered and the new one does not are cleared; a result that would cover a
non-empty cell, a merged block or a table, or reach beyond the sheet's edge, is not
written (the anchor shows #SPILL!, as the spreadsheet program would); an anchor stored
as a dynamic array keeps that form. Only the changed cells' XML, the workbook's
calculation flag (full recalculation on open) and, when needed, the dynamic-array
metadata change; every other part stays byte for byte. The file is written to a
temporary file beside it, with its permissions, and replaced atomically; a workbook
whose bytes would not change is not written at all.
"""

from __future__ import annotations

import os
import re
import stat
import sys
import time
from pathlib import Path

from ..workbook import files
from ..workbook.audit import Report
from ..workbook.compute import Refresher
from ..workbook.spool import Spooled
from ..xlsx.package import PackageError, read_package, write_package

SUFFIXES = (".xlsx", ".xlsm")
BACKUP = re.compile(r"\.before-refresh-\d{8}-\d{6}(?:-\d+)?$")  # the stem of a backup kept by --backup


def lock_file(path: Path) -> Path | None:
    """The lock file a spreadsheet program keeps beside an open workbook, if present."""
    for name in (f"~${path.name}", f".~lock.{path.name}#"):
        candidate = path.with_name(name)
        if candidate.exists():
            return candidate
    return None


def _target(path: Path, check: bool) -> Path:
    """The file a refresh reads and replaces: a symlink's target. Refused with a message: a backup kept by an
    earlier refresh, an open workbook and, when it would be written, a read-only or hard-linked one."""
    if BACKUP.search(path.stem):
        raise PackageError("this is a backup kept by an earlier refresh; backups are never refreshed")
    real = Path(os.path.realpath(path))
    info = real.stat()
    if not stat.S_ISREG(info.st_mode):
        raise PackageError("not a file")
    lock = lock_file(real) or lock_file(path)
    if check:
        return real
    if lock is not None:
        raise PackageError(f"the workbook is open in a spreadsheet program ({lock.name} is present); "
                           "close it and try again")
    if hasattr(os, "statvfs") and os.statvfs(real.parent).f_flag & os.ST_RDONLY:
        raise PackageError(f"{real.parent} is on a read-only file system; nothing was changed")
    if not info.st_mode & 0o222 or not os.access(real, os.W_OK):
        raise PackageError("the workbook is read-only; make it writable to refresh it")
    if info.st_nlink > 1:
        raise PackageError(f"the workbook has {info.st_nlink} hard links, which a refresh would separate; "
                           "refresh a copy, or remove the other links")
    return real


def _replace(real: Path, infos, parts: dict, added: list[str], backup: bool, report: Report, seen) -> None:
    """Keep the original as a backup if asked, then write the package in place of ``real`` (``files.write``:
    beside it, with its owner, mode and attributes, only if it is still the file that was read)."""
    if backup:
        if not files.unchanged(real, seen):
            raise files.Changed
        stamp, n = time.strftime("%Y%m%d-%H%M%S"), 1
        report.backup = real.with_name(f"{real.stem}.before-refresh-{stamp}{real.suffix}")
        while report.backup.exists():
            n += 1
            report.backup = real.with_name(f"{real.stem}.before-refresh-{stamp}-{n}{real.suffix}")
        files.copy(real, report.backup)
    files.write(real, lambda tmp: write_package(tmp, infos, parts, added), like=real, seen=seen)


def refresh_file(path: Path, check: bool = False, backup: bool = False, workers: int | None = None) -> Report:
    """Refresh one workbook in place; ``workers`` processes for a large one (default: one per CPU core).

    Never raises: whatever stops it is the report's one-line error, and the file is left as it was."""
    path = Path(path)
    report = Report(path)
    try:
        real = _target(path, check)
        data, seen = files.read(real)
        infos, parts = read_package(data)
        del data
        with Spooled(parts, spool=True, near=real.parent) as parts:
            if parts.note:
                report.notes.append(parts.note)
            report.keep = parts.keep
            try:
                changed, added = Refresher(parts).run(report, (os.cpu_count() or 1) if workers is None else workers)
                if check or not changed:
                    return report
                parts.update(changed)
                _replace(real, infos, parts, added, backup, report, seen)
            finally:
                report.settle(parts.parent)  # the report's lines go beside the spool folder, which is removed
        report.written = True
    except (PackageError, files.Changed) as err:
        report.error = str(err)
        report.backup = None if report.backup is None or not report.backup.exists() else report.backup
    except OSError as err:
        report.error = files.in_words(err, path)
    except Exception as err:  # a defect of ours: reported on one line, so a folder run goes on  # noqa: BLE001
        report.error = f"unexpected {type(err).__name__} ({err}); the workbook was left as it was"
    return report


def workbooks(paths) -> list[Path]:
    """The workbooks named: files as given, folders searched recursively (lock and temporary files and
    backups kept by earlier refreshes skipped)."""
    found = []
    for p in map(Path, paths):
        if p.is_dir():
            found += sorted(q for q in p.rglob("*") if q.suffix.lower() in SUFFIXES and q.is_file()
                            and not q.name.startswith(("~$", ".~")) and not BACKUP.search(q.stem))
        else:
            found.append(p)
    return found


def _one(args) -> Report:
    """One workbook of a folder run, in a worker or in the run's own process."""
    path, check, backup, workers = args
    return refresh_file(path, check, backup, workers=workers)


def run(paths, check: bool = False, backup: bool = False, jobs: int | None = None, report_to=None) -> int:
    """Refresh every workbook; each one's report is printed (or appended to the file ``report_to``) as soon as
    it finishes; 0 only when everything succeeded.

    ``jobs`` processes (default: one per CPU core): several workbooks are refreshed that many at a time, with
    at most twice that many handed out, so memory stays flat however many workbooks there are; a single large
    workbook has its sheets split over them. A progress bar counts the workbooks on a terminal (stderr). A run
    stopped part way is resumed by running it again: the workbooks it finished are up to date and are left as
    they are (their reports say "nothing changed").
    """
    jobs = jobs or os.cpu_count() or 1
    books = workbooks(paths)
    if not books:
        print("no workbooks (.xlsx, .xlsm) found in " + ", ".join(map(str, paths)))
        return 2
    tasks = [(f, check, backup, 1 if len(books) > 1 else jobs) for f in books]
    try:
        out = sys.stdout if report_to is None else open(report_to, "a", encoding="utf-8")
    except OSError as err:
        print(f"degreewise refresh: --report-to: cannot write {report_to} ({err.strerror}); nothing was refreshed",
              file=sys.stderr)
        return 2
    bar = None
    if len(tasks) > 1 and sys.stderr.isatty():
        from tqdm import tqdm

        bar = tqdm(total=len(tasks), unit="workbook", file=sys.stderr)
    done, bad, all_ok = 0, [], True

    def say(line: str) -> None:
        if bar is not None and out is sys.stdout:
            bar.write(line, file=out)  # above the bar
        else:
            print(line, file=out)

    def finished(r: Report) -> None:  # written out and dropped: no report is kept
        nonlocal done, all_ok
        for line in r.each_line(check):
            say(line)
        r.close()
        out.flush()
        done += 1
        all_ok = all_ok and r.ok
        if r.error:
            bad.append(str(r.path))
        if bar is not None:
            bar.update()

    try:
        if jobs > 1 and len(tasks) > 1:
            _in_pool(tasks, jobs, finished)
        else:
            for t in tasks:
                finished(_one(t))
        if done > 1:
            summary = (f"{done} workbooks: {done - len(bad)} read and computed, {len(bad)} not refreshed"
                       + (": " + ", ".join(bad) if bad else ""))
            say(summary)
            if out is not sys.stdout:
                print(summary)
    finally:
        if bar is not None:
            bar.close()
        if out is not sys.stdout:
            out.close()
    return 0 if all_ok else 1


def _in_pool(tasks: list, jobs: int, finished) -> None:
    """``_one`` of every task in ``jobs`` processes, at most 2 ``jobs`` tasks handed out at a time; ``finished``
    gets each report as it comes back (a worker that died: a report saying so)."""
    from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
    from concurrent.futures.process import BrokenProcessPool
    from itertools import islice

    waiting = iter(tasks)
    with ProcessPoolExecutor(max_workers=jobs, initializer=files.die_with_parent) as pool:
        running = {}
        while True:
            for task in islice(waiting, 2 * jobs - len(running)):
                try:
                    running[pool.submit(_one, task)] = task[0]
                except BrokenProcessPool as err:
                    finished(Report(task[0], error=f"the process refreshing it stopped ({err!r})"))
            if not running:
                return
            done, _ = wait(running, return_when=FIRST_COMPLETED)
            for future in done:
                path = running.pop(future)
                try:
                    report = future.result()
                except Exception as err:  # a worker that died: the others are still reported  # noqa: BLE001
                    report = Report(path, error=f"the process refreshing it stopped ({err!r})")
                finished(report)
