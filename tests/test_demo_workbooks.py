"""The committed demo workbooks, `degreewise demo` and `degreewise validate`."""

import math
import re
import zipfile
from pathlib import Path

import openpyxl
import pytest

import degreewise
from degreewise.cli import main
from degreewise.demo import GRID, LAYOUT
from degreewise.refresh import refresh_file
from degreewise.scenarios import all_scenarios

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
    order = degreewise.calib_order(xs, ys, None, None, None, w)
    assert ws[LAYOUT["order"]].value == order == sc.expected_order
    expected = {
        "orders": degreewise.calib_orders(xs, ys, None, None, w),
        "seqf": degreewise.calib_seqf(xs, ys, None, w),
        "coefs": degreewise.calib_coefs(xs, ys, order, None, w),
        "stats": degreewise.calib_stats(xs, ys, order, w),
        "checks": degreewise.calib_checks(xs, ys, order, None, w),
        "residuals": degreewise.calib_residuals(xs, ys, order, w),
        "predict": degreewise.calib_predict(xs, ys, [[ws.cell(r, 26).value] for r in range(2, GRID + 2)], order, None, w),
    }
    if sc.samples:
        readings = [[ws.cell(r, 34).value] for r in range(2, len(sc.samples) + 2)]
        expected["inverse"] = degreewise.calib_inverse(xs, ys, readings, None, order, None, w)
    for key, table in expected.items():
        width = max(len(r) for r in table)
        got = block(ws, LAYOUT[key], len(table), width)
        want = [list(r) + [None] * (width - len(r)) for r in table]
        assert same_numbers(got, want), (key, got, want)
    assert block(ws, "Q1", 1, 8) == degreewise.calib_labels("residuals")
    assert block(ws, "AA1", 1, 6) == degreewise.calib_labels("predict")


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
    inverse = block(weighted, LAYOUT["inverse"], len(SCENARIOS["weighted"].samples), 4)
    assert all(isinstance(r[0], float) and r[1] < r[0] < r[2] for r in inverse[:-1])
    assert inverse[-1][3].startswith("reading above the calibrated response range")
    residuals = block(weighted, LAYOUT["residuals"], len(SCENARIOS["weighted"].x), 8)
    assert all(abs(r[6]) < 20 for r in residuals)  # back-calculated standards within 20 %


@pytest.mark.parametrize("name", sorted(SCENARIOS))
def test_charts_read_the_spill_ranges(name):
    sc = SCENARIOS[name]
    sheet = sc.name.capitalize()
    with zipfile.ZipFile(book(name)) as z:
        charts = [z.read(n).decode() for n in sorted(z.namelist()) if n.startswith("xl/charts/chart")]
    assert len(charts) == 2
    refs = [set(re.findall(r"<(?:c:)?f>([^<]+)</(?:c:)?f>", c)) for c in charts]
    n, last = len(sc.x), GRID + 1
    assert refs[0] == {f"'{sheet}'!$A$2:$A${n + 1}", f"'{sheet}'!$B$2:$B${n + 1}", f"'{sheet}'!$Z$2:$Z${last}",
                       f"'{sheet}'!$AA$2:$AA${last}", f"'{sheet}'!$AD$2:$AD${last}",
                       f"'{sheet}'!$AE$2:$AE${last}"}
    assert refs[1] == {f"'{sheet}'!$A$2:$A${n + 1}", f"'{sheet}'!$R$2:$R${n + 1}"}
    wb = openpyxl.load_workbook(book(name))
    ws = wb[sheet]
    assert ws["AA2"].value.ref == f"AA2:AF{last}"  # the fitted curve and band come from the PREDICT spill
    assert ws["Q2"].value.ref == f"Q2:X{n + 1}"  # the residuals from the RESIDUALS spill


def cached_values(path):
    return [[[c.value for c in row] for row in ws.iter_rows()]
            for ws in openpyxl.load_workbook(path, data_only=True).worksheets]


def test_committed_workbooks_are_up_to_date(tmp_path):
    for name in SCENARIOS:
        copy = tmp_path / f"{name}.xlsx"
        copy.write_bytes(book(name).read_bytes())
        assert refresh_file(copy).error is None
        assert same_numbers(cached_values(copy), cached_values(book(name))), name


def test_demo_command_writes_refreshed_workbooks(tmp_path, capsys):
    assert main(["demo", str(tmp_path / "out")]) == 0
    out = capsys.readouterr().out
    assert sorted(p.name for p in (tmp_path / "out").iterdir()) == [
        "degreewise-demo-curved.xlsx", "degreewise-demo-straight.xlsx", "degreewise-demo-weighted.xlsx"]
    assert ("chosen order 2: order 2 given as the order argument (a number, or a cell such as CALIB_ORDER with its "
            "own rule, alpha and max order); the default rule picks the same order: rule stepdown, alpha 0.05, max "
            "order 4: the highest term is tested first") in out
    assert "chosen order 1:" in out and "does not replace, method validation" in out


def test_validate_command(capsys):
    assert main(["validate"]) == 0
    out = capsys.readouterr().out
    assert "PASS: every quantity reaches LRE 12" in out
    for name in ("norris", "pontius", "filip", "wampler1", "wampler2", "wampler3"):
        assert re.search(rf"^{name}\s+minimum LRE (1[2-5]\.\d)$", out, re.M)
