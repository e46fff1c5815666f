"""CALIB_ACCEPTANCE: each standard read back against a criteria set, the run's verdict, what the set would let
the analyst exclude."""

from __future__ import annotations

from .. import engine
from ..catalogue import CAUTION, HEADERS
from ..coercion import ERROR_TEXTS, CellError, cell_numbers, describe, flatten
from ..engine import acceptance
from ..engine.validation import CRITERIA_NUMBERS
from ..prepared import prepare
from .frame import cached, cell, curve_for, guarded, parse_order, worksheet_function
from .points import excluded_rows


def _criteria(value) -> acceptance.Criteria:
    """A criteria set by its name (one text cell) or the analyst's own numbers (a row or column of cells)."""
    cells = flatten(value, "criteria")
    names = ", ".join(f"'{c.name}'" for c in acceptance.SETS.values())
    if not cells.values:
        raise CellError(f"criteria: give a set's name ({names}) or your own numbers in cells: "
                        + ", ".join(CRITERIA_NUMBERS))
    if len(cells.values) == 1 and isinstance(cells.values[0], str) and describe(cells.values[0]) is not None \
            and cells.values[0].strip().upper() not in ERROR_TEXTS:
        key = " ".join(cells.values[0].split()).lower()
        if key not in acceptance.SETS:
            raise CellError(f"criteria: '{cells.values[0]}' is not a criteria set; use one of {names}, or your "
                            "own numbers in cells: " + ", ".join(CRITERIA_NUMBERS))
        return acceptance.SETS[key]
    values, _, problems = cell_numbers(cells)
    if problems:
        i, why = problems[0]
        raise CellError(f"{cells.where(i)}: {why}; enter a number, or a set's name in one cell ({names})")
    try:
        return acceptance.custom(values.tolist())
    except engine.CalibrationError as err:
        raise CellError(err.message if err.index is None else err.located(cells.where(err.index))) from None


def _verdict_words(verdict) -> tuple[str, str]:
    return ("acceptable" if verdict.acceptable else "not acceptable"), "; ".join(verdict.reasons)


@worksheet_function
@guarded()
def calib_acceptance(x, y, criteria, order=None, weights=None, exclude=None):
    """Header, then each standard read back against the set's limit, each criterion of the set, the run's
    verdict with reasons, the standards the set would let you exclude (one at a time) and the caution."""
    prep = prepare(x, y, weights, exclude)
    crit = _criteria(criteria)
    k = parse_order(order)

    def compute():
        cal, chosen, _ = curve_for(prep, k)
        excluded = len(prep.excluded)
        verdict = acceptance.judge(cal, chosen, crit, excluded)
        how = "given as the order argument" if k is not None else "the order the default rule picks"
        rows = [list(HEADERS["acceptance"]),
                ["criteria", None, None, None, None, crit.name, f"{crit.numbers()}. Source: {crit.source}"]]
        standards = [None] * prep.n_input  # in input order: a row per position, used or excluded
        for s in verdict.standards:
            standards[prep.used[s.point]] = [prep.label(s.point), cell(s.x), cell(s.back_calculated),
                                             cell(s.deviation), cell(s.limit),
                                             None if s.passed is None else ("pass" if s.passed else "fail"), s.reason]
        counted = ("; counted as not passing" if crit.min_passing == crit.min_passing else "")
        for e, row in zip(prep.excluded, excluded_rows(cal, chosen, prep.excluded)):
            standards[e.position] = [f"standard {e.position + 1} of {prep.n_input}", cell(e.x), row[5], row[6],
                                     None, "excluded", f"{row[7]}{counted}"]
        rows += [row for row in standards if row is not None]
        for c in verdict.criteria:
            rows.append([c.name, None, None, cell(c.value), cell(c.limit), "met" if c.met else "not met",
                         c.detail])
        result, reasons = _verdict_words(verdict)
        rows.append(["verdict", None, None, None, None, result, f"{reasons} (curve of order {chosen}, {how})"])
        rows += _exclusion_rows(prep, cal, chosen, crit, excluded)
        rows.append(["caution", None, None, None, None, None, CAUTION])
        return rows

    return cached("acceptance", prep, (repr(crit), k), compute)  # repr: a nan (a number left empty) equals itself


def _exclusion_rows(prep, cal, order: int, crit, excluded: int) -> list[list]:
    """The standards the set would let the analyst exclude, one at a time, each with the verdict then."""
    if not crit.rejects:
        return [["could exclude", None, None, None, None, None,
                 "none: the set has no rule for rejecting single standards"]]
    steps = acceptance.exclusions(cal, order, crit, excluded)
    if not steps:
        return [["could exclude", None, None, None, None, None, "none: no standard fails"]]
    rows = []
    for j, step in enumerate(steps, start=1):
        words = [f"{prep.label(step.point)}: furthest outside its limit"]
        if step.shrinks:
            words.append(step.shrinks)
        if step.then is None:
            words.append(step.problem)
            result = None
        else:
            result, reasons = _verdict_words(step.then)
            result = f"then {result}"
            words.append(f"refitted at order {order} without it{' and those above' if j > 1 else ''}: {reasons}")
        rows.append([f"could exclude {j}", cell(step.x), cell(step.back_calculated), cell(step.deviation),
                     cell(step.limit), result, "; ".join(words)])
    rows.append(["could exclude", None, None, None, None, None,
                 "nothing is excluded here: exclusion stays the analyst's decision, recorded in exclude with a "
                 "reason"])
    return rows
