"""The refresh on workbooks as the desktop spreadsheet program saves them.

tests/data/desktop-saved holds 29 workbooks saved by the desktop program (XlsxWriter's comparison files, with
their licence). Each test copies one, writes invented calibration data and CALIB_* cells into its sheet XML as
text (so every other part stays exactly as the program saved it), refreshes, and checks. Cases the program saves
but those files do not show (a chartsheet before a worksheet, strict namespaces, broken parts) are built with
openpyxl and then edited the same way.
"""

import os
import re
import shutil
import zipfile
from pathlib import Path
from xml.etree import ElementTree

import numpy as np
import openpyxl
import pytest
from openpyxl.chart import Reference, ScatterChart, Series
from openpyxl.workbook.defined_name import DefinedName

import degreewise
from degreewise.commands.refresh import refresh_file, run
from conftest import libreoffice_rows

DESKTOP = Path(__file__).parent / "data" / "desktop-saved"
BOOKS = sorted(p.name for p in DESKTOP.glob("*.xls[xm]"))
MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
RELS = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"

RNG = np.random.default_rng(1606)
X = np.repeat([0.5, 1.0, 2.5, 5.0, 10.0, 20.0], 2)  # invented standards, in duplicate
Y = 0.8 + 4.1 * X + 0.03 * X**2 + RNG.normal(0, 0.15, X.size)
XS, YS = [[float(v)] for v in X], [[float(v)] for v in Y]


# ---------------------------------------------------------------- editing a saved file as text

def entries(path):
    with zipfile.ZipFile(path) as z:
        return {i.filename: z.read(i) for i in z.infolist()}


def rewrite(path, replace):
    """The zip with some parts replaced; every other part's bytes as they were."""
    with zipfile.ZipFile(path) as z:
        items = [(i, z.read(i)) for i in z.infolist()]
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for info, data in items:
            z.writestr(info, replace.get(info.filename, data))


def first_sheet(path):
    """(name, part) of the workbook's first worksheet, read with the standard library."""
    parts = entries(path)
    book = ElementTree.fromstring(parts["xl/workbook.xml"])
    rels = {r.get("Id"): r.get("Target") for r in ElementTree.fromstring(parts["xl/_rels/workbook.xml.rels"])}
    for sh in book.iter(f"{{{MAIN}}}sheet"):
        target = rels[sh.get(f"{{{RELS}}}id")].lstrip("/")
        target = target if target.startswith("xl/") else "xl/" + target
        if "worksheets/" in target:
            return sh.get("name"), target
    raise AssertionError("no worksheet")


def inject(xml: str, cells: dict[str, str]) -> str:
    """Sheet XML with cells (reference -> <c> element) added at the end of their rows, rows created in order."""
    by_row: dict[int, list] = {}
    for ref, cell in cells.items():
        by_row.setdefault(int(re.search(r"\d+", ref).group()), []).append(cell)
    if "<sheetData/>" in xml:
        xml = xml.replace("<sheetData/>", "<sheetData></sheetData>")
    for r in sorted(by_row):
        body = "".join(by_row[r])
        m = re.search(rf'<row r="{r}"[^>]*?(/?)>', xml)
        if m and m.group(1):
            xml = xml[: m.start()] + m.group(0)[:-2] + ">" + body + "</row>" + xml[m.end():]
        elif m:
            end = xml.index("</row>", m.end())
            xml = xml[:end] + body + xml[end:]
        else:
            later = [k for k in re.finditer(r'<row r="(\d+)"', xml) if int(k.group(1)) > r]
            at = later[0].start() if later else xml.index("</sheetData>")
            xml = xml[:at] + f'<row r="{r}">{body}</row>' + xml[at:]
    return xml


def number(ref, v):
    return f'<c r="{ref}"><v>{v!r}</v></c>'


def formula(ref, text, extra=""):
    return f'<c r="{ref}"{extra}><f>{text.replace("&", "&amp;").replace("<", "&lt;")}</f></c>'


def standards(col_x="AA", col_y="AB", first=2):
    cells = {}
    for i, (a, b) in enumerate(zip(X, Y)):
        cells[f"{col_x}{first + i}"] = number(f"{col_x}{first + i}", float(a))
        cells[f"{col_y}{first + i}"] = number(f"{col_y}{first + i}", float(b))
    return cells


def desktop_copy(tmp_path, name, cells, part=None):
    path = Path(shutil.copy(DESKTOP / name, tmp_path / name))
    part = part or first_sheet(path)[1]
    rewrite(path, {part: inject(entries(path)[part].decode(), cells).encode()})
    return path


def values(path, sheet, top_left, rows, cols):
    ws = openpyxl.load_workbook(path, data_only=True)[sheet]
    cell = ws[top_left]
    return [[ws.cell(cell.row + i, cell.column + j).value for j in range(cols)] for i in range(rows)]


CALIB_CELLS = {"AD1": formula("AD1", "CALIB_ORDER(AA2:AA13,AB2:AB13)"),
               "AD3": formula("AD3", "CALIB_COEFS($AA$2:$AA$13,$AB$2:$AB$13,AD1)")}


# ---------------------------------------------------------------- every saved file

@pytest.mark.parametrize("name", BOOKS)
def test_every_desktop_saved_workbook_refreshes_and_keeps_the_rest(tmp_path, name):
    path = desktop_copy(tmp_path, name, {**standards(), **CALIB_CELLS})
    sheet, part = first_sheet(path)
    before = entries(path)
    report = refresh_file(path)
    assert report.ok and report.written, report.lines()
    order = degreewise.calib_order(XS, YS)
    assert values(path, sheet, "AD1", 1, 1) == [[order]]
    assert values(path, sheet, "AD3", order + 2, 7) == degreewise.calib_coefs(XS, YS, order)
    after = entries(path)
    touched = {part, "xl/workbook.xml", "xl/metadata.xml", "xl/_rels/workbook.xml.rels", "[Content_Types].xml"}
    assert {n for n in before if before[n] != after[n]} <= touched
    assert set(after) - set(before) <= {"xl/metadata.xml"}
    old, new = before[part].decode(), after[part].decode()
    strip = lambda xml: re.sub(r'<dimension ref="[^"]*"/>', "", xml)  # noqa: E731
    assert strip(new[new.index("</sheetData>"):]) == strip(old[old.index("</sheetData>"):])
    assert strip(new[: new.index("<sheetData")]) == strip(old[: old.index("<sheetData")])
    # a second refresh finds nothing to do and leaves the file alone: bytes and modification time
    stamp = path.stat().st_mtime_ns
    os.utime(path, ns=(stamp - 10**9, stamp - 10**9))
    again = refresh_file(path)
    assert not again.changed and not again.written and again.ok
    assert again.lines()[0].endswith("nothing changed, the file was left as it was")
    assert entries(path) == after and path.stat().st_mtime_ns == stamp - 10**9


# ---------------------------------------------------------------- 1: sheet-scoped names and chartsheets

def test_sheet_scoped_name_counts_chartsheets_in_workbook_order(tmp_path):
    """localSheetId indexes every sheet of the workbook (ECMA-376 Part 1, 18.2.5): with a chartsheet first,
    index 1 is the first worksheet."""
    path = tmp_path / "scoped.xlsx"
    wb = openpyxl.Workbook()
    lab_a = wb.active
    lab_a.title = "Lab A"
    lab_b = wb.create_sheet("Lab B")
    for i, (a, b) in enumerate(zip(X, Y), start=2):
        lab_a.cell(i, 1, float(a)), lab_a.cell(i, 2, float(b))
        lab_b.cell(i, 1, float(a)), lab_b.cell(i, 2, float(3 * b + 1))
    chart = ScatterChart()
    chart.series.append(Series(Reference(lab_a, min_col=2, min_row=2, max_row=13),
                               Reference(lab_a, min_col=1, min_row=2, max_row=13)))
    wb.create_chartsheet("Overview", 0).add_chart(chart)
    wb.defined_names["resp"] = DefinedName("resp", attr_text="'Lab B'!$B$2:$B$13")
    lab_a.defined_names.add(DefinedName("resp", attr_text="'Lab A'!$B$2:$B$13"))
    lab_a["D1"] = "=CALIB_COEFS($A$2:$A$13,resp,1)"
    lab_b["D1"] = "=CALIB_COEFS($A$2:$A$13,resp,1)"
    wb.save(path)
    # openpyxl counts worksheets only; the program counts every sheet, so Lab A's scope is index 1
    book = entries(path)["xl/workbook.xml"].decode()
    root = ElementTree.fromstring(book)
    main = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"
    assert [s.get("name") for s in root.iter(main + "sheet")][0] == "Overview"
    assert {d.get("localSheetId"): d.text for d in root.iter(main + "definedName")}["0"] == "'Lab A'!$B$2:$B$13"
    rewrite(path, {"xl/workbook.xml": book.replace('localSheetId="0"', 'localSheetId="1"').encode()})
    report = refresh_file(path)
    assert report.ok, report.lines()
    stored = {s: values(path, s, "A2", 12, 2) for s in ("Lab A", "Lab B")}  # openpyxl keeps 16 digits
    coefs = {s: degreewise.calib_coefs([[r[0]] for r in rows], [[r[1]] for r in rows], 1)
             for s, rows in stored.items()}
    assert coefs["Lab A"] != coefs["Lab B"]
    for s in ("Lab A", "Lab B"):
        assert values(path, s, "D1", 3, 7) == coefs[s]


def test_a_name_scoped_to_no_sheet_is_refused(tmp_path):
    path = desktop_copy(tmp_path, "defined_name02.xlsx", {**standards(), **CALIB_CELLS})
    book = entries(path)["xl/workbook.xml"].decode().replace('<definedName name="Sales">',
                                                             '<definedName name="Sales" localSheetId="x">')
    rewrite(path, {"xl/workbook.xml": book.encode()})
    original = path.read_bytes()
    report = refresh_file(path)
    assert report.error == ("the defined name 'Sales' in xl/workbook.xml has the sheet scope 'x', which is not a "
                            "sheet of the workbook")
    assert path.read_bytes() == original


# ---------------------------------------------------------------- 2: permissions and links

@pytest.mark.parametrize("mode", [0o644, 0o664])
def test_mode_is_kept(tmp_path, mode):
    path = desktop_copy(tmp_path, "format11.xlsx", {**standards(), **CALIB_CELLS})
    path.chmod(mode)
    assert refresh_file(path).written
    assert path.stat().st_mode & 0o7777 == mode


def test_read_only_workbook_is_refused(tmp_path):
    path = desktop_copy(tmp_path, "format11.xlsx", {**standards(), **CALIB_CELLS})
    path.chmod(0o444)
    original = path.read_bytes()
    report = refresh_file(path)
    assert report.error == "the workbook is read-only; make it writable to refresh it"
    assert path.read_bytes() == original and path.stat().st_mode & 0o777 == 0o444
    assert refresh_file(path, check=True).error is None  # checking writes nothing, so it may read


def test_a_symlink_refreshes_its_target(tmp_path):
    real = desktop_copy(tmp_path, "format11.xlsx", {**standards(), **CALIB_CELLS})
    link = tmp_path / "link.xlsx"
    link.symlink_to(real)
    assert refresh_file(link).written
    assert link.is_symlink() and os.readlink(link) == str(real)
    assert values(real, "Sheet1", "AD1", 1, 1) == [[degreewise.calib_order(XS, YS)]]


def test_a_hard_link_is_refused(tmp_path):
    path = desktop_copy(tmp_path, "format11.xlsx", {**standards(), **CALIB_CELLS})
    os.link(path, tmp_path / "other.xlsx")
    original = path.read_bytes()
    report = refresh_file(path)
    assert report.error == ("the workbook has 2 hard links, which a refresh would separate; refresh a copy, "
                            "or remove the other links")
    assert path.read_bytes() == original and path.stat().st_nlink == 2


# ---------------------------------------------------------------- 3: strict Open XML

def test_strict_open_xml_is_refused_with_exit_1(tmp_path, capsys):
    path = tmp_path / "strict.xlsx"
    wb = openpyxl.Workbook()
    for i, (a, b) in enumerate(zip(X, Y), start=2):
        wb.active.cell(i, 1, float(a)), wb.active.cell(i, 2, float(b))
    wb.active["D1"] = "=CALIB_ORDER(A2:A13,B2:B13)"
    wb.save(path)
    strict = {n: d.replace(MAIN.encode(), b"http://purl.oclc.org/ooxml/spreadsheetml/main")
              .replace(b"http://schemas.openxmlformats.org/officeDocument/2006/relationships",
                       b"http://purl.oclc.org/ooxml/officeDocument/relationships")
              for n, d in entries(path).items()}
    rewrite(path, strict)
    original = path.read_bytes()
    assert run([str(path)]) == 1
    assert capsys.readouterr().out == (f"{path}: not refreshed: the workbook is saved as Strict Open XML, which the "
                                       "refresh does not edit; save it as an ordinary .xlsx (or .xlsm) workbook "
                                       "and try again\n")
    assert path.read_bytes() == original


# ---------------------------------------------------------------- 4: spills the program would block

def test_spill_into_merged_cells_is_blocked(tmp_path):
    """merge_range02 merges B2:D6 (cells B3:D6 hold only a style): a table anchored at A5 would land under it."""
    path = desktop_copy(tmp_path, "merge_range02.xlsx",
                        {**standards(), "A5": formula("A5", "CALIB_COEFS(AA2:AA13,AB2:AB13,2)")})
    report = refresh_file(path)
    assert report.blocked == [("Sheet1!A5", "the result (4 x 7) would spill into the merged cells B2:D6, where the "
                                            "spreadsheet program does not allow a spilled result; nothing was written")]
    assert values(path, "Sheet1", "A5", 4, 7) == [["#SPILL!"] + [None] * 6] + [[None] * 7] * 3
    sheet = entries(path)["xl/worksheets/sheet1.xml"].decode()
    assert '<c r="A5" t="e"><f>CALIB_COEFS(AA2:AA13,AB2:AB13,2)</f><v>#SPILL!</v></c>' in sheet
    assert '<c r="B5" s="1"/><c r="C5" s="1"/><c r="D5" s="1"/>' in sheet


def test_spill_across_a_table_is_blocked(tmp_path):
    """table02's Sheet1 holds Table1 at B3:E11 (empty body): a table anchored at A5 would cross it."""
    path = desktop_copy(tmp_path, "table02.xlsx", {**standards(),
                                                   "A5": formula("A5", "CALIB_COEFS(AA2:AA13,AB2:AB13,2)"),
                                                   "L1": formula("L1", "CALIB_ORDER(AA2:AA13,AB2:AB13)")})
    report = refresh_file(path)
    assert report.blocked == [("Sheet1!A5", "the result (4 x 7) would spill into the table Table1 B3:E11, where "
                                            "the spreadsheet program does not allow a spilled result; nothing was "
                                            "written")]
    assert report.refreshed == ["Sheet1!L1"]


@pytest.mark.parametrize("anchor,message,dimension", [
    ("XFA1", "the result (4 x 7) would reach beyond the sheet's last column XFD; nothing was written", "B1:XFA13"),
    ("A1048574", "the result (4 x 7) would reach beyond the sheet's last row 1048576; nothing was written",
     "A2:AB1048574"),
])
def test_spill_beyond_the_sheet_edge_is_blocked(tmp_path, anchor, message, dimension):
    path = desktop_copy(tmp_path, "format11.xlsx",
                        {**standards(), anchor: formula(anchor, "CALIB_COEFS(AA2:AA13,AB2:AB13,2)")})
    report = refresh_file(path)
    assert report.blocked == [(f"Sheet1!{anchor}", message)]
    sheet = entries(path)["xl/worksheets/sheet1.xml"].decode()
    assert f'<dimension ref="{dimension}"/>' in sheet
    assert f'<c r="{anchor}" t="e"><f>CALIB_COEFS(AA2:AA13,AB2:AB13,2)</f><v>#SPILL!</v></c>' in sheet


# ---------------------------------------------------------------- 5: the dynamic-array form is kept

def _dynamic_anchor(tmp_path):
    path = desktop_copy(tmp_path, "format11.xlsx", {**standards(), **CALIB_CELLS})
    refresh_file(path)
    sheet = entries(path)["xl/worksheets/sheet1.xml"].decode()
    assert re.search(r'<c r="AD3" cm="1" t="str"><f t="array" ref="AD3:AJ6">', sheet)
    return path


def test_a_blocked_dynamic_array_keeps_its_form(tmp_path):
    path = _dynamic_anchor(tmp_path)
    sheet = entries(path)["xl/worksheets/sheet1.xml"].decode()
    rewrite(path, {"xl/worksheets/sheet1.xml": inject(sheet, {"AE7": number("AE7", 1.5)}).encode()})
    sheet = entries(path)["xl/worksheets/sheet1.xml"].decode()
    sheet = sheet.replace("CALIB_COEFS($AA$2:$AA$13,$AB$2:$AB$13,AD1)", "CALIB_COEFS($AA$2:$AA$13,$AB$2:$AB$13,3)")
    rewrite(path, {"xl/worksheets/sheet1.xml": sheet.encode()})
    report = refresh_file(path)
    assert [c for c, _ in report.blocked] == ["Sheet1!AD3"]
    sheet = entries(path)["xl/worksheets/sheet1.xml"].decode()
    assert ('<c r="AD3" cm="1" t="e"><f t="array" ref="AD3">CALIB_COEFS($AA$2:$AA$13,$AB$2:$AB$13,3)</f>'
            "<v>#SPILL!</v></c>") in sheet


def test_a_one_cell_message_keeps_the_dynamic_array_form(tmp_path):
    path = _dynamic_anchor(tmp_path)
    sheet = entries(path)["xl/worksheets/sheet1.xml"].decode()
    sheet = sheet.replace("CALIB_COEFS($AA$2:$AA$13,$AB$2:$AB$13,AD1)", "CALIB_COEFS($AA$2:$AA$13,$AB$2:$AB$13,0)")
    rewrite(path, {"xl/worksheets/sheet1.xml": sheet.encode()})
    report = refresh_file(path)
    message = degreewise.calib_coefs(XS, YS, 0)[0][0]
    assert message == "order must be at least 1, not 0" and report.messages == [("Sheet1!AD3", message)]
    assert not report.ok
    sheet = entries(path)["xl/worksheets/sheet1.xml"].decode()
    assert re.search(r'<c r="AD3" cm="1" t="str"><f t="array" ref="AD3">CALIB_COEFS\(\$AA\$2:\$AA\$13,'
                     r'\$AB\$2:\$AB\$13,0\)</f><v>', sheet)
    assert '<c r="AE4"' not in sheet  # the old table's other cells are cleared


# ---------------------------------------------------------------- 6: a metadata part without the record

def test_dynamic_array_record_is_merged_into_existing_metadata(tmp_path):
    """embed_image02 keeps an in-cell picture: its metadata part has only a rich-value record (valueMetadata)."""
    path = desktop_copy(tmp_path, "embed_image02.xlsx", {**standards(), **CALIB_CELLS})
    before = entries(path)["xl/metadata.xml"].decode()
    report = refresh_file(path)
    assert report.ok, report.lines()
    after = entries(path)["xl/metadata.xml"].decode()
    # every original record is still there byte for byte, in order
    for piece in re.findall(r"<metadataType .*?/>|<futureMetadata .*?</futureMetadata>|<valueMetadata .*?"
                            r"</valueMetadata>", before):
        assert piece in after
    assert '<metadataTypes count="2">' in after and 'name="XLDAPR"' in after
    assert '<cellMetadata count="1"><bk><rc t="2" v="0"/></bk></cellMetadata><valueMetadata' in after
    assert '<c r="AD3" cm="1" t="str">' in entries(path)["xl/worksheets/sheet1.xml"].decode()
    assert '<c r="A1" t="e" vm="1">' in entries(path)["xl/worksheets/sheet1.xml"].decode()
    ElementTree.fromstring(after)  # well-formed
    assert values(path, "Sheet1", "AD3", 4, 7) == degreewise.calib_coefs(XS, YS, 2)


# ---------------------------------------------------------------- 7: broken parts

def _broken(tmp_path, edit):
    path = desktop_copy(tmp_path, "shared_strings02.xlsx", {**standards(), **CALIB_CELLS})
    parts = entries(path)
    rewrite(path, edit(parts))
    return path


@pytest.mark.parametrize("edit,message", [
    (lambda p: {"xl/worksheets/sheet1.xml": p["xl/worksheets/sheet1.xml"].decode().replace(
        'encoding="UTF-8"', 'encoding="UTF-16"').encode("utf-16")},
     "part xl/worksheets/sheet1.xml is not UTF-8 text; the refresh edits only UTF-8 parts (save the workbook "
     "again in a spreadsheet program)"),
    (lambda p: {"xl/worksheets/sheet1.xml": p["xl/worksheets/sheet1.xml"].replace(
        b'<c r="A1" t="s"><v>0</v>', b'<c r="A1" t="s"><v>99</v>')},
     "part xl/worksheets/sheet1.xml has a cell (A1) that refers to shared text '99', but the workbook has 14"),
    (lambda p: {"xl/worksheets/sheet1.xml": p["xl/worksheets/sheet1.xml"].replace(b'<c r="A2"', b'<c r="2A"')},
     "part xl/worksheets/sheet1.xml has a cell at '2A', which is not a cell reference"),
])
def test_broken_parts_get_a_one_line_refusal(tmp_path, edit, message):
    path = _broken(tmp_path, edit)
    original = path.read_bytes()
    report = refresh_file(path)
    assert report.error == message
    assert path.read_bytes() == original


def test_a_utf16_workbook_part_is_edited_as_a_tree_and_written_as_utf8(tmp_path):
    """workbook.xml is edited with lxml, which reads any declared encoding; sheets are edited in place and
    must be UTF-8 (above)."""
    path = _broken(tmp_path, lambda p: {"xl/workbook.xml": p["xl/workbook.xml"].decode().replace(
        'encoding="UTF-8"', 'encoding="UTF-16"').encode("utf-16")})
    report = refresh_file(path)
    assert report.error is None and not report.failed
    assert entries(path)["xl/workbook.xml"].startswith(b"<?xml version='1.0' encoding='UTF-8' standalone='yes'?>")
    assert openpyxl.load_workbook(path).sheetnames == ["Sheet1"]


def test_two_parts_of_one_name_are_refused(tmp_path):
    path = desktop_copy(tmp_path, "format11.xlsx", {**standards(), **CALIB_CELLS})
    with pytest.warns(UserWarning, match="Duplicate name"), zipfile.ZipFile(path, "a") as z:
        z.writestr("xl/worksheets/sheet1.xml", b"<worksheet/>")
    report = refresh_file(path)
    assert report.error == "the package holds two parts named xl/worksheets/sheet1.xml; refusing an ambiguous file"


@pytest.mark.parametrize("jobs", [1, 2])
def test_a_folder_with_one_broken_workbook(tmp_path, capsys, jobs):
    for name in ("format11.xlsx", "comment02.xlsx"):
        desktop_copy(tmp_path, name, {**standards(), **CALIB_CELLS})
    broken = _broken(tmp_path, lambda p: {"xl/worksheets/sheet1.xml": p["xl/worksheets/sheet1.xml"].replace(
        b'<c r="A2"', b'<c r="2A"')})
    assert run([str(tmp_path)], jobs=jobs) == 1
    out = capsys.readouterr().out.splitlines()
    assert f"{broken}: not refreshed: part xl/worksheets/sheet1.xml has a cell at '2A', which is not a cell " \
           "reference" in out
    for name in ("format11.xlsx", "comment02.xlsx"):
        head = next(line for line in out if line.startswith(str(tmp_path / name)))
        assert head.startswith(f"{tmp_path / name}: 2 CALIB_* cells refreshed (0 with a message), 0 blocked, 0 left "
                               "alone, 0 failed; ")
        assert values(tmp_path / name, "Sheet1", "AD1", 1, 1) == [[degreewise.calib_order(XS, YS)]]
    assert out[-1] == f"3 workbooks: 2 read and computed, 1 not refreshed: {broken}"


# ---------------------------------------------------------------- 8: odd sheet names

def test_sheet_names_with_brackets_quotes_and_commas(tmp_path):
    """quote_name02 has sheets Sheet'1, S'heet'2, Sheet(3, Sheet)4, Sheet+5, Sheet,6 ... (the program's own)."""
    path = Path(shutil.copy(DESKTOP / "quote_name02.xlsx", tmp_path / "q.xlsx"))
    rewrite(path, {"xl/worksheets/sheet3.xml": inject(entries(path)["xl/worksheets/sheet3.xml"].decode(),
                                                      standards()).encode()})
    cells = {"AD1": formula("AD1", "CALIB_ORDER('Sheet(3'!AA2:AA13,'Sheet(3'!AB2:AB13)"),
             "AD2": formula("AD2", "CALIB_ORDER('Sheet(3'!AA2:AA13,'Sheet(3'!AB2:AB13,,0.01)"),
             "AD3": formula("AD3", "CALIB_ORDER('Sheet(3'!AA2:AA13,'Sheet(3'!AB2:AB13,'S''heet''2'!AD1)")}
    for part in ("xl/worksheets/sheet4.xml", "xl/worksheets/sheet2.xml", "xl/worksheets/sheet6.xml"):
        rewrite(path, {part: inject(entries(path)[part].decode(), cells).encode()})
    report = refresh_file(path)
    assert report.ok, report.lines()
    assert sorted(report.refreshed) == sorted(f"{s}!AD{i}" for s in ("'S''heet''2'", "'Sheet)4'", "'Sheet,6'")
                                              for i in (1, 2, 3))
    order = degreewise.calib_order(XS, YS)
    for sheet in ("S'heet'2", "Sheet)4", "Sheet,6"):
        assert values(path, sheet, "AD1", 3, 1) == [[order], [degreewise.calib_order(XS, YS, None, 0.01)],
                                                     [order]]


@pytest.mark.parametrize("name", ['Sheet"4', "Run (2", "a)b", "x, y", "it's (2)", "Tab )(", "A1"])
def test_unbalanced_sheet_names_are_read(tmp_path, name):
    path = tmp_path / "odd.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = name
    for i, (a, b) in enumerate(zip(X, Y), start=2):
        ws.cell(i, 1, float(a)), ws.cell(i, 2, float(b))
    quoted = "'" + name.replace("'", "''") + "'"
    other = wb.create_sheet("Results")
    other["A1"] = f"=CALIB_ORDER({quoted}!A2:A13,{quoted}!B2:B13)"
    other["A2"] = f'=CALIB_INVERSE({quoted}!A2:A13,{quoted}!B2:B13,"20")'
    ws["D1"] = f"=CALIB_ORDER({quoted}!A2:A13,B2:B13)"  # the name once: an odd count of its quotes or brackets
    wb.save(path)
    report = refresh_file(path)
    assert sorted(report.refreshed) == sorted([f"{quoted}!D1", "Results!A1", "Results!A2"]), report.lines()
    assert not report.left_alone
    rows = values(path, name, "A2", 12, 2)
    order = degreewise.calib_order([[r[0]] for r in rows], [[r[1]] for r in rows])
    assert values(path, "Results", "A1", 1, 1) == values(path, name, "D1", 1, 1) == [[order]]


# ---------------------------------------------------------------- 10: backups, the audit trail, messages

def test_backups_are_never_refreshed(tmp_path, capsys):
    path = desktop_copy(tmp_path, "format11.xlsx", {**standards(), **CALIB_CELLS})
    original = path.read_bytes()
    assert run([str(tmp_path)], backup=True, jobs=1) == 0
    backups = list(tmp_path.glob("format11.before-refresh-*.xlsx"))
    assert len(backups) == 1 and backups[0].read_bytes() == original
    sheet = entries(path)["xl/worksheets/sheet1.xml"].decode()  # a standard re-run: new values to refresh
    sheet = sheet.replace(f'<c r="AB5"><v>{float(Y[3])!r}</v></c>', f'<c r="AB5"><v>{float(Y[3]) + 0.5!r}</v></c>')
    rewrite(path, {"xl/worksheets/sheet1.xml": sheet.encode()})
    capsys.readouterr()
    run([str(tmp_path)], backup=True, jobs=1)
    heads = [line for line in capsys.readouterr().out.splitlines() if not line.startswith("  ")]
    assert len(heads) == 1 and heads[0].startswith(f"{path}: 2 CALIB_* cells refreshed")
    assert len(list(tmp_path.glob("*.before-refresh-*"))) == 2
    assert backups[0].read_bytes() == original
    assert refresh_file(backups[0]).error == "this is a backup kept by an earlier refresh; backups are never refreshed"


def test_check_lists_every_changed_cell_with_old_and_new_values(tmp_path, capsys):
    path = desktop_copy(tmp_path, "format11.xlsx", {**standards(), **CALIB_CELLS})
    refresh_file(path)
    sheet = entries(path)["xl/worksheets/sheet1.xml"].decode()
    y_new = list(Y)
    y_new[3] += 0.5
    sheet = sheet.replace(f'<c r="AB5"><v>{float(Y[3])!r}</v></c>', f'<c r="AB5"><v>{float(y_new[3])!r}</v></c>')
    rewrite(path, {"xl/worksheets/sheet1.xml": sheet.encode()})
    original = path.read_bytes()
    order = degreewise.calib_order(XS, YS)
    old = degreewise.calib_coefs(XS, YS, order)
    new = degreewise.calib_coefs(XS, [[v] for v in y_new], order)
    assert degreewise.calib_order(XS, [[v] for v in y_new]) == order
    changed = [(i, j) for i in range(order + 2) for j in range(7) if old[i][j] != new[i][j]]
    assert run([str(path)], check=True) == 0
    out = capsys.readouterr().out.splitlines()
    assert path.read_bytes() == original
    listed = "; ".join(f"A{'DEFGHIJ'[j]}{3 + i} {old[i][j]:.6g} -> {new[i][j]:.6g}" for i, j in changed)
    assert out == [
        f"{path}: 2 CALIB_* cells computed (0 with a message), 0 blocked, 0 left alone, 0 failed; "
        f"{len(changed)} cell values would change",
        f"  would change Sheet1!AD3 (result {order + 2} x 7), {len(changed)} cells: {listed}",
    ]
    assert run([str(path)]) == 0
    assert capsys.readouterr().out.splitlines()[1] == out[1].replace("would change", "changed")
    assert run([str(path)], check=True) == 0
    assert capsys.readouterr().out.splitlines() == [
        f"{path}: 2 CALIB_* cells computed (0 with a message), 0 blocked, 0 left alone, 0 failed; "
        "nothing would change"]


def test_a_workbook_of_messages_is_not_a_success(tmp_path, capsys):
    cells = {**standards(), "AA5": '<c r="AA5" t="inlineStr"><is><t>n.d.</t></is></c>', **CALIB_CELLS}
    path = desktop_copy(tmp_path, "format11.xlsx", cells)
    assert run([str(path)]) == 1
    out = capsys.readouterr().out.splitlines()
    bad = [[v[0]] for v in XS]
    bad[3] = ["n.d."]
    message = degreewise.calib_order(bad, YS)
    assert out[0] == (f"{path}: 2 CALIB_* cells refreshed (2 with a message), 0 blocked, 0 left alone, 0 failed; "
                      "2 cell values changed")
    assert f"  message Sheet1!AD1: {message}" in out and f"  message Sheet1!AD3: {message}" in out


# ---------------------------------------------------------------- the program's own dynamic formula cells

def test_cells_the_program_saved_stay_as_they_were(tmp_path):
    """dynamic_array03 and array_formula04 hold formulas of the program's own; they are never touched."""
    for name in ("dynamic_array03.xlsx", "array_formula04.xlsx"):
        path = desktop_copy(tmp_path, name, {**standards(), **CALIB_CELLS})
        before = entries(path)["xl/worksheets/sheet1.xml"].decode()
        refresh_file(path)
        after = entries(path)["xl/worksheets/sheet1.xml"].decode()
        for cell in re.findall(r'<c r="[A-Z]{1,2}\d+"[^>]*>(?:(?!</c>).)*<f[ >].*?</c>', before):
            if "CALIB_" not in cell:
                assert cell in after


# ---------------------------------------------------------------- LibreOffice opens the result



@pytest.mark.skipif(shutil.which("soffice") is None, reason="LibreOffice (soffice) is not installed")
def test_libreoffice_opens_a_refreshed_workbook_with_merged_cells_and_a_table(tmp_path):
    """table02 (three tables) with a merged block written into Sheet2 and a blocked spill across Table1:
    LibreOffice, told not to recalculate, opens it and shows the stored single-cell result and the merge."""
    path = desktop_copy(tmp_path, "table02.xlsx", {**standards(),
                                                   "A5": formula("A5", "CALIB_COEFS(AA2:AA13,AB2:AB13,2)"),
                                                   "L1": formula("L1", "CALIB_ORDER(AA2:AA13,AB2:AB13)"),
                                                   "L3": formula("L3", "CALIB_COEFS(AA2:AA13,AB2:AB13,L1)")})
    sheet = entries(path)["xl/worksheets/sheet1.xml"].decode()
    sheet = sheet.replace("</sheetData>", '</sheetData><mergeCells count="1"><mergeCell ref="U1:V2"/></mergeCells>')
    sheet = inject(sheet, {"U1": '<c r="U1" t="inlineStr"><is><t>merged note</t></is></c>'})
    rewrite(path, {"xl/worksheets/sheet1.xml": sheet.encode()})
    report = refresh_file(path)
    assert [c for c, _ in report.blocked] == ["Sheet1!A5"] and sorted(report.refreshed) == ["Sheet1!L1", "Sheet1!L3"]
    rows = libreoffice_rows(path, tmp_path)
    order = degreewise.calib_order(XS, YS)
    assert rows[0][11] == str(order) and rows[0][20] == "merged note"
    assert float(rows[1][26]) == X[0] and float(rows[1][27]) == pytest.approx(Y[0], rel=1e-14)


@pytest.mark.parametrize("name", BOOKS)
def test_a_frozen_copy_of_every_desktop_saved_workbook_opens_with_the_same_values(tmp_path, name):
    """freeze on the files the desktop program saved: the copy opens in openpyxl with every value of the
    refreshed workbook, and no CALIB_* formula is left."""
    from degreewise.commands.freeze import freeze

    path = desktop_copy(tmp_path, name, {**standards(), **CALIB_CELLS})
    assert refresh_file(path).ok
    out = tmp_path / "frozen.xlsx"
    assert freeze(path, out).error is None
    live, frozen = (openpyxl.load_workbook(p, data_only=True, keep_vba=True) for p in (path, out))
    for ws in live.worksheets:
        got = frozen[ws.title]
        assert [[c.value for c in row] for row in got.iter_rows()] == [[c.value for c in row] for row in ws.iter_rows()]
    formulas = openpyxl.load_workbook(out, keep_vba=True)
    stored = [getattr(c.value, "text", c.value) for ws in formulas.worksheets for row in ws.iter_rows() for c in row]
    assert not any(isinstance(v, str) and v.startswith("=") and "CALIB_" in v.upper() for v in stored)
