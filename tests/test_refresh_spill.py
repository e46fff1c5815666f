"""The refresh's spill rules (where a result may be written) and its audit trail, checked on files the
refresh writes and re-reads with openpyxl."""

import errno

import openpyxl
import pytest

import degreewise
from degreewise.commands.refresh import refresh_file, run
from degreewise.workbook import audit
from conftest import workbook
from test_refresh import X, Y, values


@pytest.mark.parametrize("merged,blocked", [("J6:K8", True), ("N4:O5", True), ("J1:K3", True), ("F4:H5", True),
                                            ("J7:K8", False), ("O4:P5", False), ("J1:K2", False), ("F4:G5", False)])
def test_a_merged_block_touching_any_edge_of_the_result_blocks_it(tmp_path, merged, blocked):
    """The result H3:N6 (4 x 7) meets a merged block on its bottom, right, top or left edge by one row or
    column: the spreadsheet program refuses the spill (#SPILL!); one row or column further off it spills."""
    path = tmp_path / "merged.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    for i, (a, b) in enumerate(zip(X, Y), start=2):
        ws.cell(i, 1, float(a)), ws.cell(i, 2, float(b))
    ws["H3"] = "=CALIB_COEFS(A2:A13,B2:B13,2)"
    ws.merge_cells(merged)
    wb.save(path)
    report = refresh_file(path)
    if blocked:
        assert report.blocked == [("Sheet!H3", f"the result (4 x 7) would spill into the merged cells {merged}, "
                                               "where the spreadsheet program does not allow a spilled result; "
                                               "nothing was written")]
        assert values(path, "Sheet", "H3", 1, 1) == [["#SPILL!"]]
    else:
        assert report.blocked == [] and report.refreshed == ["Sheet!H3"]
        assert values(path, "Sheet", "H3", 1, 7) == [["term", "coefficient", "std error", "t", "p-value", "lower",
                                                       "upper"]]


@pytest.mark.parametrize("before,after,note,size", [
    ("CALIB_COEFS(A2:A13,B2:B13,1)", "CALIB_COEFS(A2:A13,B2:B13,2)", "D6", "4 x 7"),  # D3:J5, then D3:J6
    ("CALIB_CHECKS(A2:A13,B2:B13,1)", "CALIB_COEFS(A2:A13,B2:B13,1)", "I3", "3 x 7"),  # D3:H13, then D3:J5
])
def test_a_result_that_outgrows_its_previous_spill_keeps_the_cell_just_beyond_it(tmp_path, before, after, note, size):
    """Only the cells of the previous spill may be written over: a value in the first row below it or the first
    column right of it blocks the larger result (the spreadsheet program's #SPILL!)."""
    path = workbook(tmp_path / "grows.xlsx", {1: X.tolist(), 2: Y.tolist()}, {"D3": f"={before}"}, first_row=2)
    assert refresh_file(path).ok
    wb = openpyxl.load_workbook(path)
    ws = wb.active
    ws["D3"] = openpyxl.worksheet.formula.ArrayFormula(ws["D3"].value.ref, f"={after}")
    ws[note] = "my note"
    wb.save(path)
    report = refresh_file(path)
    assert report.blocked == [("Sheet!D3", f"the result ({size}) would cover {note}, which is not empty; "
                                           "nothing was overwritten")]
    assert values(path, "Sheet", note, 1, 1) == [["my note"]]


@pytest.mark.parametrize("anchor", ["A1048573", "XEX1"])
def test_a_result_that_ends_on_the_sheets_last_row_or_column_is_written(tmp_path, anchor):
    """The 4 x 7 result of an order-2 CALIB_COEFS from A1048573 ends on row 1048576, from XEX1 in column XFD: both
    fit (one row or column further is blocked: test_refresh_desktop)."""
    path = workbook(tmp_path / "edge.xlsx", {1: X.tolist(), 2: Y.tolist()}, {anchor: "=CALIB_COEFS(A1:A12,B1:B12,2)"})
    report = refresh_file(path)
    assert report.blocked == [] and report.refreshed == [f"Sheet!{anchor}"]
    assert values(path, "Sheet", anchor, 1, 1) == [["term"]]


def test_a_one_cell_result_in_a_merged_block_is_written(tmp_path):
    """A single-cell result does not spill, so a merged block at its anchor is no obstacle (common practice: the
    spreadsheet program shows it in the merged cell)."""
    path = workbook(tmp_path / "merged_one.xlsx", {1: X.tolist(), 2: Y.tolist()}, {"D2": "=CALIB_ORDER(A2:A13,B2:B13)"},
                    first_row=2)
    wb = openpyxl.load_workbook(path)
    wb.active.merge_cells("D2:E3")
    wb.save(path)
    report = refresh_file(path)
    assert report.blocked == [] and report.refreshed == ["Sheet!D2"]
    assert values(path, "Sheet", "D2", 1, 1) == [[degreewise.calib_order([[v] for v in X], [[v] for v in Y])]]


def test_a_result_beyond_the_last_column_that_ends_on_the_last_row_names_the_column(tmp_path):
    path = workbook(tmp_path / "corner.xlsx", {1: X.tolist(), 2: Y.tolist()},
                    {"XFA1048573": "=CALIB_COEFS(A1:A12,B1:B12,2)"})
    assert refresh_file(path).blocked == [("Sheet!XFA1048573", "the result (4 x 7) would reach beyond the sheet's "
                                                               "last column XFD; nothing was written")]


def test_the_audit_trail_gives_a_one_cell_change_alone_and_a_tables_changes_cell_by_cell(tmp_path):
    path = workbook(tmp_path / "trail.xlsx", {1: X.tolist(), 2: Y.tolist()},
                    {"D1": "=CALIB_ORDER(A1:A12,B1:B12,1)", "F1": '=CALIB_LABELS("predict")'})
    assert list(refresh_file(path).trail()) == [
        ("Sheet!D1", (1, 1), 1, "empty -> 1"),
        ("Sheet!F1", (1, 6), 6, 'F1 empty -> "predicted y"; G1 empty -> "mean lower"; H1 empty -> "mean upper"; '
                                'I1 empty -> "prediction lower"; J1 empty -> "prediction upper"; K1 empty -> "note"')]


def test_audit_lines_that_cannot_be_read_back_are_said_lost_and_the_written_cells_stand(tmp_path, monkeypatch,
                                                                                         capsys):
    """A disk that fails while the trail's lines are moved out of the spool (after the workbook was written):
    the report says the workbook was refreshed, each lost line says so, and a note gives the reason."""
    def failing(kept):
        raise OSError(errno.ENOSPC, "No space left on device")
        yield  # a generator, as the real one

    monkeypatch.setattr(audit, "read_each", failing)
    path = workbook(tmp_path / "full.xlsx", {1: X.tolist(), 2: Y.tolist()}, {"D1": "=CALIB_ORDER(A1:A12,B1:B12,1)"})
    report = refresh_file(path)
    assert report.error is None and report.written
    assert list(report.trail()) == [("Sheet!D1", (1, 1), 1, audit.LOST)]
    assert report.notes == ["the audit trail's lines could not be read back (No space left on device); the "
                            "refreshed cells are as the head line says"]
    assert values(path, "Sheet", "D1", 1, 1) == [[1]]


def test_the_report_keeps_its_lines_beside_the_spool_and_closes_them_when_printed(tmp_path, monkeypatch, capsys):
    """The trail's own file is made in the folder that holds the spool folder (which is removed before the report
    is printed) and is closed once the report is out."""
    made = []
    real = audit.tempfile.TemporaryFile

    def watched(*args, **kwargs):
        made.append((kwargs.get("dir"), real(*args, **kwargs)))
        return made[-1][1]

    monkeypatch.setattr(audit.tempfile, "TemporaryFile", watched)
    monkeypatch.setattr(audit.tempfile, "tempdir", str(tmp_path))
    path = workbook(tmp_path / "book.xlsx", {1: X.tolist(), 2: Y.tolist()}, {"D1": "=CALIB_ORDER(A1:A12,B1:B12,1)"})
    assert run([str(path)], jobs=1) == 0
    assert [(folder, f.closed) for folder, f in made] == [(str(tmp_path), True)]
    assert "  changed Sheet!D1: empty -> 1" in capsys.readouterr().out.splitlines()
