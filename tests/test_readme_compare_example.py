"""The README's example "Excluding a standard and comparing with last month" gives every number a reader
needs, and a workbook built from the README's own text refreshes to the numbers the README prints."""

import re
from pathlib import Path

import openpyxl

from degreewise.commands.refresh import refresh_file

README = (Path(__file__).parent.parent / "README.md").read_text(encoding="utf-8")
SECTION = README[README.index("### Excluding a standard and comparing with last month"):]
SECTION = SECTION[:SECTION.index("\n### ", 4)]


def _numbers(where: str) -> list[float]:
    """The twelve numbers the README gives in brackets after ``where``."""
    text = " ".join(SECTION.split())
    found = re.search(re.escape(where) + r" \(([^)]*)\)", text)
    assert found, f"the README gives no values for {where}"
    values = [float(v.strip(" *mgVL/")) for v in found.group(1).split(",")]
    assert len(values) == 12
    return values


def test_the_readme_compare_example_refreshes_to_the_printed_numbers(tmp_path):
    x, today, last = _numbers("x in A2:A13"), _numbers("today's signal in B2:B13"), _numbers("last month's in D2:D13")
    wb = openpyxl.Workbook()
    ws = wb.active
    for row, values in enumerate(zip(x, today, last), start=2):
        ws.cell(row, 1, values[0]), ws.cell(row, 2, values[1]), ws.cell(row, 4, values[2])
    ws["C7"] = "air bubble, inj. 3"
    ws["F1"] = "=CALIB_COMPARE(A2:A13,B2:B13,A2:A13,D2:D13,{10;80},,,,C2:C13)"
    ws["F20"] = "=CALIB_STATS(A2:A13,B2:B13,,,C2:C13)"
    ws["F50"] = "=CALIB_RESIDUALS(A2:A13,B2:B13,,,C2:C13)"
    ws["F70"] = "=CALIB_COEFS(A2:A13,B2:B13)"
    ws["F80"] = "=CALIB_COEFS(A2:A13,B2:B13,,,,C2:C13)"
    path = tmp_path / "example.xlsx"
    wb.save(path)
    report = refresh_file(path)
    assert (report.left_alone, report.failed, report.error) == ([], [], None)
    ws = openpyxl.load_workbook(path, data_only=True).active
    rows = {ws.cell(r, 6).value: [ws.cell(r, c).value for c in range(7, 18)] for r in range(1, 11)}
    # the README's figures, to the digits it prints
    assert rows["same curve"][10].startswith("F = 0.1145 on 2 and 19 df") and round(rows["same curve"][8], 2) == 0.89
    assert round(rows["same curve"][5], 4) == 0.1145 and rows["same curve"][6:8] == [2, 19]  # F and df in cells
    assert round(rows["same shape"][8], 2) == 0.65 and round(rows["same residual SD"][8], 2) == 0.96
    assert {rows[k][9] for k in ("same curve", "same shape", "same residual SD")} == {"ok"}
    assert rows["x"][10].startswith("+0.093")
    assert rows["at x = 80"][10].endswith("reads today's response as x = 80.0413")
    assert (ws["F21"].value, ws["G21"].value, ws["F23"].value, ws["G23"].value) == (
        "points used", 11, "points excluded", 1)
    assert ws["G24"].value == "standard 6 of 12, x = 25, y = 0.4: air bubble, inj. 3"
    excluded = [ws.cell(55, c).value for c in range(6, 14)]
    assert (round(excluded[0], 5), round(excluded[5], 3), round(excluded[6], 1), excluded[7]) == (
        0.49938, 19.998, -20.0, "excluded: air bubble, inj. 3")
    assert (round(ws["G71"].value, 4), round(ws["H71"].value, 4)) == (-0.0109, 0.0136)
    assert (round(ws["G81"].value, 5), round(ws["H81"].value, 5)) == (0.00262, 0.00162)
