"""The fit and its order: CALIB_ORDER, CALIB_ORDERS, CALIB_SEQF, CALIB_COEFS, CALIB_STATS."""

from __future__ import annotations

from .. import engine
from ..catalogue import CAUTION, HEADERS
from ..coercion import is_omitted, scalar
from ..engine.validation import check_rule
from ..engine.words import lack_of_fit_note, term_name
from ..prepared import calibration, prepare
from .frame import cached, cell, curve_for, guarded, parse_alpha, parse_level, parse_max_order, parse_order, \
    worksheet_function


@worksheet_function
@guarded(single=True)
def calib_order(x, y, max_order=None, alpha=None, rule=None, weights=None, exclude=None):
    """The chosen order of the calibration polynomial (one number)."""
    prep = prepare(x, y, weights, exclude)
    k, a = parse_max_order(max_order), parse_alpha(alpha)
    r = engine.DEFAULT_RULE if is_omitted(rule) else check_rule(scalar(rule, "rule"))
    return cached("order", prep, (k, a, r), lambda: engine.choose_order(calibration(prep, k), r, a).order)


@worksheet_function
@guarded()
def calib_orders(x, y, max_order=None, alpha=None, weights=None, exclude=None):
    """Header, then one row per order 1..max: df, SD, R², adjusted and predicted R², AICc, BIC, p-values, rules."""
    prep = prepare(x, y, weights, exclude)
    k, a = parse_max_order(max_order), parse_alpha(alpha)

    def compute():
        cal = calibration(prep, k)
        table = cal.sequential_table()
        picks = {rule: engine.choose_order(cal, rule, a).order for rule in engine.RULES}
        rows = [list(HEADERS["orders"])]
        for order in range(1, cal.max_order + 1):
            st = cal.stats(order)
            lof = st.lack_of_fit
            rows.append([order, st.df_resid, cell(st.residual_sd), cell(st.r_squared), cell(st.adj_r_squared),
                         cell(st.predicted_r_squared), cell(st.aicc), cell(st.bic),
                         cell(table.terms[order - 1].test.p_value), cell(cal.step_test(order).p_value),
                         cell(lof.test.p_value) if lof else None,
                         ", ".join(r for r in engine.RULES if picks[r] == order) or None])
        return rows

    return cached("orders", prep, (k, a), compute)


@worksheet_function
@guarded()
def calib_seqf(x, y, max_order=None, weights=None, exclude=None):
    """Header, then the sequential (Type I) ANOVA table: one row per term, residual, lack of fit (of the max
    order), pure error, total; then a row of words when a test does not apply."""
    prep = prepare(x, y, weights, exclude)
    k = parse_max_order(max_order)

    def compute():
        cal = calibration(prep, k)
        table = cal.sequential_table()
        rows = [list(HEADERS["seqf"])]
        for r in table.terms:
            rows.append([term_name(r.term), 1, cell(r.ss), cell(r.ss), cell(r.test.statistic),
                         cell(r.test.p_value)])
        rows.append(["residual", table.df_resid, cell(table.ss_resid), cell(table.ss_resid / table.df_resid),
                     None, None])
        lof = table.lack_of_fit
        if lof is not None:
            rows.append([f"lack of fit (order {table.max_order})", lof.df_lack_of_fit, cell(lof.ss_lack_of_fit),
                         cell(lof.ss_lack_of_fit / lof.df_lack_of_fit), cell(lof.test.statistic),
                         cell(lof.test.p_value)])
            rows.append(["pure error", lof.df_pure_error, cell(lof.ss_pure_error),
                         cell(lof.ss_pure_error / lof.df_pure_error), None, None])
        rows.append(["total", table.df_total, cell(table.ss_total), None, None, None])
        if cal.exact_order is not None:
            rows.append([f"the data fit exactly at order {cal.exact_order}: the residual is rounding error, "
                         "so no F test applies", None, None, None, None, None])
        elif lof is not None and (note := lack_of_fit_note(lof)):
            rows.append([f"lack of fit: {note}", None, None, None, None, None])
        return rows

    return cached("seqf", prep, (k,), compute)


@worksheet_function
@guarded()
def calib_coefs(x, y, order=None, level=None, weights=None, exclude=None):
    """Header, then one row per term (intercept, x, x^2 ...): coefficient, std error, t, p-value, lower, upper."""
    prep = prepare(x, y, weights, exclude)
    k, lev = parse_order(order), parse_level(level)

    def compute():
        cal, chosen, _ = curve_for(prep, k)
        fit = cal.fit(chosen)
        rows = [list(HEADERS["coefs"])]
        for j, (b, se, t, p, (lo, hi)) in enumerate(zip(fit.coefficients, fit.std_errors, fit.t_values,
                                                        fit.p_values, fit.interval(lev))):
            rows.append([term_name(j), cell(b), cell(se), cell(t), cell(p), cell(lo), cell(hi)])
        return rows

    return cached("coefs", prep, (k, lev), compute)


@worksheet_function
@guarded()
def calib_stats(x, y, order=None, weights=None, exclude=None):
    """Header, then label/value rows: points, order and why, residual SD, R² family, AICc, BIC, F, lack of fit, range."""
    prep = prepare(x, y, weights, exclude)
    k = parse_order(order)

    def compute():
        cal, chosen, why = curve_for(prep, k)
        st = cal.stats(chosen)
        lof = st.lack_of_fit
        reason, settings = why()
        return [list(HEADERS["stats"]),
                ["points used", prep.x.size], ["points skipped", prep.skipped],
                ["points excluded", len(prep.excluded)],
                *(["excluded standard", prep.describe_excluded(e)] for e in prep.excluded), ["order", chosen],
                ["why this order", reason], ["settings", settings], ["residual df", st.df_resid],
                ["residual SD", cell(st.residual_sd)],
                ["R²", cell(st.r_squared)], ["adjusted R²", cell(st.adj_r_squared)],
                ["predicted R²", cell(st.predicted_r_squared)], ["AICc", cell(st.aicc)], ["BIC", cell(st.bic)],
                ["F", cell(st.overall.statistic)], ["p-value", cell(st.overall.p_value)],
                ["lack-of-fit p", cell(lof.test.p_value) if lof else None],
                ["x min", cell(prep.x.min())], ["x max", cell(prep.x.max())],
                ["weights", cal.weighting.label], ["caution", CAUTION]]

    return cached("stats", prep, (k,), compute)
