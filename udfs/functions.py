"""The CALIB_* worksheet functions.

Each takes cell values as the spreadsheet hands them over and returns a 2-D
list of cells (rows), a plain number (CALIB_ORDER) or text. Numbers go out as
full doubles, not-applicable cells as None (empty). Bad input gives one cell of
plain text that names the argument, the position and what to do; nothing
raises into the spreadsheet.

Under weights, a new reading's variance is sigma^2 / w0: for a scheme, w0 is
the scheme at the new point (1/x0 or 1/x0^2; for 1/y and 1/y^2 the fitted y at
x0, in CALIB_PREDICT and CALIB_INVERSE alike); for a range of weights, 1/w0 is
interpolated linearly in x between the standards' mean 1/w per level and held
constant beyond them.
"""

from __future__ import annotations

import functools
import inspect
import math
import platform

import numpy as np
import scipy

from . import VERSION, engine
from .catalogue import ARGUMENTS, CAUTION, HEADERS, LIMITS_AFTER_CHOICE, LIMITS_CAUTION, WEIGHTING_AFTER_CHOICE
from .coercion import (ERROR_TEXTS, CellError, cell_numbers, describe, flatten, is_omitted, number_option,
                       numbers_or_blank, scalar, text_option)
from .engine import acceptance
from .engine.validation import (CRITERIA_NUMBERS, check_alpha, check_count, check_level, check_order,
                                check_replicates, check_rule, order_limit)
from .engine.words import lack_of_fit_note, term_name
from .prepared import RESULTS, SCHEMES, calibration, prepare, prepare_named
from .registration import declared

worksheet_function = declared(ARGUMENTS)  # each argument described by ARGUMENTS[its name]


# checks that name single standards: their rows also name the excluded ones, apart from the flagged
POINT_CHECKS = ("outliers", "influential points")


def _cell(v):
    """A float for the sheet, or None where not applicable."""
    if v is None:
        return None
    v = float(v)
    return v if math.isfinite(v) else None


def _column(values) -> list:
    """_cell of each of a sequence of Python floats."""
    if all(map(math.isfinite, values)):
        return list(values)
    finite = math.isfinite
    return [v if finite(v) else None for v in values]


def _arguments_problem(f, args: tuple, kwargs: dict) -> str | None:
    """What is wrong with the number of arguments of a call of f, in words, or None when they fit."""
    signature = inspect.signature(f)
    try:
        signature.bind(*args, **kwargs)
    except TypeError:
        names = list(signature.parameters)
        needed = sum(p.default is inspect.Parameter.empty for p in signature.parameters.values())
        given = len(args) + len(kwargs)
        takes = (f"{needed} to {len(names)} arguments" if needed < len(names) else
                 f"{len(names)} argument{'' if len(names) == 1 else 's'}" if names else "no arguments")
        listed = f" ({', '.join(names)})" if names else ""
        return f"{f.__name__.upper()} takes {takes}{listed}; {given} {'was' if given == 1 else 'were'} given"
    return None


def _guarded(single: bool = False):
    """Turn CellError (and any engine error) into one cell of text; never a traceback."""

    def wrap(f):
        @functools.wraps(f)
        def inner(*args, **kwargs):
            try:
                return f(*args, **kwargs)
            except CellError as err:
                message = str(err)
            except engine.CalibrationError as err:
                message = err.message
            except OverflowError:
                message = ("the numbers are too large or too small for double precision in this computation; "
                           "express x and y in other units and try again")
            except Exception as err:  # noqa: BLE001 - a cell must never show a traceback
                message = (isinstance(err, TypeError) and _arguments_problem(f, args, kwargs)
                           or f"internal error ({type(err).__name__}: {err}); please report it with the workbook")
            return message if single else [[message]]

        return inner

    return wrap


def _cached(name: str, prep, options: tuple, compute):
    rows = RESULTS.get((name, prep.key, prep.layout, options), compute)
    return [list(r) for r in rows] if isinstance(rows, list) else rows


def _option(v, name: str, example: str, default, check):
    """An optional number: its default when omitted, else as the engine's ``check`` accepts it."""
    value = number_option(v, name, example)
    return default if value is None else check(value)


def _max_order(v):
    return _option(v, "max_order", "a whole number such as 3", None, lambda k: check_count(k, "max_order"))


def _alpha(v):
    return _option(v, "alpha", "a level such as 0.05", 0.05, check_alpha)


def _level(v):
    return _option(v, "level", "a level such as 0.95", 0.95, check_level)


def _order(v):
    return _option(v, "order", "a whole number such as 2, or the CALIB_ORDER cell", None,
                   lambda k: check_count(k, "order"))


def _fitted(prep, order):
    """The calibration to use, the order, and a function that says why this order and with which
    settings (in words: only CALIB_STATS shows them)."""
    try:
        default = calibration(prep)
    except CellError:
        if order is None:
            raise
        default = None
    choice = None if default is None else engine.choose_order(default)
    if order is None:
        return default, choice.order, lambda: (engine.order_reason(default, choice), choice.settings)
    if default is not None and order <= default.max_order:
        cal = default
    else:
        n, m = prep.x.size, np.unique(prep.x).size
        check_order(order, "order", n, m)
        cal = calibration(prep, max_order=order)

    def why() -> tuple[str, str]:
        given = (f"order {order} given as the order argument (a number, or a cell such as CALIB_ORDER with its "
                 "own rule, alpha and max order)")
        if choice is None:
            return f"{given}. {engine.lack_of_fit_words(cal, order)}", "order argument"
        settings = f"order argument; for comparison {choice.settings}"
        if choice.order == order:
            return f"{given}; the default rule picks the same order: {engine.order_reason(default, choice)}", settings
        return (f"{given}. {engine.lack_of_fit_words(cal, order)} For comparison, the default rule picks order "
                f"{choice.order}: {engine.order_reason(default, choice)}", settings)

    return cal, order, why


@worksheet_function
@_guarded(single=True)
def calib_order(x, y, max_order=None, alpha=None, rule=None, weights=None, exclude=None):
    """The chosen order of the calibration polynomial (one number)."""
    prep = prepare(x, y, weights, exclude)
    k, a = _max_order(max_order), _alpha(alpha)
    r = engine.DEFAULT_RULE if is_omitted(rule) else check_rule(scalar(rule, "rule"))
    return _cached("order", prep, (k, a, r), lambda: engine.choose_order(calibration(prep, k), r, a).order)


@worksheet_function
@_guarded()
def calib_orders(x, y, max_order=None, alpha=None, weights=None, exclude=None):
    """Header, then one row per order 1..max: df, SD, R², adjusted and predicted R², AICc, BIC, p-values, rules."""
    prep = prepare(x, y, weights, exclude)
    k, a = _max_order(max_order), _alpha(alpha)

    def compute():
        cal = calibration(prep, k)
        table = cal.sequential_table()
        picks = {rule: engine.choose_order(cal, rule, a).order for rule in engine.RULES}
        rows = [list(HEADERS["orders"])]
        for order in range(1, cal.max_order + 1):
            st = cal.stats(order)
            lof = st.lack_of_fit
            rows.append([order, st.df_resid, _cell(st.residual_sd), _cell(st.r_squared), _cell(st.adj_r_squared),
                         _cell(st.predicted_r_squared), _cell(st.aicc), _cell(st.bic),
                         _cell(table.terms[order - 1].test.p_value), _cell(cal.step_test(order).p_value),
                         _cell(lof.test.p_value) if lof else None,
                         ", ".join(r for r in engine.RULES if picks[r] == order) or None])
        return rows

    return _cached("orders", prep, (k, a), compute)


@worksheet_function
@_guarded()
def calib_seqf(x, y, max_order=None, weights=None, exclude=None):
    """Header, then the sequential (Type I) ANOVA table: one row per term, residual, lack of fit (of the max
    order), pure error, total; then a row of words when a test does not apply."""
    prep = prepare(x, y, weights, exclude)
    k = _max_order(max_order)

    def compute():
        cal = calibration(prep, k)
        table = cal.sequential_table()
        rows = [list(HEADERS["seqf"])]
        for r in table.terms:
            rows.append([term_name(r.term), 1, _cell(r.ss), _cell(r.ss), _cell(r.test.statistic),
                         _cell(r.test.p_value)])
        rows.append(["residual", table.df_resid, _cell(table.ss_resid), _cell(table.ss_resid / table.df_resid),
                     None, None])
        lof = table.lack_of_fit
        if lof is not None:
            rows.append([f"lack of fit (order {table.max_order})", lof.df_lack_of_fit, _cell(lof.ss_lack_of_fit),
                         _cell(lof.ss_lack_of_fit / lof.df_lack_of_fit), _cell(lof.test.statistic),
                         _cell(lof.test.p_value)])
            rows.append(["pure error", lof.df_pure_error, _cell(lof.ss_pure_error),
                         _cell(lof.ss_pure_error / lof.df_pure_error), None, None])
        rows.append(["total", table.df_total, _cell(table.ss_total), None, None, None])
        if cal.exact_order is not None:
            rows.append([f"the data fit exactly at order {cal.exact_order}: the residual is rounding error, "
                         "so no F test applies", None, None, None, None, None])
        elif lof is not None and (note := lack_of_fit_note(lof)):
            rows.append([f"lack of fit: {note}", None, None, None, None, None])
        return rows

    return _cached("seqf", prep, (k,), compute)


@worksheet_function
@_guarded()
def calib_coefs(x, y, order=None, level=None, weights=None, exclude=None):
    """Header, then one row per term (intercept, x, x^2 ...): coefficient, std error, t, p-value, lower, upper."""
    prep = prepare(x, y, weights, exclude)
    k, lev = _order(order), _level(level)

    def compute():
        cal, chosen, _ = _fitted(prep, k)
        fit = cal.fit(chosen)
        rows = [list(HEADERS["coefs"])]
        for j, (b, se, t, p, (lo, hi)) in enumerate(zip(fit.coefficients, fit.std_errors, fit.t_values,
                                                        fit.p_values, fit.interval(lev))):
            rows.append([term_name(j), _cell(b), _cell(se), _cell(t), _cell(p), _cell(lo), _cell(hi)])
        return rows

    return _cached("coefs", prep, (k, lev), compute)


@worksheet_function
@_guarded()
def calib_stats(x, y, order=None, weights=None, exclude=None):
    """Header, then label/value rows: points, order and why, residual SD, R² family, AICc, BIC, F, lack of fit, range."""
    prep = prepare(x, y, weights, exclude)
    k = _order(order)

    def compute():
        cal, chosen, why = _fitted(prep, k)
        st = cal.stats(chosen)
        lof = st.lack_of_fit
        reason, settings = why()
        return [list(HEADERS["stats"]),
                ["points used", prep.x.size], ["points skipped", prep.skipped],
                ["points excluded", len(prep.excluded)],
                *(["excluded standard", prep.describe_excluded(e)] for e in prep.excluded), ["order", chosen],
                ["why this order", reason], ["settings", settings], ["residual df", st.df_resid],
                ["residual SD", _cell(st.residual_sd)],
                ["R²", _cell(st.r_squared)], ["adjusted R²", _cell(st.adj_r_squared)],
                ["predicted R²", _cell(st.predicted_r_squared)], ["AICc", _cell(st.aicc)], ["BIC", _cell(st.bic)],
                ["F", _cell(st.overall.statistic)], ["p-value", _cell(st.overall.p_value)],
                ["lack-of-fit p", _cell(lof.test.p_value) if lof else None],
                ["x min", _cell(prep.x.min())], ["x max", _cell(prep.x.max())],
                ["weights", cal.weighting.label], ["caution", CAUTION]]

    return _cached("stats", prep, (k,), compute)


def _aligned(cells_arg, name: str):
    """A range whose output rows stay aligned with it: the filled cells' values, their positions, the
    number of rows, and a note for each cell that is not a number (that row gets the note, the others
    are computed). A range with no values yet (a template before the samples are entered) gives one row
    whose note says so."""
    cells = flatten(cells_arg, name)
    values, blank, problems = cell_numbers(cells)
    notes = {i: f"{cells.where(i)}: {why}; enter a number or clear the cell" for i, why in problems}
    if values.size and not (blank.any() or notes):
        return values, range(values.size), values.size, notes
    filled = np.flatnonzero(~blank & ~np.isnan(values))
    if not (filled.size or notes):
        return values[filled], (), 1, {0: f"{name}: no values yet; the results appear when the cells are filled"}
    return values[filled], tuple(filled.tolist()), len(cells.values), notes


def _rows(size: int, width: int, notes: dict) -> list:
    """Empty output rows, the note of a bad cell in the last column of its row."""
    rows = [[None] * width for _ in range(size)]
    for i, note in notes.items():
        rows[i][-1] = note
    return rows


@worksheet_function
@_guarded()
def calib_predict(x, y, new_x, order=None, level=None, weights=None, exclude=None):
    """One row per new_x cell (no header): predicted y, mean lower/upper, prediction lower/upper, note."""
    prep = prepare(x, y, weights, exclude)
    k, lev = _order(order), _level(level)
    values, filled, size, notes = _aligned(new_x, "new_x")

    def compute():
        cal, chosen, _ = _fitted(prep, k)
        rows = _rows(size, 6, notes)
        for i, p in zip(filled, engine.predict(cal, values, chosen, lev) if values.size else ()):
            rows[i] = _column((p.fitted, p.mean_lower, p.mean_upper, p.pred_lower, p.pred_upper)) + [p.note or None]
        return rows

    return _cached("predict", prep, (k, lev, values.tobytes(), filled, size, tuple(notes.items())), compute)


def _replicates(v):
    return _option(v, "replicates", "a whole number such as 3", 1,
                   lambda m: int(check_replicates(m, 1)[0]))


@worksheet_function
@_guarded()
def calib_inverse(x, y, reading, replicates=None, order=None, level=None, weights=None, exclude=None):
    """One row per reading cell (no header): x estimate, lower, upper, note."""
    return _per_reading("inverse", x, y, reading, replicates, order, level, weights, exclude, 4, engine.inverse,
                        lambda e: _column((e.x, e.lower, e.upper)) + [e.note or None])


def _per_reading(kind, x, y, reading, replicates, order, level, weights, exclude, width, answers, row):
    """One row of ``width`` cells per reading cell: ``answers(cal, readings, order, replicates, level)`` gives
    each usable reading's result and ``row`` its cells; an empty or unusable reading keeps its note."""
    prep = prepare(x, y, weights, exclude)
    reps = _replicates(replicates)
    k, lev = _order(order), _level(level)
    values, filled, size, notes = _aligned(reading, "reading")

    def compute():
        cal, chosen, _ = _fitted(prep, k)
        rows = _rows(size, width, notes)
        for i, answer in zip(filled, answers(cal, values, chosen, reps, lev) if values.size else ()):
            rows[i] = row(answer)
        return rows

    return _cached(kind, prep, (reps, k, lev, values.tobytes(), filled, size, tuple(notes.items())), compute)


def _excluded_rows(cal, order: int, excluded) -> list[list]:
    """Residual-table rows of excluded standards, against a curve they took no part in: fitted value at
    their x, residual, back-calculated x (the inverse of their response within the calibrated range) and
    deviation %; no leverage, studentized residual or Cook's distance."""
    rows = []
    for e in excluded:
        note = f"excluded: {e.reason}"
        if not (math.isfinite(e.x) and math.isfinite(e.y)):
            rows.append([None] * 7 + [note])
            continue
        fitted = engine.predict(cal, [e.x], order)[0].fitted
        read = engine.inverse(cal, [e.y], order)[0]
        back = read.x
        if not math.isfinite(back) and read.note:
            note = f"{note}; {engine.why_no_estimate(read.note)}"
        deviation = 100.0 * (back - e.x) / abs(e.x) if e.x != 0 else math.nan
        rows.append([_cell(fitted), _cell(e.y - fitted), None, None, None, _cell(back), _cell(deviation), note])
    return rows


@worksheet_function
@_guarded()
def calib_residuals(x, y, order=None, weights=None, exclude=None):
    """One row per input row (no header; blank where skipped): fitted, residual, studentized, leverage, Cook's D,
    back-calculated x, deviation %, note."""
    prep = prepare(x, y, weights, exclude)
    k = _order(order)

    def compute():
        cal, chosen, _ = _fitted(prep, k)
        d = cal.order(chosen).diagnostics()
        columns = [_column(c) for c in (d.fitted, d.residual, d.studentized, d.leverage, d.cooks_distance,
                                        d.back_calculated, d.deviation_percent)]
        filled = [list(row) for row in zip(*columns, [note or None for note in d.notes])]
        if not (prep.skipped or prep.excluded):
            return filled
        rows = [[None] * 8 for _ in range(prep.n_input)]
        for i, row in zip(prep.used.tolist(), filled):
            rows[i] = row
        for e, row in zip(prep.excluded, _excluded_rows(cal, chosen, prep.excluded)):
            rows[e.position] = row
        return rows

    return _cached("residuals", prep, (k,), compute)


@worksheet_function
@_guarded()
def calib_checks(x, y, order=None, alpha=None, weights=None, exclude=None):
    """Header, then one row per check of the curve: check, statistic, p-value, verdict, detail."""
    prep = prepare(x, y, weights, exclude)
    k, a = _order(order), _alpha(alpha)

    def compute():
        cal, chosen, _ = _fitted(prep, k)
        rows = [list(HEADERS["checks"])]
        excluded = "; ".join(f"excluded from the fit (not tested): {prep.describe_excluded(e)}"
                             for e in prep.excluded)
        for c in engine.curve_checks(cal, chosen, a, prep.label):
            detail = c.detail
            if excluded and c.name in POINT_CHECKS:
                detail = f"{detail}; {excluded}" if detail else excluded
            rows.append([c.name, _cell(c.statistic), _cell(c.p_value), c.verdict, detail or None])
        rows.append(["caution", None, None, None, CAUTION])
        return rows

    return _cached("checks", prep, (k, a), compute)


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
    return [item, None, None, None, None, None, _cell(test.statistic), test.df_num, test.df_den, _cell(test.p_value),
            verdict, detail]


def _percent(difference: float, reference: float) -> str:
    return f"{100.0 * difference / reference:+.3g} % of the reference" if reference else "reference is 0"


@worksheet_function
@_guarded()
def calib_compare(x, y, ref_x, ref_y, at=None, order=None, level=None, weights=None, exclude=None):
    """Header, then today's calibration against a reference: tests that the curves coincide, have the same
    shape and the same residual SD; coefficient differences; fitted responses compared at each x of `at`."""
    scheme = _scheme_only(weights)
    prep = prepare(x, y, scheme, exclude)
    try:
        ref = prepare_named(ref_x, ref_y, scheme, ("ref_x", "ref_y"))
    except CellError as err:
        raise CellError(f"reference calibration: {err}") from None
    k, lev = _order(order), _level(level)
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
            today, chosen, _ = _fitted(prep, k)
            how = "given as the order argument"
        reference = reference_fitted(max(1, min(chosen, order_limit(ref.x.size, np.unique(ref.x).size))))
        c = engine.compare(today, reference, chosen, lev, values)
        alpha = 1.0 - lev
        shared = f"; both curves of order {chosen} ({how}); tested at {alpha:.3g}"
        approximate = ("; approximate, since the residual SDs differ" if c.same_sd.p_value < alpha else "")
        no_replicates = [name for name, p in (("today's", prep), ("the reference", ref)) if np.unique(p.x).size == p.x.size]
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
        sd[1:3] = [_cell(c.reference_sd), _cell(c.today_sd)]
        rows.append(sd)
        for r in c.coefficients:
            rows.append([term_name(r.item), _cell(r.reference), _cell(r.today), _cell(r.difference), _cell(r.lower),
                         _cell(r.upper), None, None, None, _cell(r.p_value), None,
                         _percent(r.difference, r.reference)])
        for r, back in zip(c.responses, c.read_back):
            reads = (f"the reference curve reads today's response as x = {back:.6g}" if math.isfinite(back)
                     else "today's response lies outside the reference's calibrated range")
            rows.append([f"at x = {r.item:g}", _cell(r.reference), _cell(r.today), _cell(r.difference),
                         _cell(r.lower), _cell(r.upper), None, None, None, _cell(r.p_value), None,
                         f"{_percent(r.difference, r.reference)} response; {reads}"])
        rows.append(["caution", *[None] * 10, CAUTION])
        return rows

    return _cached("compare", prep, (ref.key, k, lev, values.tobytes()), compute)


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
@_guarded()
def calib_limits(x, y, blank=None, replicates=None, order=None, alpha=None, weights=None, exclude=None):
    """Header, then one row per method (prediction band, ISO 11843-2, ICH residual SD and intercept SE, blank
    readings): critical response, decision, detection and quantitation limits, note."""
    prep = prepare(x, y, weights, exclude)
    reps, k, a = _replicates(replicates), _order(order), _alpha(alpha)
    readings, problem = _blank_readings(blank)

    def compute():
        cal, chosen, _ = _fitted(prep, k)
        rows = [list(HEADERS["limits"])]
        for r in engine.detection_limits(cal, chosen, readings, reps, a):
            rows.append([r.method, *_column((r.critical_response, r.decision_limit, r.detection_limit,
                                             r.quantitation_limit)), r.note or None])
        if problem:
            rows.append(["blank readings", None, None, None, None, problem])
        chosen_here = f"; {LIMITS_AFTER_CHOICE}" if k is None else ""
        rows.append(["caution", None, None, None, None, f"{LIMITS_CAUTION}{chosen_here}. {CAUTION}"])
        return rows

    key = (reps, k, a, None if readings is None else readings.tobytes(), problem)
    return _cached("limits", prep, key, compute)


@worksheet_function
@_guarded()
def calib_weighting(x, y, order=None, alpha=None, exclude=None):
    """Header, then one row per weighting scheme: order, sum and largest |deviation %|, spread p-value, picked,
    note; with replicates a last row for weights 1/x^2b from the replicate SDs."""
    prep = prepare(x, y, None, exclude)
    k, a = _order(order), _alpha(alpha)

    def compute():
        _fitted(prep, k)  # the standards' own problems, in the family's words
        rows = [list(HEADERS["weighting"])]
        for r in engine.compare_weightings(prep.x, prep.y, k, a):
            note = f"{r.note}; {WEIGHTING_AFTER_CHOICE}" if r.picked else r.note
            rows.append([r.scheme, r.order, *_column((r.sum_abs_deviation, r.max_abs_deviation, r.spread_p)),
                         "picked" if r.picked else None, prep.located(note) or None])
        return rows

    return _cached("weighting", prep, (k, a), compute)


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
        i = err.index if err.index is not None and err.index < cells.size else cells.size - 1
        raise CellError(err.message.replace(f"criteria[{err.index}]", cells.where(i))) from None


def _verdict_words(verdict) -> tuple[str, str]:
    return ("acceptable" if verdict.acceptable else "not acceptable"), "; ".join(verdict.reasons)


@worksheet_function
@_guarded()
def calib_acceptance(x, y, criteria, order=None, weights=None, exclude=None):
    """Header, then each standard read back against the set's limit, each criterion of the set, the run's
    verdict with reasons, the standards the set would let you exclude (one at a time) and the caution."""
    prep = prepare(x, y, weights, exclude)
    crit = _criteria(criteria)
    k = _order(order)

    def compute():
        cal, chosen, _ = _fitted(prep, k)
        excluded = len(prep.excluded)
        verdict = acceptance.judge(cal, chosen, crit, excluded)
        how = "given as the order argument" if k is not None else "the order the default rule picks"
        rows = [list(HEADERS["acceptance"]),
                ["criteria", None, None, None, None, crit.name, f"{crit.numbers()}. Source: {crit.source}"]]
        standards = {int(prep.used[s.point]): [prep.label(s.point), _cell(s.x), _cell(s.back_calculated),
                                               _cell(s.deviation), _cell(s.limit),
                                               None if s.passed is None else ("pass" if s.passed else "fail"),
                                               s.reason]
                     for s in verdict.standards}
        counted = ("; counted as not passing" if crit.min_passing == crit.min_passing else "")
        for e, row in zip(prep.excluded, _excluded_rows(cal, chosen, prep.excluded)):
            standards[e.position] = [f"standard {e.position + 1} of {prep.n_input}", _cell(e.x), row[5], row[6],
                                     None, "excluded", f"{row[7]}{counted}"]
        rows += [standards[i] for i in sorted(standards)]
        for c in verdict.criteria:
            rows.append([c.name, None, None, _cell(c.value), _cell(c.limit), "met" if c.met else "not met",
                         c.detail])
        result, reasons = _verdict_words(verdict)
        rows.append(["verdict", None, None, None, None, result, f"{reasons} (curve of order {chosen}, {how})"])
        rows += _exclusion_rows(prep, cal, chosen, crit, excluded)
        rows.append(["caution", None, None, None, None, None, CAUTION])
        return rows

    return _cached("acceptance", prep, (repr(crit), k), compute)  # repr: a nan (a number left empty) equals itself


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
        rows.append([f"could exclude {j}", _cell(step.x), _cell(step.back_calculated), _cell(step.deviation),
                     _cell(step.limit), result, "; ".join(words)])
    rows.append(["could exclude", None, None, None, None, None,
                 "nothing is excluded here: exclusion stays the analyst's decision, recorded in exclude with a "
                 "reason"])
    return rows


@worksheet_function
@_guarded()
def calib_uncertainty(x, y, reading, replicates=None, order=None, level=None, weights=None, exclude=None):
    """One row per reading cell (no header): x estimate, standard uncertainty, df, coverage factor, expanded
    uncertainty, relative uncertainty %, note."""
    def row(u):
        given = math.isfinite(u.x)
        return [_cell(u.x), _cell(u.u), u.df if given else None, _cell(u.k) if given else None,
                _cell(u.expanded), _cell(u.relative_percent), u.note or None]

    return _per_reading("uncertainty", x, y, reading, replicates, order, level, weights, exclude, 7,
                        engine.uncertainty, row)


@worksheet_function
@_guarded()
def calib_labels(name):
    """The header row of a table, e.g. CALIB_LABELS("predict") for the headerless CALIB_PREDICT."""
    key = text_option(name, "name", "", tuple(HEADERS))
    if not key:
        raise CellError("name: give the table's name, one of " + ", ".join(f"'{h}'" for h in HEADERS))
    return [list(HEADERS[key])]


@worksheet_function
@_guarded(single=True)
def calib_version():
    """Version of the add-in and of its numeric libraries."""
    return (f"degreewise {VERSION}; numpy {np.__version__}; scipy {scipy.__version__}; "
            f"Python {platform.python_version()}")
