"""A workbook saved by LibreOffice Calc (tests/data/libreoffice-saved, made as its make.py says): refreshed,
refreshed again with nothing to change, frozen, and the frozen copy opened by openpyxl and by LibreOffice
with the values the CALIB_* functions return. LibreOffice stores the functions it does not know in lower
case with #NAME? values; spreadsheet function names are case-insensitive (common practice of every
spreadsheet program)."""

import importlib.util
import shutil
from pathlib import Path

import openpyxl
import pytest

import degreewise
from conftest import libreoffice_rows
from degreewise.commands.freeze import freeze
from degreewise.commands.refresh import refresh_file

SAVED = Path(__file__).parent / "data" / "libreoffice-saved"
_spec = importlib.util.spec_from_file_location("made", SAVED / "make.py")
MADE = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(MADE)


def _expected() -> dict[str, object]:
    """Cell -> value, from the functions called directly on the standards the workbook holds."""
    x, y = MADE.X, MADE.Y
    order = degreewise.calib_order(x, y)
    cells = {"D1": order}
    for i, row in enumerate(degreewise.calib_coefs(x, y, order)):
        for j, value in enumerate(row):
            cells[f"{'DEFGHIJ'[j]}{3 + i}"] = value
    for i, row in enumerate(degreewise.calib_inverse(x, y, [[r] for r in MADE.READINGS])):
        for j, value in enumerate(row):
            cells[f"{'DEFG'[j]}{8 + i}"] = value
    return cells


def _values(path: Path) -> dict[str, object]:
    ws = openpyxl.load_workbook(path, data_only=True)["Run 12"]
    return {cell: ws[cell].value for cell in _expected()}


@pytest.fixture
def refreshed(tmp_path) -> Path:
    path = tmp_path / "calibration.xlsx"
    shutil.copyfile(SAVED / "calibration.xlsx", path)
    report = refresh_file(path, workers=1)
    assert report.error is None and not (report.blocked or report.left_alone or report.failed)
    assert sorted(report.refreshed) == ["'Run 12'!D1", "'Run 12'!D3", "'Run 12'!D8"]
    return path


def test_a_libreoffice_workbook_is_refreshed_with_the_functions_values(refreshed):
    assert _values(refreshed) == _expected()
    again = refresh_file(refreshed, check=True, workers=1)
    assert again.error is None and not again.changes  # refreshed twice: nothing would change
    assert openpyxl.load_workbook(refreshed)["Notes"]["A1"].value == "prepared by the night shift"


def test_a_frozen_copy_of_a_libreoffice_workbook_opens_with_the_same_values(refreshed, tmp_path):
    out = tmp_path / "frozen.xlsx"
    assert freeze(refreshed, out).error is None
    assert _values(out) == _expected()
    formulas = openpyxl.load_workbook(out)["Run 12"]
    assert not any(isinstance(c.value, str) and c.value.startswith("=") for row in formulas.iter_rows() for c in row)


@pytest.mark.skipif(shutil.which("soffice") is None, reason="LibreOffice (soffice) is not installed")
def test_libreoffice_opens_the_frozen_copy_with_the_same_numbers(refreshed, tmp_path):
    out = tmp_path / "frozen.xlsx"
    assert freeze(refreshed, out).error is None
    rows = libreoffice_rows(out, tmp_path)
    expected = _expected()
    assert rows[0][3] == str(expected["D1"])
    for cell in ("E4", "E5", "F5", "E8", "F9"):
        row, col = int(cell[1:]) - 1, ord(cell[0]) - ord("A")
        assert float(rows[row][col]) == pytest.approx(expected[cell], rel=1e-14), cell  # CSV keeps 15 digits
    assert rows[2][3:6] == ["term", "coefficient", "std error"]
