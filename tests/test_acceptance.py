"""Acceptance of a calibration run (engine.acceptance, CALIB_ACCEPTANCE): each rule, each edge and each message.

The runs are built so that every deviation is known beforehand: the standards off the line y = x get weight
1e-9 (they do not move the curve), so the fitted line is y = x to about 1e-9 and a standard at y = x (1 + d)
reads back 100 d % away. Sources: the RSE check value is a published worked example of an accreditation
body's RSE worksheet (reproduced independently: the sums are written out below); the criteria of ICH M10
(2022) as the engine's docstring gives them, some from memory (marked there).
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import degreewise
from degreewise import engine
from degreewise.catalogue import CAUTION
from degreewise.engine import acceptance as A

LEVELS = [1.0, 2.0, 5.0, 10.0, 20.0, 50.0, 100.0, 200.0]


def run(deviations: dict, replicates: int = 3, levels=LEVELS):
    """Standards at ``levels`` x ``replicates`` on y = x, with {(level index, replicate): d} read 100 d % off;
    off-line standards weighted 1e-9."""
    x, y, w = [], [], []
    for i, level in enumerate(levels):
        for r in range(replicates):
            d = deviations.get((i, r), 0.0)
            x.append(level)
            y.append(level * (1 + d))
            w.append(1e-9 if d else 1.0)
    return np.array(x), np.array(y), np.array(w)


def judged(deviations, criteria=A.M10_CHROMATOGRAPHIC, replicates=3, levels=LEVELS, excluded=0):
    x, y, w = run(deviations, replicates, levels)
    return A.judge(engine.Calibration(x, y, 1, w), 1, criteria, excluded)


def rows_of(verdict):
    return {c.name: c for c in verdict.criteria}


def test_relative_standard_error_matches_the_published_worked_example():
    # published worked example of an accreditation body's RSE worksheet: 12.83 % at p = 2
    true = [0.05, 0.5, 2.5, 5, 10]
    back = [0.0582, 0.4396, 2.304, 4.876, 10.34]
    assert A.relative_standard_error(true, back, 2) == pytest.approx(12.83, abs=0.005)
    # reproduced independently: 100 sqrt(sum r^2 / (n - p)) with r = (x' - x) / x
    r = [(b - t) / t for t, b in zip(true, back)]
    assert A.relative_standard_error(true, back, 2) == pytest.approx(100 * math.sqrt(sum(v * v for v in r) / 3),
                                                                     rel=1e-14)


def test_each_standard_is_judged_against_its_levels_limit():
    v = judged({(0, 0): 0.19, (0, 1): -0.21, (3, 0): 0.14, (3, 1): -0.16, (7, 0): 0.16})
    by = {(s.x, round(s.deviation)): s for s in v.standards}
    assert by[(1.0, 19)].passed is True and by[(1.0, 19)].limit == 20 and by[(1.0, 19)].reason == \
        "within ±20 % (lowest level)"
    assert by[(1.0, -21)].passed is False and by[(1.0, -21)].reason == "outside ±20 % (lowest level)"
    assert by[(10.0, 14)].passed is True and by[(10.0, 14)].reason == "within ±15 %"
    assert by[(10.0, -16)].passed is False and by[(10.0, -16)].reason == "outside ±15 %"
    assert by[(200.0, 16)].passed is False and by[(200.0, 16)].reason == "outside ±15 % (highest level)"
    assert by[(10.0, 14)].deviation == pytest.approx(14.0, abs=1e-6)  # the line is y = x to about 1e-9
    lba = judged({(0, 0): -0.24, (7, 0): 0.24, (3, 0): 0.21}, A.M10_LIGAND_BINDING)
    assert [(s.x, s.limit, s.passed) for s in lba.standards if abs(s.deviation) > 1] == [
        (1.0, 25.0, True), (10.0, 20.0, False), (200.0, 25.0, True)]


def test_exactly_75_percent_passing_is_met_and_one_fewer_is_not():
    # 24 standards; one failing standard at each of six levels: 18 of 24 = 75 % exactly
    six = {(i, 0): 0.3 for i in range(1, 7)}
    v = judged(six)
    passing = rows_of(v)["standards passing %"]
    assert (passing.value, passing.limit, passing.met) == (75.0, 75.0, True)
    assert passing.detail == "18 of 24 standards pass; at least 75 % needed"
    assert v.acceptable and v.reasons == ("every criterion of the set is met",)
    seven = judged({**six, (1, 1): 0.3})
    passing = rows_of(seven)["standards passing %"]
    assert passing.value == pytest.approx(100 * 17 / 24) and not passing.met and not seven.acceptable
    assert seven.reasons[0] == "standards passing %: not met (17 of 24 standards pass; at least 75 % needed)"
    # a standard the analyst excluded counts as not passing
    counted = rows_of(judged(six, excluded=1))["standards passing %"]
    assert counted.detail == "18 of 25 standards pass, 1 excluded counted as not passing; at least 75 % needed"
    assert not counted.met


def test_replicates_at_a_level_need_half_passing():
    half = judged({(2, 0): 0.3}, replicates=2)  # 1 of 2 at x = 5: exactly 50 %
    assert rows_of(half)["each level: at least 50 % pass"].met
    assert rows_of(half)["each level: at least 50 % pass"].detail == "8 levels with replicates, each met"
    two = judged({(2, 0): 0.3, (2, 1): -0.3}, replicates=4)  # 2 of 4 pass at x = 5: exactly 50 %
    assert rows_of(two)["each level: at least 50 % pass"].met
    worse = judged({(2, 0): 0.3, (2, 1): -0.3, (2, 3): 0.3}, replicates=4)  # 1 of 4 passes at x = 5
    row = rows_of(worse)["each level: at least 50 % pass"]
    assert (row.value, row.met, row.detail) == (1, False, "below 50 % at x = 5")
    assert not worse.acceptable
    # that level does not count among the levels that pass
    assert rows_of(worse)["levels passing"].value == 7
    single = judged({(2, 0): 0.3}, replicates=1)
    assert rows_of(single)["each level: at least 50 % pass"].detail == "no level has replicates"


def test_six_levels_must_pass():
    v = judged({(0, 0): 0.3, (0, 1): 0.3, (0, 2): -0.3, (4, 0): 0.3, (4, 1): -0.3, (4, 2): 0.3}, levels=LEVELS[:7])
    row = rows_of(v)["levels passing"]
    assert (row.value, row.limit, row.met) == (5, 6, False)
    assert row.detail == "5 of 7 levels pass; at least 6 needed"


def test_a_failed_lowest_level_fails_the_run():
    v = judged({(0, 0): 0.25, (0, 1): 0.25, (0, 2): -0.5})
    lowest = rows_of(v)["lowest level passes"]
    assert (lowest.value, lowest.met) == (0, False)
    assert lowest.detail == "x = 1: 0 of 3 standards pass; every standard of the lowest level fails"
    assert rows_of(v)["highest level passes"].met
    assert not v.acceptable
    assert "lowest level passes: not met (x = 1: 0 of 3 standards pass; every standard of the lowest level " \
           "fails)" in v.reasons
    # the same at the highest level
    high = judged({(7, 0): 0.2, (7, 1): 0.2, (7, 2): -0.4})
    assert not rows_of(high)["highest level passes"].met and not high.acceptable


def test_blank_and_zero_samples_are_not_part_of_the_regression_under_m10():
    x, y, w = run({}, 2, [0.0] + LEVELS)
    y[:2] = [0.001, -0.001]
    v = A.judge(engine.Calibration(x, y, 1, w), 1, A.M10_CHROMATOGRAPHIC)
    assert [s.passed for s in v.standards[:2]] == [None, None]
    assert v.standards[0].reason == ("x = 0: a blank or zero sample, which the set leaves out of the regression; "
                                     "mark it in exclude")
    row = rows_of(v)["no blank or zero sample in the regression"]
    assert (row.value, row.met) == (2, False) and not v.acceptable
    # other sets do not judge x = 0 either, and say why
    custom = A.judge(engine.Calibration(x, y, 1, w), 1, A.custom([15]))
    assert custom.standards[0].reason == "x = 0: no deviation % (not judged)" and custom.acceptable


def test_rse_and_levels_per_order_sets():
    x, y, w = run({(0, 0): 0.1, (3, 1): -0.1}, 1, LEVELS[:5])
    cal = engine.Calibration(x, y, 1)
    v = A.judge(cal, 1, A.RSE)
    back = np.array(engine.point_diagnostics(cal, 1).back_calculated)
    rse = rows_of(v)["relative standard error %"]
    assert rse.value == pytest.approx(A.relative_standard_error(x, back, 2), rel=1e-15) and rse.limit == 20
    assert rse.met and rse.detail == "p = 2 coefficients, n = 5"
    assert all(s.passed is None for s in v.standards)
    assert v.standards[0].reason == "the set has no limit for single standards"
    levels = A.judge(cal, 1, A.LEVELS_PER_ORDER)
    assert [(c.name, c.value, c.limit, c.met) for c in levels.criteria] == [("levels for order 1", 5, 5, True)]
    quad = A.judge(engine.Calibration(x, y, 2), 2, A.LEVELS_PER_ORDER)
    assert quad.reasons == ("levels for order 2: not met (5 levels in the fit, at least 6 for order 2)",)
    x6, y6, _ = run({}, 1, LEVELS)
    quartic = A.judge(engine.Calibration(x6, y6 + 1e-3 * np.sin(x6), 4), 4, A.LEVELS_PER_ORDER)
    assert quartic.reasons == ("levels for order 4: not met (the set gives minimums for orders 1 to 3 only; a "
                               "curve of order 4 is outside it)",)
    assert A.exclusions(cal, 1, A.RSE) == ()


def test_the_most_deviant_failing_standard_comes_first_and_each_step_refits():
    x, y, w = run({(3, 0): 0.2, (5, 1): -0.4})
    cal = engine.Calibration(x, y, 1, w)
    steps = A.exclusions(cal, 1, A.M10_CHROMATOGRAPHIC)
    assert [(s.point, s.x, round(s.deviation)) for s in steps] == [(16, 50.0, -40), (9, 10.0, 20)]
    assert steps[0].then is not None and steps[0].shrinks == ""
    # after the first exclusion 22 of 23 pass, with the excluded one counted: 22 of 24
    assert rows_of(steps[0].then)["standards passing %"].detail == (
        "22 of 24 standards pass, 1 excluded counted as not passing; at least 75 % needed")
    assert steps[1].then.acceptable
    assert not any(s.passed is False for s in steps[1].then.standards)


def test_excluding_the_last_standard_of_an_end_level_says_that_the_range_shrinks():
    x, y, w = run({(0, 0): 0.3, (0, 1): 0.3, (0, 2): 0.3}, levels=LEVELS[:7] + [150.0])
    steps = A.exclusions(engine.Calibration(x, y, 1, w), 1, A.M10_CHROMATOGRAPHIC)
    assert [s.x for s in steps] == [1.0, 1.0, 1.0]
    assert [s.shrinks for s in steps] == ["", "", "the calibrated range shrinks to [2, 150]"]
    assert steps[-1].then.acceptable  # 21 of 24 pass (87.5 %, the three excluded counted), 7 levels
    assert rows_of(steps[-1].then)["lowest level passes"].detail == "x = 2: 3 of 3 standards pass"


def test_a_step_whose_refit_is_impossible_says_why():
    x = np.array([1.0, 2.0, 5.0])
    y = np.array([1.0, 2.6, 5.0])
    steps = A.exclusions(engine.Calibration(x, y, 1), 1, A.custom([5]))
    assert steps[-1].then is None
    assert steps[-1].problem == ("the curve of order 1 cannot be refitted without it: only 2 points: a "
                                 "calibration curve needs at least 3")


def test_custom_numbers_are_checked_with_their_position():
    c = A.custom([15.0, math.nan, 75.0, 6.0])
    assert (c.tolerance, c.lowest, c.highest, c.min_passing, c.min_levels) == (15, 15, 15, 75, 6)
    messages = {
        (0.0,): "criteria[0]: the tolerance % 0 must be a number above 0 (15 for ±15 %)",
        (15.0, -1.0): "criteria[1]: the tolerance at the lowest level % -1 must be above 0 (20 for ±20 %), or "
                      "empty for the tolerance",
        (15.0, 20.0, 0.75): "criteria[2]: the minimum % passing 0.75 is in percent, from 1 to 100 (75 for 75 %; a "
                            "cell formatted as % holds 0.75, which would read as 0.75 %)",
        (15.0, 20.0, 75.0, 5.5): "criteria[3]: the minimum levels 5.5 must be a whole number of at least 2, or "
                                 "empty",
        (15.0, 20.0, 75.0, 6.0, 1.0): "criteria has 5 numbers; give at most 4: tolerance %, tolerance at the "
                                      "lowest level %, minimum % passing, minimum levels",
    }
    for values, message in messages.items():
        with pytest.raises(engine.OptionError) as err:
            A.custom(list(values))
        assert err.value.message == message


# ---- the worksheet function


def column(values):
    return [[float(v)] for v in values]


def test_the_worksheet_table_lists_standards_criteria_verdict_candidates_and_the_caution():
    x, y, w = run({(3, 0): 0.2}, replicates=2, levels=LEVELS)
    exclude = [[None]] * x.size + [["air bubble"]]
    xs, ys, ws = column(list(x) + [20.0]), column(list(y) + [30.0]), column(list(w) + [1.0])
    rows = degreewise.calib_acceptance(xs, ys, "ich m10  Chromatographic", 1, ws, exclude)
    assert rows[0] == ["item", "x", "back-calculated x", "value", "limit", "result", "detail"]
    assert rows[1][:6] == ["criteria", None, None, None, None, "ICH M10 chromatographic"]
    assert rows[1][6].startswith("each standard within ±15 % (±20 % at the lowest level); at least 75 % of the "
                                 "standards pass; at least 6 levels pass;")
    assert "from memory: check them against the guideline" in rows[1][6]
    standards = rows[2:19]
    assert [r[0] for r in standards] == [f"standard {i} of 17" for i in range(1, 18)]
    failing = standards[6]
    assert failing[1] == 10.0 and failing[3] == pytest.approx(20.0, abs=1e-6)
    assert failing[4:] == [15.0, "fail", "outside ±15 %"]
    assert standards[16][1:3] == [20.0, pytest.approx(30.0, rel=1e-6)]
    assert standards[16][4:] == [None, "excluded", "excluded: air bubble; counted as not passing"]
    by_name = {r[0]: r for r in rows[19:]}
    assert by_name["standards passing %"][3:6] == [pytest.approx(100 * 15 / 17), 75.0, "met"]
    assert by_name["verdict"][5:] == ["acceptable", "every criterion of the set is met (curve of order 1, given "
                                                    "as the order argument)"]
    step = by_name["could exclude 1"]
    assert step[1] == 10.0 and step[5] == "then acceptable"
    assert step[6] == ("standard 7 of 17: furthest outside its limit; refitted at order 1 without it: every "
                       "criterion of the set is met")
    assert rows[-2] == ["could exclude", None, None, None, None, None, "nothing is excluded here: exclusion stays "
                        "the analyst's decision, recorded in exclude with a reason"]
    assert rows[-1] == ["caution", None, None, None, None, None, CAUTION]
    assert degreewise.calib_labels("acceptance") == [rows[0]]


def test_the_worksheet_criteria_messages_name_the_cell():
    x, y = column(LEVELS), column(LEVELS)
    assert degreewise.calib_acceptance(x, y, [[15], [20], [0.75]]) == [[
        "criteria, row 3 of 3: the minimum % passing 0.75 is in percent, from 1 to 100 (75 for 75 %; a cell "
        "formatted as % holds 0.75, which would read as 0.75 %)"]]
    assert degreewise.calib_acceptance(x, y, [[15, "n.d."]]) == [[
        "criteria, column 2 of 2: the text 'n.d.' is not a number; enter a number, or a set's name in one cell "
        "('ICH M10 chromatographic', 'ICH M10 ligand binding', 'relative standard error', 'levels per order')"]]
    assert degreewise.calib_acceptance(x, y, "M10") == [[
        "criteria: 'M10' is not a criteria set; use one of 'ICH M10 chromatographic', 'ICH M10 ligand binding', "
        "'relative standard error', 'levels per order', or your own numbers in cells: tolerance %, tolerance at "
        "the lowest level %, minimum % passing, minimum levels"]]
    assert degreewise.calib_acceptance(x, y, [[None]]) == [[
        "criteria: give a set's name ('ICH M10 chromatographic', 'ICH M10 ligand binding', 'relative standard "
        "error', 'levels per order') or your own numbers in cells: tolerance %, tolerance at the lowest level %, "
        "minimum % passing, minimum levels"]]
    rse = degreewise.calib_acceptance(x, y, "relative standard error")
    assert rse[-2] == ["could exclude", None, None, None, None, None,
                       "none: the set has no rule for rejecting single standards"]


def test_a_run_with_no_failing_standard_lists_none_to_exclude():
    x, y = column(LEVELS), column(LEVELS)
    rows = degreewise.calib_acceptance(x, [[v * 1.001] for v in LEVELS], "ICH M10 ligand binding")
    assert rows[-2] == ["could exclude", None, None, None, None, None, "none: no standard fails"]
    assert [r[5] for r in rows if r[0] == "verdict"] == ["acceptable"]
    assert degreewise.calib_acceptance(x, y, "ICH M10 ligand binding")[-3][5] == "acceptable"


@settings(max_examples=40, deadline=None, derandomize=True)
@given(st.lists(st.floats(-0.4, 0.4), min_size=8, max_size=8), st.floats(1.0, 30.0), st.floats(0.0, 20.0))
def test_a_wider_tolerance_never_turns_an_acceptable_run_down(deviations, tolerance, wider):
    # invariant: with the same curve, every standard within a tolerance is within a wider one, so the passing
    # share and the levels can only grow; and the verdict's rows count what the standards' rows say
    x, y, w = run({(i, 0): d for i, d in enumerate(deviations)}, replicates=2)
    cal = engine.Calibration(x, y, 1, w)
    narrow = A.judge(cal, 1, A.custom([tolerance, math.nan, 75, 6]))
    broad = A.judge(cal, 1, A.custom([tolerance + wider, math.nan, 75, 6]))
    assert broad.acceptable or not narrow.acceptable
    passing = sum(s.passed is True for s in narrow.standards)
    assert rows_of(narrow)["standards passing %"].value == pytest.approx(100 * passing / len(narrow.standards))


def test_every_set_states_its_numbers_in_words():
    assert [c.numbers() for c in A.SETS.values()] == [
        "each standard within ±15 % (±20 % at the lowest level); at least 75 % of the standards pass; at least 6 "
        "levels pass; with replicates at least 50 % pass at each level; not every standard of the lowest or of the "
        "highest level fails; no blank or zero sample in the regression",
        "each standard within ±20 % (±25 % at the lowest level and ±25 % at the highest); at least 75 % of the "
        "standards pass; at least 6 levels pass",
        "RSE at most 20 %",
        "at least 5 levels for order 1, 6 levels for order 2, 7 levels for order 3"]
    assert A.custom([15]).numbers() == "each standard within ±15 %"
    assert A.custom([15, 20, 80, 5]).numbers() == ("each standard within ±15 % (±20 % at the lowest level); at least "
                                                   "80 % of the standards pass; at least 5 levels pass")


def test_the_remaining_words_of_the_criteria():
    v = judged({})
    assert rows_of(v)["no blank or zero sample in the regression"].detail == "no standard at x = 0 in the fit"
    assert rows_of(v)["highest level passes"].detail == "x = 200: 3 of 3 standards pass"
    x, y, w = run({}, 2, [0.0] + LEVELS)
    zero = A.judge(engine.Calibration(x, y + 0.01, 1, w), 1, A.M10_CHROMATOGRAPHIC)
    assert rows_of(zero)["no blank or zero sample in the regression"].detail == (
        "2 standards at x = 0 in the fit; the set leaves blank and zero samples out of the regression")
    x, y, _ = run({(2, 0): 0.05}, 1, [0.0] + LEVELS[:5])
    rse = rows_of(A.judge(engine.Calibration(x, y + 0.01, 1), 1, A.RSE))["relative standard error %"]
    assert rse.detail == "p = 2 coefficients, n = 5; 1 standard at x = 0 left out"
    x, y, _ = run({(1, 0): 0.05}, 1, [0.0] + LEVELS[:2])
    few = rows_of(A.judge(engine.Calibration(x, y + 0.01, 1), 1, A.RSE))["relative standard error %"]
    assert math.isnan(few.value) and not few.met and few.detail == "too few standards for the RSE (n - p < 1)"
    # a response no x near the calibrated range gives (weight 1e-9: it does not move the line)
    x, y, w = run({(4, 0): 30.0})  # reads 620 on a line whose standards reach 200
    lost = [s for s in A.judge(engine.Calibration(x, y, 1, w), 1, A.M10_CHROMATOGRAPHIC).standards
            if s.x == 20.0][0]
    assert (lost.passed, lost.limit, lost.reason) == (False, 15.0, "no x near the calibrated range gives this "
                                                                    "response")
    assert math.isnan(lost.back_calculated)
