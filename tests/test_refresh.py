"""Headless refresh of whole workbooks: values equal the functions', nothing else changes, bad files refused."""

import io
import shutil
import sys
import tempfile
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from openpyxl.chart import Reference, ScatterChart, Series
from openpyxl.workbook.defined_name import DefinedName

import degreewise
from degreewise.xlsx.package import MAX_PART
from degreewise.commands.refresh import lock_file, refresh_file, run
from conftest import libreoffice_rows

RNG = np.random.default_rng(31)
X = np.repeat([1.0, 2.0, 5.0, 10.0, 20.0, 40.0], 2)
Y = 5.0 + 12.0 * X - 0.08 * X**2 + RNG.normal(0, 0.6, X.size)


def build(path: Path, vba: bool = False) -> Path:
    """Invented calibration workbook: a data sheet with a space in its name, a chart, a defined name,
    formulas on the same and on another sheet."""
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Run 2"
    ws["A1"], ws["B1"] = "conc", "signal"
    for i, (a, b) in enumerate(zip(X, Y), start=2):
        ws.cell(i, 1, float(a))
        ws.cell(i, 2, float(b))
    ws["D1"] = "=CALIB_ORDER(A2:A13,B2:B13)"
    ws["D3"] = "=CALIB_COEFS($A$2:$A$13,$B$2:$B$13,D1)"
    ws["D10"] = "=CALIB_PREDICT(A2:A13,B2:B13,A2:A4,D1,0.9)"
    ws["K1"] = "=CALIB_VERSION()"
    wb.defined_names["standards_x"] = DefinedName("standards_x", attr_text="'Run 2'!$A$2:$A$13")
    chart = ScatterChart()
    chart.series.append(Series(Reference(ws, min_col=2, min_row=2, max_row=13),
                               Reference(ws, min_col=1, min_row=2, max_row=13)))
    ws.add_chart(chart, "M2")
    other = wb.create_sheet("Summary")
    other["A1"] = "=CALIB_SEQF(standards_x,'Run 2'!B2:B13)"
    other["H1"] = "=CALIB_STATS('Run 2'!A2:A13,'Run 2'!B2:B13,'Run 2'!D1)"
    other["A20"] = "=ROUND(CALIB_ORDER('Run 2'!A2:A13,'Run 2'!B2:B13),0)"
    other["A22"] = "=CALIB_INVERSE('Run 2'!A:A,'Run 2'!B:B,100)"
    wb.save(path)
    if vba:
        with zipfile.ZipFile(path, "a") as z:
            z.writestr("xl/vbaProject.bin", b"\xd0\xcf\x11\xe0 not a real project, never executed")
    return path


def entries(path):
    with zipfile.ZipFile(path) as z:
        return {i.filename: z.read(i) for i in z.infolist()}


def values(path, sheet, top_left, rows, cols):
    ws = openpyxl.load_workbook(path, data_only=True)[sheet]
    cell = ws[top_left]
    return [[ws.cell(cell.row + i, cell.column + j).value for j in range(cols)] for i in range(rows)]


def standards(path):
    """x and y as the workbook holds them (openpyxl writes 16 significant digits, so read them back)."""
    rows = values(path, "Run 2", "A2", 12, 2)
    return [[r[0]] for r in rows], [[r[1]] for r in rows]


def test_refresh_stores_what_the_functions_return(tmp_path):
    path = build(tmp_path / "book.xlsx")
    before = entries(path)
    report = refresh_file(path)
    assert report.error is None
    assert sorted(report.refreshed) == sorted(["'Run 2'!D1", "'Run 2'!D3", "'Run 2'!D10", "'Run 2'!K1",
                                               "Summary!A1", "Summary!H1", "Summary!A22"])
    assert report.left_alone == [("Summary!A20", "the formula mixes CALIB_* with other functions or operators")]
    xs, ys = standards(path)
    assert values(path, "Run 2", "D1", 1, 1) == [[degreewise.calib_order(xs, ys)]]
    assert values(path, "Run 2", "D3", 4, 7) == degreewise.calib_coefs(xs, ys, 2)
    assert values(path, "Run 2", "D10", 3, 6) == degreewise.calib_predict(xs, ys, xs[:3], 2, 0.9)
    assert values(path, "Summary", "A1", 9, 6) == [[v for v in r] + [None] * (6 - len(r))
                                                   for r in degreewise.calib_seqf(xs, ys)]
    stats = degreewise.calib_stats(xs, ys, 2)
    assert values(path, "Summary", "H1", len(stats), 2) == stats
    # whole columns carry the header text and every row of the sheet, exactly as the spreadsheet passes them
    assert values(path, "Summary", "A22", 1, 1) == [[
        "x, row 1 of 1048576: the text 'conc' is not a number; enter a number or clear the cell"]]
    # formulas unchanged, arrays marked dynamic
    wb = openpyxl.load_workbook(path)
    assert wb["Run 2"]["D1"].value == "=CALIB_ORDER(A2:A13,B2:B13)"
    assert wb["Run 2"]["D3"].value.text == "=CALIB_COEFS($A$2:$A$13,$B$2:$B$13,D1)"
    assert wb["Run 2"]["D3"].value.ref == "D3:J6"
    assert wb["Summary"]["A20"].value == "=ROUND(CALIB_ORDER('Run 2'!A2:A13,'Run 2'!B2:B13),0)"
    after = entries(path)
    changed = {n for n in after if before.get(n) != after[n]}
    # openpyxl already sets fullCalcOnLoad, so workbook.xml stays as it was
    assert b'fullCalcOnLoad="1"' in before["xl/workbook.xml"]
    assert changed == {"xl/worksheets/sheet1.xml", "xl/worksheets/sheet2.xml", "xl/metadata.xml",
                       "xl/_rels/workbook.xml.rels", "[Content_Types].xml"}
    assert set(before) - set(after) == set()
    assert b'fullCalcOnLoad="1"' in after["xl/workbook.xml"]
    assert b'<c r="D3" cm="1" t="str"><f t="array" ref="D3:J6">' in after["xl/worksheets/sheet1.xml"]
    assert b"XLDAPR" in after["xl/metadata.xml"]
    # a second refresh changes nothing at all
    assert not refresh_file(path, check=True).changed
    refresh_file(path)
    assert entries(path) == after


def test_only_changed_cells_differ_in_the_sheet_xml(tmp_path):
    path = build(tmp_path / "book.xlsx")
    before = entries(path)["xl/worksheets/sheet1.xml"].decode()
    refresh_file(path)
    after = entries(path)["xl/worksheets/sheet1.xml"].decode()
    head = before[: before.index("<sheetData>")]
    assert '<dimension ref="A1:K13"' in head and after.startswith(head)  # the results stay inside A1:K13
    assert after[after.index("</sheetData>"):] == before[before.index("</sheetData>"):]
    for row in ("<row r=\"2\">", "<row r=\"7\">", "<row r=\"13\">"):
        start = before.index(row)
        original_a = before[start: before.index("</c>", start) + 4]
        assert original_a in after


def test_xlsm_keeps_its_vba_project(tmp_path):
    path = build(tmp_path / "book.xlsm", vba=True)
    vba = entries(path)["xl/vbaProject.bin"]
    assert refresh_file(path).error is None
    assert entries(path)["xl/vbaProject.bin"] == vba


def _edit_formula(path, old, new):
    """Change a formula's text in the sheet XML, keeping its stored array range (as an edit in the program)."""
    sheet = entries(path)["xl/worksheets/sheet1.xml"].decode()
    assert old in sheet
    _rewrite(path, {"xl/worksheets/sheet1.xml": sheet.replace(old, new).encode()})


def test_results_that_grow_and_shrink(tmp_path):
    path = build(tmp_path / "book.xlsx")
    refresh_file(path)
    xs, ys = standards(path)
    _edit_formula(path, "CALIB_PREDICT(A2:A13,B2:B13,A2:A4,D1,0.9)", "CALIB_PREDICT(A2:A13,B2:B13,A2:A8,D1,0.9)")
    refresh_file(path)
    assert values(path, "Run 2", "D10", 7, 6) == degreewise.calib_predict(xs, ys, xs[:7], 2, 0.9)
    assert openpyxl.load_workbook(path)["Run 2"]["D10"].value.ref == "D10:I16"
    _edit_formula(path, "CALIB_PREDICT(A2:A13,B2:B13,A2:A8,D1,0.9)", "CALIB_PREDICT(A2:A13,B2:B13,A2:A3,D1,0.9)")
    refresh_file(path)
    got = values(path, "Run 2", "D10", 7, 6)
    assert got[:2] == degreewise.calib_predict(xs, ys, xs[:2], 2, 0.9)
    assert got[2:] == [[None] * 6] * 5
    assert openpyxl.load_workbook(path)["Run 2"]["D10"].value.ref == "D10:I11"


def _rewrite(path, replace):
    data = entries(path)
    data.update(replace)
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for name, content in data.items():
            z.writestr(name, content)


def test_blocked_result_overwrites_nothing(tmp_path):
    path = build(tmp_path / "book.xlsx")
    wb = openpyxl.load_workbook(path)
    wb["Run 2"]["F5"] = "my note"
    wb.save(path)
    report = refresh_file(path)
    assert report.blocked == [("'Run 2'!D3", "the result (4 x 7) would cover F5, which is not empty; "
                                           "nothing was overwritten")]
    assert values(path, "Run 2", "F5", 1, 1) == [["my note"]]
    assert values(path, "Run 2", "D3", 1, 1) == [["#SPILL!"]]
    assert not report.ok


def test_cycle_is_reported_not_looped(tmp_path):
    path = build(tmp_path / "book.xlsx")
    wb = openpyxl.load_workbook(path)
    ws = wb["Summary"]
    ws["P1"] = "=CALIB_ORDER('Run 2'!A2:A13,'Run 2'!B2:B13,Q1)"
    ws["Q1"] = "=CALIB_ORDER('Run 2'!A2:A13,'Run 2'!B2:B13,P1)"
    wb.save(path)
    report = refresh_file(path)
    reasons = dict(report.failed)
    assert set(reasons) == {"Summary!P1", "Summary!Q1"}
    assert reasons["Summary!P1"].startswith("circular reference: Summary!")
    assert "'Run 2'!D3" in report.refreshed


def test_check_writes_nothing_and_backup_keeps_the_original(tmp_path):
    path = build(tmp_path / "book.xlsx")
    original = path.read_bytes()
    report = refresh_file(path, check=True)
    assert report.changed and path.read_bytes() == original
    report = refresh_file(path, backup=True)
    assert report.backup.read_bytes() == original
    assert path.read_bytes() != original


def test_open_workbook_is_refused(tmp_path):
    path = build(tmp_path / "book.xlsx")
    (tmp_path / "~$book.xlsx").write_bytes(b"owner")
    original = path.read_bytes()
    report = refresh_file(path)
    assert report.error == ("the workbook is open in a spreadsheet program (~$book.xlsx is present); "
                            "close it and try again")
    assert path.read_bytes() == original
    assert lock_file(path).name == "~$book.xlsx"


def _bomb_xml():
    return (b'<?xml version="1.0"?><!DOCTYPE lolz [<!ENTITY lol "lol"><!ENTITY lol2 "&lol;&lol;&lol;">]>'
            b'<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>'
            b'<row r="1"><c r="A1" t="str"><v>&lol2;</v></c></row></sheetData></worksheet>')


@pytest.mark.parametrize("make,message", [
    (lambda p, good: p.write_bytes(b"just some text, not a workbook"), "not a workbook package (zip): "),
    (lambda p, good: p.write_bytes(good[: len(good) // 2]), "not a workbook package (zip): "),
    (lambda p, good: (p.write_bytes(good), _rewrite(p, {"xl/worksheets/sheet1.xml": _bomb_xml()})),
     "unsafe XML in xl/worksheets/sheet1.xml: "),
    (lambda p, good: (p.write_bytes(good), _rewrite(p, {"xl/junk.bin": b"\0" * (MAX_PART + 1)})),
     "part xl/junk.bin unpacks to"),
])
def test_hostile_or_broken_files_are_refused_untouched(tmp_path, make, message):
    good = build(tmp_path / "good.xlsx").read_bytes()
    path = tmp_path / "bad.xlsx"
    make(path, good)
    original = path.read_bytes()
    report = refresh_file(path)
    assert report.error.startswith(message)
    assert "\n" not in report.error
    assert path.read_bytes() == original
    assert run([str(path)]) == 1


def test_folders_are_searched_and_exit_code_reflects_success(tmp_path, capsys):
    (tmp_path / "a" / "b").mkdir(parents=True)
    build(tmp_path / "a" / "one.xlsx")
    book = build(tmp_path / "a" / "b" / "two.xlsx")
    wb = openpyxl.load_workbook(book)
    del wb["Summary"]["A20"]  # the formula left alone
    del wb["Summary"]["A22"]  # the formula whose result is a message
    wb.save(book)
    code = run([str(tmp_path)], jobs=2)
    out = capsys.readouterr().out
    assert f"{book}: 6 CALIB_* cells refreshed (0 with a message), 0 blocked, 0 left alone, 0 failed; " in out
    assert (f"{tmp_path / 'a' / 'one.xlsx'}: 7 CALIB_* cells refreshed (1 with a message), 0 blocked, 1 left alone, "
            "0 failed; ") in out
    assert out.endswith("2 workbooks: 2 read and computed, 0 not refreshed\n")
    assert code == 1
    assert run([str(book)]) == 0




@pytest.mark.skipif(shutil.which("soffice") is None, reason="LibreOffice (soffice) is not installed")
def test_a_spreadsheet_program_reads_the_cached_numbers(tmp_path):
    """LibreOffice, told not to recalculate on load, shows the values a refresh stored.

    LibreOffice 7.x recomputes matrix (array) formulas on load whatever it is told, and it
    has no CALIB_* functions, so it is the single-cell results whose cached values it shows.
    """
    path = build(tmp_path / "book.xlsx")
    refresh_file(path)
    rows = libreoffice_rows(path, tmp_path)
    xs, ys = standards(path)
    assert rows[0][3] == str(degreewise.calib_order(xs, ys)) == "2"
    assert rows[0][10] == degreewise.calib_version()
    for i in range(12):
        assert float(rows[i + 1][0]) == xs[i][0] and float(rows[i + 1][1]) == pytest.approx(ys[i][0], rel=1e-14)


@pytest.mark.parametrize("before,after", [
    ('<workbook xmlns="m"><sheets><sheet name="A"/></sheets><calcPr calcId="191029"/></workbook>',
     '<workbook xmlns="m"><sheets><sheet name="A"/></sheets><calcPr calcId="191029" fullCalcOnLoad="1"/></workbook>'),
    ('<workbook xmlns="m"><sheets><sheet name="A"/></sheets><definedNames><definedName name="n">A!$A$1'
     '</definedName></definedNames></workbook>',
     '<workbook xmlns="m"><sheets><sheet name="A"/></sheets><definedNames><definedName name="n">A!$A$1'
     '</definedName></definedNames><calcPr fullCalcOnLoad="1"/></workbook>'),
    ('<x:workbook xmlns:x="m"><x:sheets/></x:workbook>', '<x:workbook xmlns:x="m"><x:sheets/><x:calcPr fullCalcOnLoad="1"/></x:workbook>'),
])
def test_full_recalculation_flag_is_set_in_place(before, after):
    from degreewise.xlsx.package import set_full_calc_on_load

    declared = b"<?xml version='1.0' encoding='UTF-8' standalone='yes'?>\n"
    assert set_full_calc_on_load("workbook.xml", before.encode()) == declared + after.encode()
    assert set_full_calc_on_load("workbook.xml", after.encode()) == after.encode()  # already set: as it was


def test_filled_formulas_are_computed_with_their_references_moved(tmp_path):
    """A formula filled right is stored once (shared); each copy reads its own columns."""
    path = tmp_path / "filled.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Runs"
    y2 = 1.0 + 3.0 * X + RNG.normal(0, 0.2, X.size)
    for i, (a, b, c) in enumerate(zip(X, Y, y2), start=2):
        ws.cell(i, 1, float(a))
        ws.cell(i, 2, float(b))
        ws.cell(i, 3, float(c))
    ws["E1"] = "=CALIB_ORDER($A$2:$A$13,B2:B13)"
    ws["F1"] = "placeholder"
    wb.save(path)
    sheet = entries(path)["xl/worksheets/sheet1.xml"].decode()
    sheet = sheet.replace("<f>CALIB_ORDER($A$2:$A$13,B2:B13)</f>",
                          '<f t="shared" ref="E1:F1" si="0">CALIB_ORDER($A$2:$A$13,B2:B13)</f>')
    start = sheet.index('<c r="F1"')
    end = sheet.index("</c>", start) + 4
    sheet = sheet[:start] + '<c r="F1"><f t="shared" si="0"/></c>' + sheet[end:]
    _rewrite(path, {"xl/worksheets/sheet1.xml": sheet.encode()})
    report = refresh_file(path)
    assert sorted(report.refreshed) == ["Runs!E1", "Runs!F1"] and report.ok
    rows = values(path, "Runs", "A2", 12, 3)
    xs = [[r[0]] for r in rows]
    assert values(path, "Runs", "E1", 1, 2) == [[degreewise.calib_order(xs, [[r[1]] for r in rows]),
                                                 degreewise.calib_order(xs, [[r[2]] for r in rows])]]
    after = entries(path)["xl/worksheets/sheet1.xml"].decode()
    assert '<f t="shared" ref="E1:F1" si="0">CALIB_ORDER($A$2:$A$13,B2:B13)</f>' in after
    assert '<c r="F1"><f t="shared" si="0"/><v>1</v></c>' in after


def test_sheet_scoped_names_take_precedence(tmp_path):
    """A name defined for one sheet wins over the workbook-wide name of the same spelling there."""
    path = tmp_path / "names.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Lab A"
    other = wb.create_sheet("Lab B")
    for i, (a, b) in enumerate(zip(X, Y), start=2):
        ws.cell(i, 1, float(a))
        ws.cell(i, 2, float(b))
        other.cell(i, 1, float(a))
        other.cell(i, 2, float(3 * b + 1))
    wb.defined_names["resp"] = DefinedName("resp", attr_text="'Lab A'!$B$2:$B$13")
    other.defined_names.add(DefinedName("resp", attr_text="'Lab B'!$B$2:$B$13"))
    ws["D1"] = "=CALIB_COEFS($A$2:$A$13,resp,1)"
    other["D1"] = "=CALIB_COEFS($A$2:$A$13,resp,1)"
    wb.save(path)
    report = refresh_file(path)
    assert report.ok, report.lines()
    rows_a, rows_b = values(path, "Lab A", "A2", 12, 2), values(path, "Lab B", "A2", 12, 2)
    for sheet, rows in (("Lab A", rows_a), ("Lab B", rows_b)):
        xs, ys = [[r[0]] for r in rows], [[r[1]] for r in rows]
        assert values(path, sheet, "D1", 3, 7) == degreewise.calib_coefs(xs, ys, 1)


def _many_sheets(path: Path) -> Path:
    """Invented: five calibration sheets; 'Check' reads 'Cal 4' (so the two must be computed together);
    'Cal 5' has a blocked result and 'Check' a cycle."""
    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    for s in range(1, 6):
        ws = wb.create_sheet(f"Cal {s}")
        for i, (a, b) in enumerate(zip(X, Y * (1 + s / 10)), start=2):
            ws.cell(i, 1, float(a))
            ws.cell(i, 2, float(b))
        ws["D1"] = "=CALIB_ORDER(A2:A13,B2:B13)"
        ws["D3"] = "=CALIB_COEFS(A2:A13,B2:B13,D1)"
        ws["D10"] = "=CALIB_RESIDUALS(A2:A13,B2:B13,D1)"
    wb["Cal 5"]["E12"] = "in the way"
    check = wb.create_sheet("Check")
    check["A1"] = "=CALIB_STATS('Cal 4'!A2:A13,'Cal 4'!B2:B13,'Cal 4'!D1)"
    check["F1"] = "=CALIB_ORDER(A2:A13,F2:F13)"
    check["F2"] = "=CALIB_ORDER(A2:A13,F1:F13)"
    wb.save(path)
    return path


def test_sheets_split_over_processes_give_the_same_file_and_report(tmp_path, monkeypatch):
    from degreewise.workbook import processes

    monkeypatch.setattr(processes, "PARALLEL_FROM", 1)
    one = _many_sheets(tmp_path / "one.xlsx")
    three = Path(shutil.copy(one, tmp_path / "three.xlsx"))  # one build: openpyxl stamps the time it saved
    spools = tmp_path / "temporary"
    spools.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(spools))
    serial = refresh_file(one, workers=1)
    split = refresh_file(three, workers=3)
    assert list(spools.iterdir()) == []  # the parts put aside by each process are removed
    assert [c for c, _ in serial.blocked] == ["'Cal 5'!D10"]
    assert [c for c, _ in serial.failed] == ["Check!F1", "Check!F2"]
    assert {a for a, _, _, _ in serial.changes} == set(serial.refreshed) | {c for c, _ in serial.blocked}
    for name in ("refreshed", "messages", "changes", "blocked", "left_alone", "failed"):
        assert getattr(split, name) == getattr(serial, name)
    assert split.lines()[1:] == serial.lines()[1:]
    assert split.changed and serial.changed
    assert entries(three) == entries(one)


def test_changed_parts_are_put_aside_on_disk_and_read_back(tmp_path, monkeypatch):
    from degreewise.workbook.audit import Report
    from degreewise.workbook.compute import Refresher
    from degreewise.workbook.spool import Kept, Spooled
    from degreewise.xlsx.package import read_package

    spools = tmp_path / "temporary"
    spools.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(spools))
    _, parts = read_package(_many_sheets(tmp_path / "book.xlsx"))
    _, in_memory = read_package(tmp_path / "book.xlsx")
    expected, _ = Refresher(in_memory).run(Report(Path()))
    with Spooled(parts, spool=True) as spooled:
        changed, _ = Refresher(spooled).run(Report(Path()))
        sheets = [name for name in changed if name.startswith("xl/worksheets/")]
        assert len(sheets) == 6 and all(isinstance(parts[name], Kept) for name in sheets)
        assert {name: spooled[name] for name in changed} == expected
        assert [len(list(folder.iterdir())) for folder in spools.iterdir()] == [1]  # one process, one file
    assert list(spools.iterdir()) == []


def test_sheets_that_refer_to_each_other_share_a_process(tmp_path):
    from degreewise.workbook.compute import Refresher
    from degreewise.workbook.formula import parse_call
    from degreewise.workbook.processes import shares_of
    from degreewise.xlsx.package import read_package

    book = Refresher(read_package(_many_sheets(tmp_path / "book.xlsx"))[1])
    by_cell = {}
    for f in book.formulas:
        f.call = parse_call(f.text, f.sheet, book.book.names)
        by_cell[(f.sheet, f.row, f.col)] = f
    order = sorted(by_cell)
    shares = shares_of(order, by_cell, 3)
    assert len(shares) == 3 and sorted(k for s in shares for k in s) == order
    home = {k[0]: i for i, s in enumerate(shares) for k in s}
    assert home["Check"] == home["Cal 4"]
    assert all(s == sorted(s) for s in shares)  # each share keeps the order it was given


def test_a_sheet_reads_the_refreshed_cells_of_another(tmp_path):
    """Sheets are computed one after another and forgotten when done: 'Check' still reads the order that
    the refresh stored on 'Cal 4' (not the empty cell the file held), and every sheet's problems are reported."""
    path = _many_sheets(tmp_path / "book.xlsx")
    report = refresh_file(path)
    assert [c for c, _ in report.blocked] == ["'Cal 5'!D10"]
    assert [c for c, _ in report.failed] == ["Check!F1", "Check!F2"]
    assert {a for a, _, _, _ in report.changes} == set(report.refreshed) | {c for c, _ in report.blocked}
    rows = values(path, "Cal 4", "A2", 12, 2)
    xs, ys = [[r[0]] for r in rows], [[r[1]] for r in rows]
    order = degreewise.calib_order(xs, ys)
    assert values(path, "Cal 4", "D1", 1, 1) == [[order]]
    stats = degreewise.calib_stats(xs, ys, order)
    assert values(path, "Check", "A1", len(stats), 2) == stats


_BOMB_BODY = _bomb_xml().replace(b'<?xml version="1.0"?>', b"").decode("ascii")


@pytest.mark.parametrize("xml,message", [
    (b'<?xml version="1.0" encoding="UTF-8"?>' + _BOMB_BODY.encode(), "unsafe"),
    (('<?xml version="1.0" encoding="UTF-16"?>' + _BOMB_BODY).encode("utf-16"), "unsafe"),  # no ASCII bytes
    (b'<?xml version="1.0" encoding="cp037"?>' + _BOMB_BODY.encode("cp037"), "broken"),  # EBCDIC: not parsed
])
def test_entity_declarations_are_refused_in_any_encoding(xml, message):
    from degreewise.xlsx.package import PackageError, parse_xml

    with pytest.raises(PackageError, match=rf"^{message} XML in part\.xml: "):
        parse_xml("part.xml", xml)


class _Terminal(io.StringIO):
    def isatty(self):
        return True


def test_a_progress_bar_shows_on_a_terminal_for_several_workbooks(tmp_path, monkeypatch, capsys):
    build(tmp_path / "one.xlsx")
    monkeypatch.setattr(sys, "stderr", _Terminal())
    run([str(tmp_path / "one.xlsx")], jobs=1)
    assert sys.stderr.getvalue() == ""  # one workbook: no bar
    build(tmp_path / "two.xlsx")
    run([str(tmp_path)], jobs=1)
    assert "| 2/2 [" in sys.stderr.getvalue()
    assert "one.xlsx" in capsys.readouterr().out
