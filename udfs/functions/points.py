"""Rows per point: CALIB_PREDICT (per new x), CALIB_INVERSE and CALIB_UNCERTAINTY (per reading),
CALIB_RESIDUALS (per standard, excluded ones on the record).

Under weights, a new reading's variance is sigma^2 / w0: for a scheme, w0 is the scheme at the new point
(1/x0 or 1/x0^2; for 1/y and 1/y^2 the fitted y at x0, in CALIB_PREDICT and CALIB_INVERSE alike); for a
range of weights, 1/w0 is interpolated linearly in x between the standards' mean 1/w per level and held
constant beyond them.
"""

from __future__ import annotations

import math

from .. import engine
from ..prepared import prepare
from .frame import aligned, blank_rows, cached, cell, column, curve_for, guarded, parse_level, parse_order, \
    parse_replicates, worksheet_function


@worksheet_function
@guarded()
def calib_predict(x, y, new_x, order=None, level=None, weights=None, exclude=None):
    """One row per new_x cell (no header): predicted y, mean lower/upper, prediction lower/upper, note."""
    prep = prepare(x, y, weights, exclude)
    k, lev = parse_order(order), parse_level(level)
    values, filled, size, notes = aligned(new_x, "new_x")

    def compute():
        cal, chosen, _ = curve_for(prep, k)
        rows = blank_rows(size, 6, notes)
        for i, p in zip(filled, engine.predict(cal, values, chosen, lev) if values.size else ()):
            rows[i] = column((p.fitted, p.mean_lower, p.mean_upper, p.pred_lower, p.pred_upper)) + [p.note or None]
        return rows

    return cached("predict", prep, (k, lev, values.tobytes(), filled, size, tuple(notes.items())), compute)


@worksheet_function
@guarded()
def calib_inverse(x, y, reading, replicates=None, order=None, level=None, weights=None, exclude=None):
    """One row per reading cell (no header): x estimate, lower, upper, note."""
    return per_reading("inverse", x, y, reading, replicates, order, level, weights, exclude, 4, engine.inverse,
                        lambda e: column((e.x, e.lower, e.upper)) + [e.note or None])


def per_reading(kind, x, y, reading, replicates, order, level, weights, exclude, width, answers, row):
    """One row of ``width`` cells per reading cell: ``answers(cal, readings, order, replicates, level)`` gives
    each usable reading's result and ``row`` its cells; an empty or unusable reading keeps its note."""
    prep = prepare(x, y, weights, exclude)
    reps = parse_replicates(replicates)
    k, lev = parse_order(order), parse_level(level)
    values, filled, size, notes = aligned(reading, "reading")

    def compute():
        cal, chosen, _ = curve_for(prep, k)
        rows = blank_rows(size, width, notes)
        for i, answer in zip(filled, answers(cal, values, chosen, reps, lev) if values.size else ()):
            rows[i] = row(answer)
        return rows

    return cached(kind, prep, (reps, k, lev, values.tobytes(), filled, size, tuple(notes.items())), compute)


@worksheet_function
@guarded()
def calib_uncertainty(x, y, reading, replicates=None, order=None, level=None, weights=None, exclude=None):
    """One row per reading cell (no header): x estimate, standard uncertainty, df, coverage factor, expanded
    uncertainty, relative uncertainty %, note."""
    def row(u):
        given = math.isfinite(u.x)
        return [cell(u.x), cell(u.u), u.df if given else None, cell(u.k) if given else None,
                cell(u.expanded), cell(u.relative_percent), u.note or None]

    return per_reading("uncertainty", x, y, reading, replicates, order, level, weights, exclude, 7,
                        engine.uncertainty, row)


def excluded_rows(cal, order: int, excluded) -> list[list]:
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
        rows.append([cell(fitted), cell(e.y - fitted), None, None, None, cell(back), cell(deviation), note])
    return rows


@worksheet_function
@guarded()
def calib_residuals(x, y, order=None, weights=None, exclude=None):
    """One row per input row (no header; blank where skipped): fitted, residual, studentized, leverage, Cook's D,
    back-calculated x, deviation %, note."""
    prep = prepare(x, y, weights, exclude)
    k = parse_order(order)

    def compute():
        cal, chosen, _ = curve_for(prep, k)
        d = cal.order(chosen).diagnostics()
        columns = [column(c) for c in (d.fitted, d.residual, d.studentized, d.leverage, d.cooks_distance,
                                        d.back_calculated, d.deviation_percent)]
        filled = [list(row) for row in zip(*columns, [note or None for note in d.notes])]
        if not (prep.skipped or prep.excluded):
            return filled
        rows = [[None] * 8 for _ in range(prep.n_input)]
        for i, row in zip(prep.used.tolist(), filled):
            rows[i] = row
        for e, row in zip(prep.excluded, excluded_rows(cal, chosen, prep.excluded)):
            rows[e.position] = row
        return rows

    return cached("residuals", prep, (k,), compute)
