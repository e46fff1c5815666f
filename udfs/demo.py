"""The demo workbooks: invented calibrations laid out with CALIB_* formulas and native charts.

One workbook per scenario (see ``scenarios``). Each calibration sheet holds the
standards, the order choice, the tables, the aligned residuals and a fine-grid
prediction spill with CALIB_LABELS headers, and two scatter charts that read
the spill ranges (curve with prediction band; residuals against x), so they
follow a refresh. The weighted scenario adds unknown samples read back with
CALIB_INVERSE. A first sheet states the scenario and the cautions.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
from openpyxl import Workbook
from openpyxl.chart import Reference, ScatterChart, Series
from openpyxl.styles import Font

from .labels import CAUTION
from .scenarios import Scenario, all_scenarios

GRID = 41  # points of the fine x grid for the fitted curve

# where each block sits on a calibration sheet (anchor cells); tables spill right and down
LAYOUT = {
    "order": "E1", "orders": "D3", "seqf": "D10", "coefs": "D22", "stats": "D30", "checks": "D51",
    "residuals": "Q2", "grid": "Z2", "predict": "AA2", "samples": "AH2", "inverse": "AI2", "charts": "D64",
}


def _args(sc: Scenario, n: int) -> tuple[str, str, str]:
    x, y = f"$A$2:$A${n + 1}", f"$B$2:$B${n + 1}"
    w = f'"{sc.weights}"' if sc.weights else ""
    return x, y, w


def _formula(name: str, *args: str) -> str:
    while args and args[-1] == "":
        args = args[:-1]
    return f"={name}({','.join(args)})"


def calibration_sheet(wb: Workbook, sc: Scenario):
    ws = wb.create_sheet(sc.name.capitalize())
    n = len(sc.x)
    bold = Font(bold=True)
    ws["A1"], ws["B1"] = sc.x_label, sc.y_label
    ws["A1"].font = ws["B1"].font = bold
    for i, (a, b) in enumerate(zip(sc.x, sc.y), start=2):
        ws.cell(i, 1, a)
        ws.cell(i, 2, b)
    x, y, w = _args(sc, n)
    order = "$E$1"
    ws["D1"] = "chosen order"
    ws["D1"].font = bold
    ws[LAYOUT["order"]] = _formula("CALIB_ORDER", x, y, "", "", "", w)
    ws[LAYOUT["orders"]] = _formula("CALIB_ORDERS", x, y, "", "", w)
    ws[LAYOUT["seqf"]] = _formula("CALIB_SEQF", x, y, "", w)
    ws[LAYOUT["coefs"]] = _formula("CALIB_COEFS", x, y, order, "", w)
    ws[LAYOUT["stats"]] = _formula("CALIB_STATS", x, y, order, w)
    ws[LAYOUT["checks"]] = _formula("CALIB_CHECKS", x, y, order, "", w)
    ws["Q1"] = '=CALIB_LABELS("residuals")'
    ws[LAYOUT["residuals"]] = _formula("CALIB_RESIDUALS", x, y, order, w)
    ws["Z1"] = "x grid"
    ws["Z1"].font = bold
    grid = np.linspace(min(sc.x), max(sc.x), GRID)
    for i, v in enumerate(grid, start=2):
        ws.cell(i, 26, float(v))
    ws["AA1"] = '=CALIB_LABELS("predict")'
    ws[LAYOUT["predict"]] = _formula("CALIB_PREDICT", x, y, f"$Z$2:$Z${GRID + 1}", order, "", w)
    if sc.samples:
        ws["AH1"] = "sample reading"
        ws["AH1"].font = bold
        for i, v in enumerate(sc.samples, start=2):
            ws.cell(i, 34, v)
        ws["AI1"] = '=CALIB_LABELS("inverse")'
        ws[LAYOUT["inverse"]] = _formula("CALIB_INVERSE", x, y, f"$AH$2:$AH${len(sc.samples) + 1}", "", order, "",
                                         w)
    _charts(ws, sc, n)
    return ws


def _series(ws, x_col, y_col, first, last, title, marker=False, dash=None):
    s = Series(Reference(ws, min_col=y_col, min_row=first, max_row=last),
               Reference(ws, min_col=x_col, min_row=first, max_row=last), title=title)
    if marker:
        s.marker.symbol = "circle"
        s.graphicalProperties.line.noFill = True
    else:
        s.marker.symbol = "none"
        s.smooth = False
        if dash:
            s.graphicalProperties.line.dashStyle = dash
    return s


def _charts(ws, sc: Scenario, n: int) -> None:
    curve = ScatterChart()
    curve.title = f"{sc.title}: standards, fitted curve and prediction band"
    curve.style = 13
    curve.x_axis.title, curve.y_axis.title = sc.x_label, sc.y_label
    curve.series.append(_series(ws, 1, 2, 2, n + 1, "standards", marker=True))
    last = GRID + 1
    curve.series.append(_series(ws, 26, 27, 2, last, "fitted"))            # AA: predicted y
    curve.series.append(_series(ws, 26, 30, 2, last, "prediction lower", dash="dash"))  # AD
    curve.series.append(_series(ws, 26, 31, 2, last, "prediction upper", dash="dash"))  # AE
    curve.width, curve.height = 18, 10
    ws.add_chart(curve, LAYOUT["charts"])
    resid = ScatterChart()
    resid.title = "residuals against x"
    resid.style = 13
    resid.x_axis.title, resid.y_axis.title = sc.x_label, "residual"
    resid.series.append(_series(ws, 1, 18, 2, n + 1, "residual", marker=True))  # R: residual
    resid.width, resid.height = 18, 8
    ws.add_chart(resid, "P64")


def about_sheet(wb: Workbook, sc: Scenario) -> None:
    ws = wb.active
    ws.title = "About"
    lines = [
        ("Degreewise demo workbook", True),
        (sc.title, True),
        (sc.story, False),
        ("The data are invented for this demonstration (seeded random numbers); no real instrument or sample.", False),
        (f"Weights: {sc.weights or 'none'}. The calibration sheet holds every CALIB_* function; "
         "'degreewise refresh' recomputes them without a spreadsheet program.", False),
        ("Caution: " + CAUTION, True),
    ]
    for i, (text, strong) in enumerate(lines, start=1):
        ws.cell(i, 1, text).font = Font(bold=strong)
    ws.column_dimensions["A"].width = 110


def build(sc: Scenario, path: Path) -> Path:
    wb = Workbook()
    about_sheet(wb, sc)
    calibration_sheet(wb, sc)
    wb.save(path)
    return path


def write_demo(folder: Path) -> list[Path]:
    """Write every demo workbook into ``folder`` and refresh it; return the paths."""
    from .refresh import refresh_file

    folder.mkdir(parents=True, exist_ok=True)
    paths = []
    for sc in all_scenarios():
        path = build(sc, folder / f"degreewise-demo-{sc.name}.xlsx")
        report = refresh_file(path)
        if not report.ok:
            raise RuntimeError("\n".join(report.lines()))
        paths.append(path)
    return paths
