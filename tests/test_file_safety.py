"""Nothing is lost: an edit saved during a refresh, backups and reports on a failing disk, owner and attributes,
leftovers of killed runs, signals, closed pipes, devices and missing folders."""

import errno
import os
import shutil
import signal
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import openpyxl
import pytest

from degreewise.commands import freeze as freeze_module, main
from degreewise.workbook import files
from degreewise.commands.refresh import refresh_file

PY = [sys.executable, "-c", "from degreewise.commands import main; raise SystemExit(main())"]


def workbook(path: Path, sheets: int = 1) -> Path:
    wb = openpyxl.Workbook()
    for k in range(sheets):
        ws = wb.active if k == 0 else wb.create_sheet(f"S{k}")
        for i, (a, b) in enumerate([(1, 2.1), (2, 3.9), (4, 8.2), (8, 15.8), (16, 32.3), (32, 63.9)], start=1):
            ws.cell(i, 1, a)
            ws.cell(i, 2, b + k)
        ws["D1"] = "=CALIB_COEFS(A1:A6,B1:B6,1)"
    wb.save(path)
    return path


def test_an_edit_saved_while_the_refresh_runs_is_kept(tmp_path, monkeypatch):
    path = workbook(tmp_path / "book.xlsx")
    real_write = files.write

    def another_program_saves_meanwhile(target, fill, like=None, seen=None):
        other = workbook(tmp_path / "other.xlsx", sheets=2)  # the other program's save
        shutil.copy(other, target)
        return real_write(target, fill, like, seen)

    monkeypatch.setattr(files, "write", another_program_saves_meanwhile)
    report = refresh_file(path, workers=1)
    assert report.error == ("the workbook was changed by another program while it was refreshed; it was left as "
                            "that program saved it: refresh it again")
    assert path.read_bytes() == (tmp_path / "other.xlsx").read_bytes()
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".~")] == []


def test_a_backup_that_cannot_be_completed_leaves_no_file_under_the_backup_name(tmp_path, monkeypatch):
    path = workbook(tmp_path / "book.xlsx")
    before = path.read_bytes()

    def disk_full(source, target):
        Path(target).write_bytes(b"PK\x03\x04 half")
        raise OSError(errno.ENOSPC, "No space left on device", str(target))

    monkeypatch.setattr(shutil, "copyfile", disk_full)
    report = refresh_file(path, backup=True, workers=1)
    assert report.error == f"the disk holding {tmp_path} is full; nothing was changed"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["book.xlsx"]  # no backup, no leftover
    assert path.read_bytes() == before


@pytest.mark.skipif(os.geteuid() != 0, reason="changing a file's owner needs root")
def test_owner_group_mode_and_extended_attributes_are_kept(tmp_path):
    path = workbook(tmp_path / "book.xlsx")
    os.chown(path, 1234, 4321)
    os.chmod(path, 0o640)
    try:
        os.setxattr(path, "user.lab.batch", b"run 17")
    except OSError:
        pytest.skip("this file system keeps no user attributes")
    assert refresh_file(path, workers=1).written
    info = os.stat(path)
    assert (info.st_uid, info.st_gid, info.st_mode & 0o777) == (1234, 4321, 0o640)
    assert os.getxattr(path, "user.lab.batch") == b"run 17"


def test_a_frozen_copy_gets_the_mode_of_a_new_file(tmp_path):
    path = workbook(tmp_path / "book.xlsx")
    old = os.umask(0o022)
    try:
        assert freeze_module.freeze(path, tmp_path / "copy.xlsx").error is None
    finally:
        os.umask(old)
    assert os.stat(tmp_path / "copy.xlsx").st_mode & 0o777 == 0o644


def test_words_for_a_missing_folder_a_pipe_and_a_device(tmp_path, capsys):
    path = workbook(tmp_path / "book.xlsx")
    assert main(["freeze", str(path), str(tmp_path / "nodir" / "sub" / "x.xlsx")]) == 1
    assert capsys.readouterr().out == f"{path}: not frozen: the folder {tmp_path / 'nodir' / 'sub'} does not exist\n"
    fifo = tmp_path / "pipe.xlsx"
    os.mkfifo(fifo)
    (tmp_path / "zero.xlsx").symlink_to("/dev/zero")
    for name in ("pipe.xlsx", "zero.xlsx"):
        assert main(["freeze", str(tmp_path / name), str(tmp_path / "out.xlsx")]) == 1
        assert capsys.readouterr().out == (f"{tmp_path / name}: not frozen: {tmp_path / name} is not a regular file "
                                           "(a device, a pipe or a folder); give a workbook file\n")
        assert main(["report", str(tmp_path / name), "--out", str(tmp_path)]) == 1
        assert "is not a regular file (a device, a pipe or a folder)" in capsys.readouterr().out


def test_leftovers_of_a_dead_run_are_swept_and_a_live_runs_are_not(tmp_path):
    path = workbook(tmp_path / "book.xlsx")
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True,
                          text=True, check=True).stdout.strip()
    (tmp_path / f".~degreewise-{dead}-abc.xlsx").write_bytes(b"half")
    (tmp_path / f".~degreewise-{os.getppid()}-def.xlsx").write_bytes(b"another run, alive")
    assert refresh_file(path, workers=1).written
    assert sorted(p.name for p in tmp_path.iterdir()) == [f".~degreewise-{os.getppid()}-def.xlsx", "book.xlsx"]


def test_a_closed_pipe_ends_quietly(tmp_path):
    for k in range(3):
        workbook(tmp_path / f"book{k}.xlsx")
    out = subprocess.run(" ".join(PY[:2]) + f' "{PY[2]}" refresh --check {tmp_path} | head -c 10',
                         shell=True, capture_output=True, text=True, timeout=120)
    assert out.stderr == "" and len(out.stdout) == 10


@pytest.mark.parametrize("sig, code", [(signal.SIGTERM, 143), (signal.SIGINT, 130)])
def test_a_signal_ends_in_one_line_and_leaves_nothing_behind(tmp_path, sig, code):
    path = workbook(tmp_path / "book.xlsx", sheets=400)
    before = path.read_bytes()
    done = tmp_path / "done" / "book.xlsx"
    done.parent.mkdir()
    shutil.copy(path, done)
    assert refresh_file(done, workers=1).written  # what a complete refresh writes
    run = subprocess.Popen([*PY, "refresh", "--jobs", "2", str(path)], stdout=subprocess.PIPE,
                           stderr=subprocess.PIPE, text=True)
    time.sleep(1.2)
    run.send_signal(sig)
    out, err = run.communicate(timeout=60)
    if run.returncode == 0:
        pytest.skip("the refresh finished before the signal")
    assert run.returncode == code
    assert err.splitlines()[-1].startswith("degreewise refresh: stopped (")
    assert "Traceback" not in err
    assert path.read_bytes() in (before, done.read_bytes())  # as it was, or completely refreshed
    assert [p.name for p in tmp_path.iterdir() if p.name not in ("book.xlsx", "done")] == []
    assert list(Path(tempfile.gettempdir()).glob(f"degreewise-{run.pid}-*")) == []  # its spool folder too


def test_a_temporary_folder_that_cannot_be_written_is_replaced_by_the_workbooks(tmp_path, monkeypatch):
    path = workbook(tmp_path / "book.xlsx")
    locked = tmp_path / "tmp"
    locked.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(locked))
    real = tempfile.TemporaryDirectory

    def read_only(*args, **kwargs):  # as a read-only TMPDIR answers (root may write anywhere, so simulated)
        if kwargs.get("dir") is None:
            raise OSError(errno.EROFS, "Read-only file system", str(locked))
        return real(*args, **kwargs)

    monkeypatch.setattr(tempfile, "TemporaryDirectory", read_only)
    report = refresh_file(path, workers=1)
    assert report.written and report.notes == [f"the temporary folder {locked} cannot be written; {tmp_path} was "
                                               "used instead"]
    assert report.lines()[-1] == f"  note: {report.notes[0]}"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["book.xlsx", "tmp"]
