"""CALIB_COMPARE: today's calibration against a reference."""

from __future__ import annotations

import math

import numpy as np

from .. import engine
from ..catalogue import CAUTION, HEADERS
from ..coercion import CellError, flatten, is_omitted, numbers_or_blank
from ..engine.validation import order_limit
from ..engine.words import term_name
from ..prepared import SCHEMES, calibration, prepare, prepare_named
from .frame import cached, cell, curve_for, guarded, parse_level, parse_order, worksheet_function


def _scheme_only(weights):
    """CALIB_COMPARE's weights: omitted or a scheme applied to each set on its own data."""
    if is_omitted(weights):
        return None
    value = weights
    while isinstance(value, (list, tuple)) and len(value) == 1:
        value = value[0]
    if not isinstance(value, str):
        raise CellError("weights: CALIB_COMPARE takes a scheme (" + ", ".join(f"'{s}'" for s in SCHEMES)
                        + ") applied to each set on its own data, not a range of weights")
    return value


def _test_row(item: str, test, alpha: float, differ: str, agree: str, extra: str = "") -> list:
    if test.p_value != test.p_value:  # the engine tests nothing on rounding error
        return [item, None, None, None, None, None, None, test.df_num, test.df_den, None, "n/a",
                "not testable: both sets fit exactly at this order (residuals at the rounding level of the "
                f"responses){extra}"]
    verdict, words = ("warning", differ) if test.p_value < alpha else ("ok", agree)
    detail = f"F = {test.statistic:.4g} on {test.df_num} and {test.df_den} df: {words}{extra}"
    return [item, None, None, None, None, None, cell(test.statistic), test.df_num, test.df_den, cell(test.p_value),
            verdict, detail]


def _percent(difference: float, reference: float) -> str:
    return f"{100.0 * difference / reference:+.3g} % of the reference" if reference else "reference is 0"


@worksheet_function
@guarded()
def calib_compare(x, y, ref_x, ref_y, at=None, order=None, level=None, weights=None, exclude=None):
    """Header, then today's calibration against a reference: tests that the curves coincide, have the same
    shape and the same residual SD; coefficient differences; fitted responses compared at each x of `at`."""
    scheme = _scheme_only(weights)
    prep = prepare(x, y, scheme, exclude)
    try:
        ref = prepare_named(ref_x, ref_y, scheme, ("ref_x", "ref_y"))
    except CellError as err:
        raise CellError(f"reference calibration: {err}") from None
    k, lev = parse_order(order), parse_level(level)
    values, blank = numbers_or_blank(flatten(at, "at"))
    values = values[~blank]

    def reference_fitted(max_order: int):
        try:
            return calibration(ref, max_order=max_order)
        except CellError as err:
            raise CellError(f"reference calibration (ref_x, ref_y): {err}") from None

    def compute():
        if k is None:  # one order for both sets, chosen from all their standards together
            today = calibration(prep)
            chosen = engine.shared_order(today, reference_fitted(1)).order
            how = "the order the default rule picks for both sets' standards together"
            if chosen > today.max_order:
                today = calibration(prep, max_order=chosen)
        else:
            today, chosen, _ = curve_for(prep, k)
            how = "given as the order argument"
        reference = reference_fitted(max(1, min(chosen, order_limit(ref.x.size, np.unique(ref.x).size))))
        c = engine.compare(today, reference, chosen, lev, values)
        alpha = 1.0 - lev
        shared = f"; both curves of order {chosen} ({how}); tested at {alpha:.3g}"
        approximate = ("; approximate, since the residual SDs differ" if c.same_sd.p_value < alpha else "")
        no_replicates = [name for name, cal in (("today's", today), ("the reference", reference))
                         if cal.n_distinct == cal.n_points]
        sd_extra = "".join(f"; {name} standards have no replicates, so their residual SD includes any lack of fit"
                           for name in no_replicates)
        rows = [list(HEADERS["compare"]),
                _test_row("same curve", c.same_curve, alpha, "the curves differ beyond their scatter",
                          "no evidence that the curves differ", shared + approximate),
                _test_row("same shape", c.same_shape, alpha,
                          "the curves differ in more than the intercept (sensitivity or curvature changed)",
                          "no evidence of a change beyond the intercept", approximate)]
        sd = _test_row("same residual SD", c.same_sd, alpha, "the residual SDs differ (two-sided F test)",
                       "no evidence that the residual SDs differ (two-sided F test)", sd_extra)
        sd[1:3] = [cell(c.reference_sd), cell(c.today_sd)]
        rows.append(sd)
        for r in c.coefficients:
            rows.append([term_name(r.item), cell(r.reference), cell(r.today), cell(r.difference), cell(r.lower),
                         cell(r.upper), None, None, None, cell(r.p_value), None,
                         _percent(r.difference, r.reference)])
        for r, back in zip(c.responses, c.read_back):
            reads = (f"the reference curve reads today's response as x = {back:.6g}" if math.isfinite(back)
                     else "today's response lies outside the reference's calibrated range")
            rows.append([f"at x = {r.item:g}", cell(r.reference), cell(r.today), cell(r.difference),
                         cell(r.lower), cell(r.upper), None, None, None, cell(r.p_value), None,
                         f"{_percent(r.difference, r.reference)} response; {reads}"])
        rows.append(["caution", *[None] * 10, CAUTION])
        return rows

    return cached("compare", prep, (ref.key, k, lev, values.tobytes()), compute)
