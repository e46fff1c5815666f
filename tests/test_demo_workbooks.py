"""The committed demo workbooks, `degreewise demo` and `degreewise validate`."""

import math
import re
import zipfile
from pathlib import Path

import openpyxl
import pytest
from openpyxl.utils import get_column_letter

import degreewise
from degreewise.catalogue import CAUTION_SENTENCE
from degreewise.commands import main
from degreewise.commands.demo.charts import runs_of
from degreewise.commands.demo.formats import P_FORMAT, shown
from degreewise.commands.demo.layout import GRID, LAYOUT, limits_anchors, samples_anchor
from degreewise.commands.refresh import refresh_file
from degreewise.commands.demo.scenarios import all_scenarios
from degreewise.engine.words import fmt_p

FOLDER = Path(__file__).resolve().parent.parent / "workbooks"
SCENARIOS = {sc.name: sc for sc in all_scenarios()}


def book(name):
    return FOLDER / f"degreewise-demo-{name}.xlsx"


def same_numbers(got, want):
    """Equal cell by cell; numbers to 1e-11 relative (the last digits of a double may differ between
    machines whose numeric libraries round differently, as the README says)."""
    if isinstance(want, float) and isinstance(got, (int, float)):
        return math.isclose(got, want, rel_tol=1e-11, abs_tol=1e-13)
    if isinstance(want, list):
        return isinstance(got, list) and len(got) == len(want) and all(map(same_numbers, got, want))
    return got == want


def block(ws, anchor, rows, cols):
    top = ws[anchor]
    return [[ws.cell(top.row + i, top.column + j).value for j in range(cols)] for i in range(rows)]


@pytest.mark.parametrize("name", sorted(SCENARIOS))
def test_cached_values_equal_a_fresh_computation(name):
    sc = SCENARIOS[name]
    ws = openpyxl.load_workbook(book(name), data_only=True).worksheets[1]
    n = len(sc.x)
    xs = [[ws.cell(r, 1).value] for r in range(2, n + 2)]
    ys = [[ws.cell(r, 2).value] for r in range(2, n + 2)]
    w = sc.weights
    e = [[ws.cell(r, 3).value] for r in range(2, n + 2)] if sc.excluded else None
    assert [(i, r[0]) for i, r in enumerate(e or []) if r[0]] == list(sc.excluded)
    order = degreewise.calib_order(xs, ys, None, None, None, w, e)
    assert ws[LAYOUT["order"]].value == order == sc.expected_order
    expected = {
        "orders": degreewise.calib_orders(xs, ys, None, None, w, e),
        "seqf": degreewise.calib_seqf(xs, ys, None, w, e),
        "coefs": degreewise.calib_coefs(xs, ys, order, None, w, e),
        "stats": degreewise.calib_stats(xs, ys, order, w, e),
        "checks": degreewise.calib_checks(xs, ys, order, None, w, e),
        "residuals": degreewise.calib_residuals(xs, ys, order, w, e),
        "predict": degreewise.calib_predict(xs, ys, block(ws, LAYOUT["grid"], GRID, 1), order, None, w, e),
    }
    anchors = dict(LAYOUT)
    if sc.samples:
        readings = block(ws, samples_anchor(n), len(sc.samples), 1)
        assert [r[0] for r in readings] == list(sc.samples)
        expected["inverse"] = degreewise.calib_inverse(xs, ys, readings, None, order, None, w, e)
        anchors["inverse"] = ws[samples_anchor(n)].offset(0, 1).coordinate
    blank_at, anchors["limits"], anchors["weighting"] = limits_anchors(sc)
    blanks = block(ws, blank_at, len(sc.blanks), 1) or None
    assert [r[0] for r in blanks or []] == list(sc.blanks)
    expected["limits"] = degreewise.calib_limits(xs, ys, blanks, None, order, None, w, e)
    if sc.weights:
        expected["weighting"] = degreewise.calib_weighting(xs, ys, None, None, e)
    else:
        assert ws[anchors["weighting"]].value is None
    for key, table in expected.items():
        width = max(len(r) for r in table)
        got = block(ws, anchors[key], len(table), width)
        want = [list(r) + [None] * (width - len(r)) for r in table]
        assert same_numbers(got, want), (key, got, want)
    assert block(ws, ws[LAYOUT["residuals"]].offset(-1, 0).coordinate, 1, 8) == degreewise.calib_labels("residuals")
    assert block(ws, ws[LAYOUT["predict"]].offset(-1, 0).coordinate, 1, 6) == degreewise.calib_labels("predict")


def test_each_scenario_shows_what_it_was_built_to_show():
    curved = openpyxl.load_workbook(book("curved"), data_only=True).worksheets[1]
    seqf = block(curved, LAYOUT["seqf"], 9, 6)
    assert [r[0] for r in seqf] == ["source", "x", "x^2", "x^3", "x^4", "residual", "lack of fit (order 4)",
                                    "pure error", "total"]
    assert seqf[2][5] < 0.05 and seqf[3][5] > 0.05 and seqf[4][5] > 0.05
    assert seqf[6][5] > 0.05  # lack of fit tested against replicates and not significant
    straight = openpyxl.load_workbook(book("straight"), data_only=True).worksheets[1]
    orders = block(straight, LAYOUT["orders"], 5, 12)
    r2 = [row[3] for row in orders[1:]]
    assert r2 == sorted(r2) and r2[-1] > r2[0]  # R^2 creeps up with every term ...
    assert all(row[8] > 0.05 for row in orders[2:])  # ... but no term beyond x is significant
    assert orders[1][11].startswith("stepdown")
    weighted = openpyxl.load_workbook(book("weighted"), data_only=True).worksheets[1]
    stats = dict(block(weighted, LAYOUT["stats"], 20, 2))
    assert stats["weights"] == "1/x^2"
    inverse_at = weighted[samples_anchor(len(SCENARIOS["weighted"].x))].offset(0, 1).coordinate
    inverse = block(weighted, inverse_at, len(SCENARIOS["weighted"].samples), 4)
    assert all(isinstance(r[0], float) and r[1] < r[0] < r[2] for r in inverse[:-1])
    assert inverse[-1][3].startswith("reading above the calibrated response range")
    residuals = block(weighted, LAYOUT["residuals"], len(SCENARIOS["weighted"].x), 8)
    assert all(abs(r[6]) < 20 for r in residuals)  # back-calculated standards within 20 %


@pytest.mark.parametrize("name", sorted(SCENARIOS))
def test_charts_read_ranges_that_hold_numbers_with_visible_markers(name):
    sc = SCENARIOS[name]
    sheet = sc.name.capitalize()
    with zipfile.ZipFile(book(name)) as z:
        charts = [z.read(n).decode().replace(" />", "/>") for n in sorted(z.namelist())
                  if n.startswith("xl/charts/chart")]
    assert len(charts) == 2
    ws = openpyxl.load_workbook(book(name), data_only=True)[sheet]
    for chart in charts:
        for ref in re.findall(r"<(?:c:)?f>([^<]+)</(?:c:)?f>", chart):
            where, cells = ref.split("!")
            assert where == f"'{sheet}'"
            block = ws[cells.replace("$", "")]
            values = [c.value for row in block for c in row] if isinstance(block, tuple) else [block.value]
            assert len(values) in {GRID} | {count for runs in runs_of(sc) for _, count in runs}, ref
            assert all(isinstance(v, (int, float)) and math.isfinite(v) for v in values), ref
        first = re.search(r"<(?:c:)?ser>.*?</(?:c:)?ser>", chart, re.S).group(0)  # the standards
        assert re.search(r'<(?:c:)?marker><(?:c:)?symbol val="circle"/><(?:c:)?size val="6"/><(?:c:)?spPr>'
                         r'<a:solidFill(?: xmlns:a="[^"]+")?><a:srgbClr val="1F4E79"/>', first), first
        logs = re.findall(r'<(?:c:)?logBase val="10(?:\.0)?"/>', chart)
        assert len(logs) == {"weighted": 2 if chart is charts[0] else 1}.get(name, 0)
    # the weighted fit's residual chart shows the deviation % of the back-calculated x
    column = 6 if sc.weights else 1
    resid = ws[LAYOUT["residuals"]].offset(0, column).column_letter
    top = ws[LAYOUT["residuals"]].row
    used, excluded = runs_of(sc)
    for first, count in used:  # the standards the fit uses, and no excluded one
        assert f"'{sheet}'!${resid}${top + first}:${resid}${top + first + count - 1}" in charts[1]
    for first, _ in excluded:
        assert f"${resid}${top + first}:" not in charts[1]
        assert "excluded standard" in charts[0] and '<symbol val="x"/>' in charts[0]


def test_calibration_sheets_print_on_a_few_pages():
    for name in SCENARIOS:
        ws = openpyxl.load_workbook(book(name))[name.capitalize()]
        assert ws.page_setup.orientation == "landscape" and ws.page_setup.fitToWidth == 1
        assert ws.page_setup.fitToHeight == 0 and ws.sheet_properties.pageSetUpPr.fitToPage
        assert ws.print_title_rows == "$1:$1"
        assert ws.print_area.startswith("'%s'!$A$1:$O$" % name.capitalize())
        limits = ws[limits_anchors(SCENARIOS[name])[1]].row
        assert [b.id for b in ws.row_breaks.brk] == [ws[LAYOUT["checks"]].row - 1, ws[LAYOUT["residuals"]].row - 2,
                                                     limits - 2]


def cached_values(path):
    return [[[c.value for c in row] for row in ws.iter_rows()]
            for ws in openpyxl.load_workbook(path, data_only=True).worksheets]


def test_committed_workbooks_are_up_to_date(tmp_path):
    for name in SCENARIOS:
        copy = tmp_path / f"{name}.xlsx"
        copy.write_bytes(book(name).read_bytes())
        assert refresh_file(copy).error is None
        assert same_numbers(cached_values(copy), cached_values(book(name))), name


@pytest.mark.slow
def test_demo_command_writes_refreshed_workbooks(tmp_path, capsys):
    assert main(["demo", str(tmp_path / "out")]) == 0
    out = capsys.readouterr().out
    assert sorted(p.name for p in (tmp_path / "out").iterdir()) == [
        "degreewise-demo-curved-report.pdf", "degreewise-demo-curved.xlsx", "degreewise-demo-straight-report.pdf",
        "degreewise-demo-straight.xlsx", "degreewise-demo-weighted-report.pdf", "degreewise-demo-weighted.xlsx"]
    assert ("chosen order 2: order 2 given as the order argument (a number, or a cell such as CALIB_ORDER with its "
            "own rule, alpha and max order); the default rule picks the same order: rule stepdown, alpha 0.05, max "
            "order 4: the highest term is tested first") in out
    assert "chosen order 1:" in out and out.endswith(f"\n{CAUTION_SENTENCE}\n")
    # units, points, levels, range, every setting, one way of writing p-values, and the reports written
    assert "  x: tracer Q (ug/L), 21 points at 7 levels, from 0.5 to 40; y: detector counts" in out
    assert "  Weighted!N26: order 'Weighted'!E1 (= 1); weights 1/x^2; exclude none" in out  # the STATS cell's own
    for name in SCENARIOS:
        report = tmp_path / "out" / f"degreewise-demo-{name}-report.pdf"
        assert f"  report: {report}" in out and report.read_bytes().startswith(b"%PDF-")
    p_values = re.findall(r"lack-of-fit p (\S+)", out)
    assert len(p_values) == 3 and all(p == fmt_p(float(p)) and float(p) < 1 for p in p_values)  # the engine's way
    # limits on every sheet, blank readings where the scenario has them, the weighting picked on the weighted one
    assert len(re.findall(r"^  limits in x \(\w+!J\d+; estimates from one calibration, to be confirmed with "
                          r"samples near the limit\):$", out, re.M)) == 3
    assert len(re.findall(r"^    prediction band   decision \S+, detection \S+, quantitation \S+$", out, re.M)) == 2
    assert len(re.findall(r"^    blank readings    decision \S+, detection \S+, quantitation \S+$", out, re.M)) == 2
    assert "    prediction band   none: weights '1/x^2' give a new reading at x = 0 zero variance" in out
    assert len(re.findall(r"^  weighting \S+ picked \(at order 1; Weighted!I104\): ", out, re.M)) == 1


def test_validate_command(capsys):
    assert main(["validate"]) == 0
    out = capsys.readouterr().out
    assert "PASS: every quantity reaches LRE 12" in out
    assert out.endswith(f"\n{CAUTION_SENTENCE}\n")
    for name in ("norris", "pontius", "filip", "wampler1", "wampler2", "wampler3"):
        assert re.search(rf"^{name}\s+minimum LRE (1[2-5]\.\d)$", out, re.M)


def test_the_compare_sheet_holds_last_months_standards_and_their_comparison():
    sc = SCENARIOS["straight"]
    wb = openpyxl.load_workbook(book("straight"), data_only=True)
    today, ws = wb.worksheets[1], wb["Compare"]
    n = len(sc.x)
    xs = [[today.cell(r, 1).value] for r in range(2, n + 2)]
    ys = [[today.cell(r, 2).value] for r in range(2, n + 2)]
    e = [[today.cell(r, 3).value] for r in range(2, n + 2)]
    ref = [[ws.cell(r, c).value] for r in range(2, len(sc.reference_y) + 2) for c in (1, 2)]
    at = block(ws, "D2", len(sc.compare_at), 1)
    want = degreewise.calib_compare(xs, ys, ref[0::2], ref[1::2], at, None, None, None, e)
    assert [r[0] for r in want[1:4]] == ["same curve", "same shape", "same residual SD"]
    assert same_numbers(block(ws, "F1", len(want), 12), want)


def test_result_cells_carry_number_formats_and_every_page_holds_its_rows():
    """Formats chosen from the values (common practice for printed calibration tables: p-values to four
    decimals, % to two, R² near 1 to six), so that no number runs into the next; the Compare sheet prints every
    standard of both runs."""
    wb = openpyxl.load_workbook(book("straight"))
    ws = wb["Straight"]
    coefs = ws[LAYOUT["coefs"]]
    intercept, slope = (coefs.offset(i, 1) for i in (1, 2))
    assert intercept.number_format == slope.number_format == "0.0000000"  # 5 significant digits at 0.0027
    assert coefs.offset(1, 4).number_format == P_FORMAT  # p-value
    orders = ws[LAYOUT["orders"]]
    assert orders.offset(1, 3).number_format == "0.000000"  # R²
    assert orders.offset(1, 0).number_format == "0"  # order
    residuals = ws[LAYOUT["residuals"]]
    assert residuals.offset(0, 6).number_format == "0.00"  # deviation %
    for col in range(1, 16):  # every formatted number fits its column
        width = ws.column_dimensions[get_column_letter(col)].width
        for row in ws.iter_rows(min_col=col, max_col=col):
            c = row[0]
            if isinstance(c.value, float) and c.number_format != "General":
                assert len(shown(c.value, c.number_format)) + 2 <= width, (c.coordinate, c.number_format)
    compare = wb["Compare"]
    assert compare.print_area == f"'Compare'!$A$1:$Q${len(SCENARIOS['straight'].x) + 1}"
