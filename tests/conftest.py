"""Shared test helpers, one of each: the NIST StRD reference data (its one copy, udfs/reference, read as
``degreewise validate`` reads it), ranges as the desktop runtime hands them over (``column``), fresh
worksheet caches (``fresh_caches``), invented workbooks (``workbook``), and LibreOffice's view of a
workbook."""

from __future__ import annotations

import subprocess
from pathlib import Path

import numpy as np
import openpyxl
import pytest

from degreewise.commands.validate import load as load_strd  # noqa: F401  (x, y, certified values)
from degreewise.prepared import clear_caches


def column(values) -> list[list]:
    """A column as the desktop runtime hands it over: one-cell rows (a numpy array's values as Python
    numbers)."""
    if isinstance(values, np.ndarray):
        values = values.tolist()
    return [[v] for v in values]


@pytest.fixture
def fresh_caches():
    """Empties the worksheet layer's caches, so that each test computes its own tables (a module uses it with
    ``pytestmark = pytest.mark.usefixtures("fresh_caches")``)."""
    clear_caches()


def workbook(path: Path, columns: dict, cells: dict = {}, title: str | None = None, first_row: int = 1) -> Path:
    """An invented workbook saved at ``path``, one sheet (named ``title``): each of ``columns`` (column number ->
    values; None leaves a cell blank) from ``first_row`` down, and ``cells`` (address -> value or formula)."""
    wb = openpyxl.Workbook()
    ws = wb.active
    if title:
        ws.title = title
    for col, values in columns.items():
        for row, v in enumerate(values, start=first_row):
            if v is not None:
                ws.cell(row, col, v)
    for address, value in cells.items():
        ws[address] = value
    wb.save(path)
    return path


@pytest.fixture
def replicated():
    """Invented replicated calibration: 8 levels x 3, mildly curved, seeded."""
    rng = np.random.default_rng(4242)
    x = np.repeat(np.linspace(1.0, 50.0, 8), 3)
    y = 2.0 + 3.0 * x + 0.01 * x**2 + rng.normal(0.0, 1.0, x.size)
    return x, y


NEVER_RECALCULATE = """<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry" xmlns:xs="http://www.w3.org/2001/XMLSchema">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="OOXMLRecalcMode" oor:op="fuse">
<value>1</value></prop></item></oor:items>
"""


def libreoffice_rows(path: Path, work: Path) -> list[list[str]]:
    """The first sheet of the workbook at ``path`` as LibreOffice shows it when told not to recalculate on
    load (its CSV export, in a fresh profile under ``work``), one list of cell texts per row."""
    profile = work / "profile"
    (profile / "user").mkdir(parents=True)
    (profile / "user" / "registrymodifications.xcu").write_text(NEVER_RECALCULATE)
    out = work / "csv"
    subprocess.run(["soffice", f"-env:UserInstallation={profile.as_uri()}", "--headless", "--convert-to", "csv",
                    "--outdir", str(out), str(path)], check=True, capture_output=True, timeout=300)
    return [line.split(",") for line in (out / f"{path.stem}.csv").read_text().splitlines()]
