"""Folder runs: each workbook's report goes out as soon as it finishes (printed, or appended to --report-to),
no report is kept, and a run stopped part way is resumed by running it again (finished workbooks are up to
date and left as they are)."""

from pathlib import Path

import openpyxl
import pytest

from degreewise.commands import main, refresh
from degreewise.commands.refresh import run

X = [1.0, 2.0, 5.0, 10.0, 20.0, 40.0] * 2
Y = [2.1, 4.0, 10.3, 19.8, 40.5, 79.6, 1.9, 4.2, 9.9, 20.3, 39.6, 80.4]  # invented readings


def book(path: Path) -> Path:
    """A workbook whose one CALIB_ORDER cell has no stored value yet (a refresh changes it)."""
    wb = openpyxl.Workbook()
    ws = wb.active
    for i, (x, y) in enumerate(zip(X, Y), start=1):
        ws.cell(i, 1, x), ws.cell(i, 2, y)
    ws["D1"] = "=CALIB_ORDER(A1:A12,B1:B12)"
    wb.save(path)
    return path


def folder(tmp_path: Path, count: int = 3) -> list[Path]:
    (tmp_path / "books").mkdir()
    return [book(tmp_path / "books" / f"b{i}.xlsx") for i in range(count)]


CHANGE = "  changed Sheet!D1: empty -> 1"


def head(path: Path, tail: str) -> str:
    return f"{path}: 1 CALIB_* cells refreshed (0 with a message), 0 blocked, 0 left alone, 0 failed; {tail}"


@pytest.mark.parametrize("jobs", [1, 2])
def test_reports_go_to_the_file_given_and_the_summary_is_printed(tmp_path, capsys, jobs):
    books = folder(tmp_path)
    trail = tmp_path / "trail.txt"
    assert main(["refresh", str(tmp_path / "books"), "--jobs", str(jobs), "--report-to", str(trail)]) == 0
    summary = "3 workbooks: 3 read and computed, 0 not refreshed"
    assert capsys.readouterr().out == summary + "\n"
    lines = trail.read_text(encoding="utf-8").splitlines()
    blocks = sorted(zip(lines[:-1:2], lines[1:-1:2]))  # each report: its head line, then its one change
    assert blocks == [(head(b, "1 cell values changed"), CHANGE) for b in books]
    assert len(lines) == 7 and lines[-1] == summary


def test_each_report_is_out_before_the_next_workbook_starts(tmp_path, monkeypatch):
    folder(tmp_path)
    trail = tmp_path / "trail.txt"
    seen = []
    refresh_file = refresh.refresh_file

    def watched(path, *args, **kwargs):
        seen.append(trail.read_text(encoding="utf-8").count("\n") if trail.exists() else 0)
        return refresh_file(path, *args, **kwargs)

    monkeypatch.setattr(refresh, "refresh_file", watched)
    assert run([str(tmp_path / "books")], jobs=1, report_to=trail) == 0
    assert seen == [0, 2, 4]  # each workbook's two report lines are written before the next one starts


def test_a_stopped_run_is_resumed_without_rewriting_finished_workbooks(tmp_path, capsys):
    books = folder(tmp_path)
    assert run([str(books[0])], jobs=1) == 0  # the run that stopped after its first workbook
    done = books[0].read_bytes(), books[0].stat().st_mtime_ns
    capsys.readouterr()
    assert run([str(tmp_path / "books")], jobs=1) == 0
    out = capsys.readouterr().out.splitlines()
    assert out == [head(books[0], "nothing changed, the file was left as it was"),
                   head(books[1], "1 cell values changed"), CHANGE, head(books[2], "1 cell values changed"), CHANGE,
                   "3 workbooks: 3 read and computed, 0 not refreshed"]
    assert (books[0].read_bytes(), books[0].stat().st_mtime_ns) == done


def test_a_report_file_that_cannot_be_written_stops_before_any_workbook(tmp_path, capsys):
    books = folder(tmp_path, 1)
    before = books[0].read_bytes()
    assert run([str(books[0])], report_to=tmp_path / "no such folder" / "trail.txt") == 2
    err = capsys.readouterr().err
    assert err == (f"degreewise refresh: --report-to: cannot write {tmp_path / 'no such folder' / 'trail.txt'} "
                   "(No such file or directory); nothing was refreshed\n")
    assert books[0].read_bytes() == before
