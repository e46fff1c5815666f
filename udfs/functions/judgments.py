"""Judgments of a curve: CALIB_CHECKS, CALIB_LIMITS, CALIB_WEIGHTING."""

from __future__ import annotations

from .. import engine
from ..catalogue import CAUTION, HEADERS, LIMITS_AFTER_CHOICE, LIMITS_CAUTION, WEIGHTING_AFTER_CHOICE
from ..coercion import CellError, flatten, is_omitted, numbers_or_blank
from ..prepared import prepare
from .frame import cached, cell, column, curve_for, guarded, parse_alpha, parse_order, parse_replicates, \
    worksheet_function

# checks that name single standards: their rows also name the excluded ones, apart from the flagged
POINT_CHECKS = ("outliers", "influential points")


@worksheet_function
@guarded()
def calib_checks(x, y, order=None, alpha=None, weights=None, exclude=None):
    """Header, then one row per check of the curve: check, statistic, p-value, verdict, detail."""
    prep = prepare(x, y, weights, exclude)
    k, a = parse_order(order), parse_alpha(alpha)

    def compute():
        cal, chosen, _ = curve_for(prep, k)
        rows = [list(HEADERS["checks"])]
        excluded = "; ".join(f"excluded from the fit (not tested): {prep.describe_excluded(e)}"
                             for e in prep.excluded)
        for c in engine.curve_checks(cal, chosen, a, prep.label):
            detail = c.detail
            if excluded and c.name in POINT_CHECKS:
                detail = f"{detail}; {excluded}" if detail else excluded
            rows.append([c.name, cell(c.statistic), cell(c.p_value), c.verdict, detail or None])
        rows.append(["caution", None, None, None, CAUTION])
        return rows

    return cached("checks", prep, (k, a), compute)


def _blank_readings(value):
    """The filled cells of the blank argument as numbers (None when omitted), or the reason in words why they
    cannot be used: the blank row says it, the other rows are computed."""
    if value is None or is_omitted(value):
        return None, ""
    try:
        values, empty = numbers_or_blank(flatten(value, "blank"))
    except CellError as err:
        return None, str(err)
    if empty.all():
        return None, "blank: the range holds no readings; enter at least 2 blank readings or leave the argument empty"
    return values[~empty], ""


@worksheet_function
@guarded()
def calib_limits(x, y, blank=None, replicates=None, order=None, alpha=None, weights=None, exclude=None):
    """Header, then one row per method (prediction band, ISO 11843-2, ICH residual SD and intercept SE, blank
    readings): critical response, decision, detection and quantitation limits, note."""
    prep = prepare(x, y, weights, exclude)
    reps, k, a = parse_replicates(replicates), parse_order(order), parse_alpha(alpha)
    readings, problem = _blank_readings(blank)

    def compute():
        cal, chosen, _ = curve_for(prep, k)
        rows = [list(HEADERS["limits"])]
        for r in engine.detection_limits(cal, chosen, readings, reps, a):
            rows.append([r.method, *column((r.critical_response, r.decision_limit, r.detection_limit,
                                             r.quantitation_limit)), r.note or None])
        if problem:
            rows.append(["blank readings", None, None, None, None, problem])
        chosen_here = f"; {LIMITS_AFTER_CHOICE}" if k is None else ""
        rows.append(["caution", None, None, None, None, f"{LIMITS_CAUTION}{chosen_here}. {CAUTION}"])
        return rows

    key = (reps, k, a, None if readings is None else readings.tobytes(), problem)
    return cached("limits", prep, key, compute)


@worksheet_function
@guarded()
def calib_weighting(x, y, order=None, alpha=None, exclude=None):
    """Header, then one row per weighting scheme: order, sum and largest |deviation %|, spread p-value, picked,
    note; with replicates a last row for weights 1/x^2b from the replicate SDs."""
    prep = prepare(x, y, None, exclude)
    k, a = parse_order(order), parse_alpha(alpha)

    def compute():
        cal = curve_for(prep, k)[0]  # the standards' own problems, in the family's words
        rows = [list(HEADERS["weighting"])]
        for r in engine.compare_weightings(cal, k, a):
            note = r.note if r.problem is None else r.note.replace(r.problem.message, prep.located(r.problem))
            note = f"{note}; {WEIGHTING_AFTER_CHOICE}" if r.picked else note
            rows.append([r.scheme, r.order, *column((r.sum_abs_deviation, r.max_abs_deviation, r.spread_p)),
                         "picked" if r.picked else None, note or None])
        return rows

    return cached("weighting", prep, (k, a), compute)
