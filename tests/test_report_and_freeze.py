"""`degreewise report` and `degreewise freeze`, checked on the committed demo workbooks.

The report's text is read back with poppler's pdftotext and its pages rendered
with pdftoppm (the tests skip without them); the frozen copy is opened by
LibreOffice when it is installed. Numbers in the report are compared with the
worksheet functions called directly on the standards (not through the report's
own code), formatted to the digits the report shows.
"""

import hashlib
import math
import re
import shutil
import subprocess
import zipfile
from pathlib import Path

import numpy
import openpyxl
import pytest
import scipy

import degreewise
from degreewise.catalogue import CAUTION_SENTENCE
from degreewise.commands import main
from degreewise.commands.freeze import freeze
from degreewise.commands.refresh import refresh_file
from degreewise.commands.report import write_report
from degreewise.commands.demo.scenarios import all_scenarios
from degreewise.workbook.sections import number
from conftest import workbook

FOLDER = Path(__file__).resolve().parent.parent / "workbooks"
SCENARIOS = {sc.name: sc for sc in all_scenarios()}
POPPLER = shutil.which("pdftotext") and shutil.which("pdftoppm") and shutil.which("pdfinfo")
needs_poppler = pytest.mark.skipif(not POPPLER, reason="poppler (pdftotext, pdftoppm) is not installed")
PAGE_WIDTH = {"a4": 595.2756, "letter": 612.0}  # points (ISO 216 and ANSI sizes)
PAGE_HEIGHT = {"a4": 841.8898, "letter": 792.0}


def words(text: str) -> str:
    return " ".join(text.split())


def pdf_text(path: Path, page: int | None = None) -> str:
    """The text of the PDF (or one page), each table row on one line (pdftotext -layout)."""
    pages = ["-f", str(page), "-l", str(page)] if page else []
    return subprocess.run(["pdftotext", "-layout", *pages, str(path), "-"], capture_output=True, text=True,
                          check=True).stdout


def page_count(path: Path) -> int:
    info = subprocess.run(["pdfinfo", str(path)], capture_output=True, text=True, check=True).stdout
    return int(re.search(r"^Pages:\s+(\d+)", info, re.M).group(1))


def standards(name):
    """x, y and the weighting of a demo calibration; the exclude column is applied by leaving those rows out
    (an excluded standard gives exactly the numbers of the calibration without it)."""
    sc = SCENARIOS[name]
    out = {i for i, _ in sc.excluded}
    kept = [i for i in range(len(sc.x)) if i not in out]
    return [[sc.x[i]] for i in kept], [[sc.y[i]] for i in kept], sc.weights


@pytest.fixture(scope="module")
def reports(tmp_path_factory):
    folder = tmp_path_factory.mktemp("reports")
    return {(name, paper): write_report(FOLDER / f"degreewise-demo-{name}.xlsx",
                                        folder / f"{name}-{paper}.pdf", paper)[0]
            for name in SCENARIOS for paper in ("a4", "letter")}


@needs_poppler
@pytest.mark.parametrize("paper", ["a4", "letter"])
@pytest.mark.parametrize("name", sorted(SCENARIOS))
def test_report_shows_what_the_functions_return(reports, name, paper):
    pdf = reports[name, paper]
    text = words(pdf_text(pdf))
    x, y, w = standards(name)
    order = degreewise.calib_order(x, y, None, None, None, w)
    assert order == SCENARIOS[name].expected_order
    assert re.search(rf"Chosen order: [A-Z][a-z]+!E1 =CALIB_ORDER\(.*? order {order} ", text)  # the cell, as stored
    stats = dict(degreewise.calib_stats(x, y, order, w)[1:])
    assert f"why this order {words(stats['why this order'])[:60]}" in text
    for term, b, se, t, p, lower, upper in degreewise.calib_coefs(x, y, order, None, w)[1:]:
        assert re.search(rf"{re.escape(term)} {re.escape(number(b, 10))} {re.escape(number(se))} ", text), term
    for row in degreewise.calib_seqf(x, y, None, w)[1:]:  # the sequential table, row by row
        assert " ".join(number(v) for v in row if v is not None) in text, row
    assert "prepared by name" in text and "reviewed by name" in text and text.count("date ___") >= 2
    assert f"Caution. {CAUTION_SENTENCE}" in text
    assert "numpy" in text and "scipy" in text and f"degreewise {degreewise.VERSION}" in text


@needs_poppler
@pytest.mark.parametrize("paper", ["a4", "letter"])
@pytest.mark.parametrize("name", sorted(SCENARIOS))
def test_report_pages_render_none_blank_nothing_beyond_the_margins(reports, name, paper, tmp_path):
    pdf = reports[name, paper]
    pages = page_count(pdf)
    assert pages == {"straight": 6}.get(name, 5)  # every CALIB_* cell, the 41-point prediction table too
    subprocess.run(["pdftoppm", "-r", "30", "-png", str(pdf), str(tmp_path / "p")], check=True)
    assert len(list(tmp_path.glob("p-*.png"))) == pages
    for page in range(1, pages + 1):
        body = [line for line in pdf_text(pdf, page).splitlines() if line.strip()]
        assert len(body) > 5, page  # more than the two footer lines
        assert f"page {page} of {pages}" in " ".join(body)
    bbox = subprocess.run(["pdftotext", "-bbox", str(pdf), "-"], capture_output=True, text=True, check=True).stdout
    lefts = [float(v) for v in re.findall(r'xMin="([\d.]+)"', bbox)]
    rights = [float(v) for v in re.findall(r'xMax="([\d.]+)"', bbox)]
    tops = [float(v) for v in re.findall(r'yMin="([\d.]+)"', bbox)]
    bottoms = [float(v) for v in re.findall(r'yMax="([\d.]+)"', bbox)]
    # at least 10 mm of white paper on every side (printers need about 5 mm), on either paper
    edge = 10 * 72 / 25.4
    assert min(lefts) >= edge and max(rights) <= PAGE_WIDTH[paper] - edge
    assert min(tops) >= edge and max(bottoms) <= PAGE_HEIGHT[paper] - edge


@needs_poppler
def test_a_long_table_repeats_its_header_on_every_page(tmp_path):
    """120 standards: the back-calculated table spans pages; each page it continues on starts with its header."""
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Long run"
    ws["A1"], ws["B1"] = "x (mg/L)", "y (AU)"
    for i in range(120):
        x = float(i % 12 + 1)
        ws.cell(i + 2, 1, x)
        ws.cell(i + 2, 2, 0.1 + 0.5 * x + 0.01 * ((i * 7919) % 13 - 6))
    ws["D1"] = "=CALIB_COEFS(A2:A121,B2:B121)"
    ws["L1"] = "=CALIB_RESIDUALS(A2:A121,B2:B121)"
    book = tmp_path / "long.xlsx"
    wb.save(book)
    pdf = write_report(book, tmp_path / "long.pdf")[0]
    pages = page_count(pdf)
    first = next(p for p in range(1, pages + 1) if "Back-calculated standards" in pdf_text(pdf, p))
    assert pages - first >= 2  # the table continues on at least two more pages
    for page in range(first + 1, pages + 1):
        lines = [line for line in pdf_text(pdf, page).splitlines() if line.strip()]
        assert lines[:2] == ["x", "y"] or "back-calculated" in " ".join(lines[:12]), page


def test_report_command_names_each_report_and_refuses_what_it_cannot_read(tmp_path, capsys):
    bad = tmp_path / "broken.xlsx"
    bad.write_bytes(b"not a zip")
    assert main(["report", str(FOLDER / "degreewise-demo-straight.xlsx"), str(bad), "--out", str(tmp_path)]) == 1
    out = capsys.readouterr().out
    assert f"report with 1 calibration written to {tmp_path / 'degreewise-demo-straight-report.pdf'}" in out
    assert f"{bad}: no report: not a workbook package (zip)" in out
    assert (tmp_path / "degreewise-demo-straight-report.pdf").read_bytes().startswith(b"%PDF-")


def sheet_parts_with_calib(path):
    with zipfile.ZipFile(path) as z:
        return {n for n in z.namelist() if n.startswith("xl/worksheets/") and b"CALIB_" in z.read(n)}


@pytest.mark.parametrize("name", sorted(SCENARIOS))
def test_freeze_keeps_values_and_every_other_part(name, tmp_path):
    book = tmp_path / "book.xlsx"
    shutil.copy(FOLDER / f"degreewise-demo-{name}.xlsx", book)
    assert refresh_file(book).error is None
    formula_parts = sheet_parts_with_calib(book)
    out = tmp_path / "frozen.xlsx"
    report = freeze(book, out)
    # the tables, labels, limits and, on the weighted sheet, the weighting comparison; on the probe's the
    # comparison and the acceptance sheet (acceptance, the uncertainty table and its labels)
    sc = SCENARIOS[name]
    assert report.error is None
    assert len(report.refreshed) == 13 + bool(sc.weights) + bool(sc.reference_y) + 3 * bool(sc.criteria)
    with zipfile.ZipFile(book) as a, zipfile.ZipFile(out) as b:
        assert a.namelist() == b.namelist()
        for n in a.namelist():
            if n not in formula_parts | {"docProps/core.xml"}:
                assert a.read(n) == b.read(n), n
        for n in formula_parts:
            assert not re.search(rb"<f[ >][^<]*CALIB_", b.read(n)), n
    before = openpyxl.load_workbook(book, data_only=True)
    after = openpyxl.load_workbook(out, data_only=True)  # the core properties read back: the dc prefix declared
    digest = hashlib.sha256(book.read_bytes()).hexdigest()  # the record names its source by hash (hashlib)
    assert re.match(rf"Frozen by Degreewise {re.escape(degreewise.VERSION)} \(numpy {numpy.__version__}, scipy "
                    rf"{scipy.__version__}\) on \d{{4}}-\d\d-\d\d \d\d:\d\d:\d\d [+-]\d{{4}} from book.xlsx, "
                    rf"SHA-256 {digest}: ", after.properties.description)
    assert after.properties.creator == before.properties.creator
    for ws in before.worksheets:
        got = after[ws.title]
        for row in ws.iter_rows():
            for c in row:
                assert got[c.coordinate].value == c.value, (ws.title, c.coordinate)
    formulas = openpyxl.load_workbook(out)
    assert not any(isinstance(c.value, str) and "CALIB_" in c.value and c.value.startswith("=")
                   for ws in formulas.worksheets for row in ws.iter_rows() for c in row)
    assert not any(type(c.value).__name__ == "ArrayFormula" for ws in formulas.worksheets for row in ws.iter_rows()
                   for c in row)


def test_freeze_refuses_to_overwrite_the_workbook(tmp_path, capsys):
    book = tmp_path / "book.xlsx"
    shutil.copy(FOLDER / "degreewise-demo-straight.xlsx", book)
    original = book.read_bytes()
    assert main(["freeze", str(book), str(book)]) == 1
    assert main(["freeze", str(book), str(tmp_path)]) == 1  # a folder: the same name in it, the book itself
    out = capsys.readouterr().out
    assert out.count(f"{book}: not frozen: {book} is the workbook itself; give another name for the frozen copy") == 2
    assert book.read_bytes() == original


def test_freeze_refuses_when_a_formula_cannot_be_computed(tmp_path, capsys):
    book = workbook(tmp_path / "mixed.xlsx", {1: [1, 2, 3, 4, 5], 2: [2.1, 3.9, 6.2, 7.8, 10.1]},
                    {"D1": "=ROUND(CALIB_ORDER(A1:A5,B1:B5),0)"})
    assert main(["freeze", str(book), str(tmp_path / "out.xlsx")]) == 1
    out = capsys.readouterr().out
    assert "not frozen: not every CALIB_* cell could be computed (listed below); nothing was written" in out
    assert "  left alone Sheet!D1: " in out
    assert not (tmp_path / "out.xlsx").exists()


@pytest.mark.skipif(not shutil.which("soffice"), reason="LibreOffice is not installed")
def test_libreoffice_shows_the_frozen_numbers(tmp_path):
    out = tmp_path / "frozen.xlsx"
    assert freeze(FOLDER / "degreewise-demo-weighted.xlsx", out).error is None
    subprocess.run(["soffice", f"-env:UserInstallation=file://{tmp_path}/profile", "--headless", "--convert-to",
                    "csv:Text - txt - csv (StarCalc):44,34,76,1,,0,false,true,false,false,false,-1",
                    "--outdir", str(tmp_path), str(out)], check=True, capture_output=True, timeout=180)
    text = (tmp_path / "frozen-Weighted.csv").read_text(encoding="utf-8")
    assert "#NAME?" not in text
    x, y, w = standards("weighted")
    rows = list(map(lambda line: line.split(","), text.splitlines()))
    coefs = degreewise.calib_coefs(x, y, 1, None, w)
    shown = {r[3]: r[4] for r in rows if len(r) > 4}
    for term, b, *_ in coefs[1:]:
        assert math.isclose(float(shown[term]), b, rel_tol=1e-12), term  # LibreOffice writes 15 digits
    picked = degreewise.calib_orders(x, y, None, None, w)[1][11]  # a text cell of a table, e.g. "stepdown, aicc"
    assert "," in picked and f'"{picked}"' in text


@needs_poppler
def test_limits_and_weighting_appear_with_the_workbooks_blank_readings(tmp_path):
    """The report shows CALIB_LIMITS evaluated with the blank readings the workbook's formula gives, and the
    weighting comparison where the workbook has CALIB_WEIGHTING (the weighted demo)."""
    book = FOLDER / "degreewise-demo-weighted.xlsx"
    text = words(pdf_text(write_report(book, tmp_path / "report.pdf")[0]))
    assert "Detection and quantitation limits" in text and "Weighting schemes compared" in text
    assert "DIN 32645 blank method; 6 readings" in text
    assert "Calibration 1: sheet 'Weighted'" in text and "Calibration 2" not in text  # WEIGHTING takes no weights
    straight = words(pdf_text(write_report(FOLDER / "degreewise-demo-straight.xlsx", tmp_path / "s.pdf")[0]))
    assert "Detection and quantitation limits" in straight and "Weighting schemes compared" not in straight


@needs_poppler
def test_report_shows_the_comparison_with_an_earlier_calibration(reports):
    text = words(pdf_text(reports["straight", "a4"]))
    wb = openpyxl.load_workbook(FOLDER / "degreewise-demo-straight.xlsx", data_only=True)
    same_curve = [c.value for c in wb["Compare"][2]][5:16]  # F2:P2, as the refresh stored them
    assert "Compared with an earlier calibration: Compare!F1" in text
    f, df_num, df_den, p, verdict = same_curve[6:11]  # F to 4 digits, its df, p to 3 digits
    assert f"same curve {number(f, 4)} {df_num} {df_den} {number(p, 3)} {verdict} F = " in text


@needs_poppler
def test_every_number_in_the_report_is_a_cell_of_the_workbook_with_its_own_settings(tmp_path):
    """A main calibration, side checks at other settings and a sheet of wrong formulas: each table names its
    cell, formula and settings, and every number printed is a value the refreshed workbook holds."""
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Run"
    ws["A1"], ws["B1"] = "conc", "signal"
    x = [1.0, 1.0, 2.0, 2.0, 5.0, 5.0, 10.0, 10.0, 20.0, 20.0, 40.0, 40.0]
    y = [17.3, 16.4, 28.8, 29.9, 64.1, 63.0, 117.2, 118.6, 211.0, 209.2, 367.1, 368.9]  # invented
    for i, (a, b) in enumerate(zip(x, y), start=2):
        ws.cell(i, 1, a)
        ws.cell(i, 2, b)
    ws["D1"] = "=CALIB_ORDER(A2:A13,B2:B13)"
    ws["D3"] = "=CALIB_COEFS(A2:A13,B2:B13,D1)"
    ws["D8"] = "=CALIB_STATS(A2:A13,B2:B13,D1)"
    ws["D40"] = "=CALIB_COEFS(A2:A13,B2:B13,1,0.99)"  # side checks at other settings
    ws["D45"] = "=CALIB_ORDERS(A2:A13,B2:B13,,0.2)"
    wrong = wb.create_sheet("Wrong")
    wrong["A1"] = '=CALIB_ORDER(Run!A2:A13,Run!B2:B13,,,"stepdwon")'
    wrong["A3"] = "=CALIB_ORDER(Run!A2:A13,Run!B2:B13,,5)"
    book = tmp_path / "side.xlsx"
    wb.save(book)
    pdf = write_report(book, tmp_path / "side.pdf")[0]
    text = pdf_text(pdf)
    flat = words(text)
    for cell, formula in (("Run!D3", "=CALIB_COEFS(A2:A13,B2:B13,D1)"), ("Run!D40", "=CALIB_COEFS(A2:A13,B2:B13,1,0.99)"),
                          ("Run!D45", "=CALIB_ORDERS(A2:A13,B2:B13,,0.2)"),
                          ("Wrong!A1", '=CALIB_ORDER(Run!A2:A13,Run!B2:B13,,,"stepdwon")')):
        assert f": {cell} {formula} Settings: " in flat, cell
    assert "Settings: order 1; level 0.99; weights none; exclude none" in flat
    order = degreewise.calib_order([[v] for v in x], [[v] for v in y])
    assert f"Settings: order 'Run'!D1 (= {order}); level 0.95 (default); weights none; exclude none" in flat
    assert "Settings: max order default; alpha 0.2; weights none; exclude none" in flat
    assert "rule stepdwon; weights none; exclude none The cell holds: rule 'stepdwon' is not known" in flat
    assert "alpha 5; rule stepdown (default); weights none; exclude none The cell holds: alpha must be" in flat
    refresh_file(book)
    held = openpyxl.load_workbook(book, data_only=True)
    allowed = set()
    for sheet in held.worksheets:
        for row in sheet.iter_rows():
            for c in row:
                if isinstance(c.value, (int, float)) and not isinstance(c.value, bool):
                    allowed |= {number(c.value, d) for d in range(3, 11)}
                elif isinstance(c.value, str):
                    allowed |= set(re.findall(r"-?\d[\d.]*(?:e[+-]?\d+)?", c.value))
    body = [line for line in text.splitlines() if not re.search(
        r"SHA-256|SHA256|Computed:|Workbook:|page \d+ of|Caution|Calibration \d|numpy", line)]
    for line in body:
        if re.match(r"\s*=CALIB_|\s*Settings:|\s*Standards:|\s*Charts \(|\s*[A-Z][a-z ]+\(?.*: (Run|Wrong)!", line):
            continue  # a formula, settings (the charts' too) or a title: references and typed numbers
        for token in re.findall(r"(?<![\w.!$:'])-?\d[\d.]*(?:e[+-]?\d+)?", line):
            assert token in allowed, (token, line)


@pytest.mark.parametrize("cell,p,frozen", [
    ('<c r="B2" s="3" t="str" cm="1"><f t="array" ref="B2">CALIB_VERSION()</f><v>a &amp; b</v></c>', "",
     '<c r="B2" s="3" t="inlineStr"><is><t xml:space="preserve">a &amp; b</t></is></c>'),
    ('<x:c r="B2" t="str"><x:f>CALIB_VERSION()</x:f><x:v>v</x:v></x:c>', "x:",
     '<x:c r="B2" t="inlineStr"><x:is><x:t xml:space="preserve">v</x:t></x:is></x:c>'),
    ('<c r="B2"><f>CALIB_ORDER(A1:A5,B1:B5)</f><v>2</v></c>', "", '<c r="B2"><v>2</v></c>'),
])
def test_a_frozen_cell_keeps_its_value_style_and_prefix(cell, p, frozen):
    """The formula and the dynamic-array mark go; a text value becomes an inline string (ECMA-376 §18.3.1.4)."""
    from degreewise.commands.freeze import frozen_cell

    assert frozen_cell(cell, p) == frozen


def test_report_on_a_missing_workbook_is_one_line(tmp_path, capsys, monkeypatch):
    """A path that does not exist: one line naming it, exit 1, no traceback (the error path once referred to a
    local list by the module's name)."""
    monkeypatch.chdir(tmp_path)
    assert main(["report", "nothere.xlsx"]) == 1
    assert capsys.readouterr().out == "nothere.xlsx: no report: No such file or directory (nothere.xlsx); nothing was changed\n"
