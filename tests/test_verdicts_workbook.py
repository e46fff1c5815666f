"""CALIB_ACCEPTANCE and CALIB_UNCERTAINTY in workbooks: the refresh (a criteria set named in the formula), the
demo probe's Acceptance sheet as committed, its report and its printout."""

import math
import shutil
import subprocess
from pathlib import Path

import openpyxl
import pytest

import degreewise
from degreewise.commands.demo.layout import exclude_cells
from degreewise.commands.refresh import refresh_file
from degreewise.commands.report import write_report
from degreewise.commands.demo.scenarios import straight_probe
from degreewise.workbook.sections import sections, summary

BOOK = Path(__file__).resolve().parent.parent / "workbooks" / "degreewise-demo-straight.xlsx"
X = [1.0, 1.0, 2.0, 2.0, 5.0, 5.0, 10.0, 10.0, 20.0, 20.0, 50.0, 50.0, 100.0, 100.0]
Y = [0.051, 0.049, 0.102, 0.099, 0.251, 0.248, 0.502, 0.497, 1.21, 0.996, 2.51, 2.49, 4.98, 5.03]


def same(got, want):
    """Cell by cell; numbers to 1e-11 relative (other CPU kernels round the last digits differently)."""
    if isinstance(want, float):
        return isinstance(got, (int, float)) and math.isclose(got, want, rel_tol=1e-11, abs_tol=1e-13)
    if isinstance(want, list):
        return isinstance(got, list) and len(got) == len(want) and all(map(same, got, want))
    return got == want


def block(ws, top, left, rows, cols):
    return [[ws.cell(top + i, left + j).value for j in range(cols)] for i in range(rows)]


def test_the_refresh_computes_a_named_criteria_set_and_a_second_refresh_changes_nothing(tmp_path):
    wb = openpyxl.Workbook()
    ws = wb.active
    for i, (a, b) in enumerate(zip(X, Y), start=2):
        ws.cell(i, 1, a)
        ws.cell(i, 2, b)
    ws["C2"] = 0.3
    ws["D1"] = '=CALIB_ACCEPTANCE(A2:A15,B2:B15,"ICH M10 chromatographic",,"1/x^2")'
    ws["D40"] = "=CALIB_UNCERTAINTY(A2:A15,B2:B15,C2,2,,,\"1/x^2\")"
    path = tmp_path / "run.xlsx"
    wb.save(path)
    assert refresh_file(path).ok
    column = [[v] for v in X], [[v] for v in Y]
    want = degreewise.calib_acceptance(*column, "ICH M10 chromatographic", None, "1/x^2")
    want_u = degreewise.calib_uncertainty(*column, 0.3, 2, None, None, "1/x^2")
    got = openpyxl.load_workbook(path, data_only=True).active
    assert same(block(got, 1, 4, len(want), 7), want)
    assert same(block(got, 40, 4, 1, 7), want_u)
    assert [r[5] for r in want if r[0] == "verdict"] == ["acceptable"]  # weighted 1/x^2, standard 9 fails
    assert [r[5] for r in want if r[0] == "standard 9 of 14"] == ["fail"]
    before = path.read_bytes()
    assert refresh_file(path).ok and path.read_bytes() == before


def test_the_probe_workbook_shows_a_verdict_with_a_failing_standard_and_the_samples_uncertainty():
    sc = straight_probe()
    x, y, e = [[v] for v in sc.x], [[v] for v in sc.y], exclude_cells(sc)
    want = degreewise.calib_acceptance(x, y, [[v] for v in sc.criteria], None, None, e)
    ws = openpyxl.load_workbook(BOOK, data_only=True)["Acceptance"]
    assert same(block(ws, 1, 4, len(want), 7), want)
    assert [r[0] for r in want if r[5] == "fail"] == ["standard 4 of 13"]
    assert [r[5] for r in want if r[0] in ("verdict", "could exclude 1")] == ["acceptable", "then acceptable"]
    at = len(want) + 3
    assert ws.cell(at, 4).value == "x estimate"  # CALIB_LABELS("uncertainty")
    want_u = degreewise.calib_uncertainty(x, y, [[v] for v in sc.samples], None, None, None, None, e)
    assert same(block(ws, at + 1, 4, len(sc.samples), 7), want_u)
    assert block(ws, at + 1, 1, len(sc.samples), 1) == [[v] for v in sc.samples]
    formulas = openpyxl.load_workbook(BOOK)["Acceptance"]
    assert formulas["D1"].value.text.startswith(
        "=CALIB_ACCEPTANCE('Straight'!$A$2:$A$14,'Straight'!$B$2:$B$14,$B$2:$B$5")


def test_the_printout_and_the_report_carry_the_verdict(tmp_path):
    found, _ = sections(BOOK)
    lines = "\n".join(line for s in found for line in summary(s))
    assert ("acceptance under custom (Acceptance!D1): acceptable: every criterion of the set is met (curve of "
            "order 1, the order the default rule picks)") in lines
    assert "failing: standard 4 of 13; could exclude: standard 4 of 13 (then acceptable)" in lines
    if not shutil.which("pdftotext"):
        pytest.skip("poppler is not installed")
    pdf = write_report(BOOK, tmp_path / "r.pdf")[0]
    text = " ".join(subprocess.run(["pdftotext", str(pdf), "-"], capture_output=True, text=True,
                                   check=True).stdout.split())
    assert "Acceptance of the run under a criteria set: Acceptance!D1" in text
    assert "Standard uncertainty of the samples read back: Acceptance!D25" in text
    assert "Settings: criteria 'Acceptance'!B2:B5; order chosen by the stepdown rule (default)" in text
