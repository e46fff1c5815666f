"""The calibration sheet's two native charts: standards, curve and prediction band; residuals (or the deviation
% of the back-calculated x for a weighted fit) against x. They read the spill ranges, so they follow a refresh."""

from __future__ import annotations

from openpyxl.chart import Reference, ScatterChart, Series
from openpyxl.utils import get_column_letter, range_boundaries

from .layout import EXCLUDED, GRID, LAYOUT, MARKER, cell_at, log_axes
from .scenarios import Scenario


def _series(ws, x_ref: str, y_ref: str, title, marker=False, dash=None):
    s = Series(Reference(ws, range_string=y_ref), Reference(ws, range_string=x_ref), title=title)
    if marker:  # filled markers, no line
        s.marker.symbol = "circle"
        s.marker.size = 6
        s.marker.graphicalProperties.solidFill = MARKER
        s.marker.graphicalProperties.line.solidFill = MARKER
        s.graphicalProperties.line.noFill = True
    else:
        s.marker.symbol = "none"
        s.smooth = False
        s.graphicalProperties.line.width = 19050  # 1.5 pt
        if dash:
            s.graphicalProperties.line.dashStyle = dash
    return s


def column_range(ws, anchor: str, offset: int, rows: int) -> str:
    """Absolute range of ``rows`` cells in the column ``offset`` to the right of ``anchor``."""
    top = cell_at(anchor, 0, offset)
    col, row, _, _ = range_boundaries(top)
    letter = get_column_letter(col)
    return f"'{ws.title}'!${letter}${row}:${letter}${row + rows - 1}"


def _chart(title: str, x_title: str, y_title: str, log: bool) -> ScatterChart:
    chart = ScatterChart()
    chart.title = title
    chart.style = 2
    chart.x_axis.title, chart.y_axis.title = x_title, y_title
    for axis in (chart.x_axis, chart.y_axis):
        axis.delete = False
        if log:
            axis.scaling.logBase = 10
    chart.x_axis.tickLblPos = "low"  # labels at the bottom, also when values go below zero
    chart.legend.position = "b"
    return chart


def runs_of(sc: Scenario) -> tuple[list, list]:
    """(first, count) of each run of consecutive standards the fit uses, and of the excluded ones."""
    out, runs = {i for i, _ in sc.excluded}, ([], [])
    for i in range(len(sc.x)):
        kind = runs[i in out]
        if kind and sum(kind[-1]) == i:
            kind[-1] = (kind[-1][0], kind[-1][1] + 1)
        else:
            kind.append((i, 1))
    return runs


def charts(ws, sc: Scenario, n: int) -> None:
    log = log_axes(sc)
    grid = column_range(ws, LAYOUT["grid"], 0, GRID)
    curve = _chart(f"{sc.title}: standards, fitted curve, prediction band" + (" (log axes)" if log else ""),
                   sc.x_label, sc.y_label, log)
    used, excluded = runs_of(sc)
    for first, count in used:
        curve.series.append(_series(ws, column_range(ws, cell_at("A2", first), 0, count),
                                    column_range(ws, cell_at("A2", first), 1, count), "standards", marker=True))
    for first, count in excluded:  # drawn apart, with a marker of its own: not part of the fit
        s = _series(ws, column_range(ws, cell_at("A2", first), 0, count), column_range(ws, cell_at("A2", first), 1, count),
                    "excluded standard", marker=True)
        s.marker.symbol = "x"
        s.marker.size = 8
        s.marker.graphicalProperties.solidFill = s.marker.graphicalProperties.line.solidFill = EXCLUDED
        curve.series.append(s)
    predict = LAYOUT["predict"]
    curve.series.append(_series(ws, grid, column_range(ws, predict, 0, GRID), "fitted"))
    curve.series.append(_series(ws, grid, column_range(ws, predict, 3, GRID), "prediction lower", dash="dash"))
    curve.series.append(_series(ws, grid, column_range(ws, predict, 4, GRID), "prediction upper", dash="dash"))
    curve.width, curve.height = 18, 9.5
    ws.add_chart(curve, LAYOUT["curve_chart"])
    # weighted fit: the deviation % of the back-calculated x (raw residuals fan out by design); else residuals
    column, label = (6, "deviation of back-calculated x (%)") if sc.weights else (1, "residual")
    # only the standards the fit uses: an excluded one's residual would set the scale
    resid = _chart(f"{label} against x" + (" (standards used by the fit)" if excluded else ""), sc.x_label, label,
                   False)
    if log:
        resid.x_axis.scaling.logBase = 10
    for first, count in used:
        resid.series.append(_series(ws, column_range(ws, cell_at("A2", first), 0, count),
                                    column_range(ws, cell_at(LAYOUT["residuals"], first), column, count), label,
                                    marker=True))
    resid.legend = None
    resid.width, resid.height = 18, 8
    ws.add_chart(resid, LAYOUT["residual_chart"])
