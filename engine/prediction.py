"""Forward prediction (x -> y) and inverse prediction (reading -> x) with intervals.

Forward: y0 = f(x0); the mean's interval is y0 +- t s sqrt(g'g) with g = R^-T z0,
the prediction interval of one new reading y0 +- t s sqrt(1/w0 + g'g)
(Draper & Smith, Applied Regression Analysis, 3rd ed., sec. 3.1).

Inverse: for a reading that is the mean of m replicates, the x estimate solves
f(x) = reading within the calibrated range; its interval is the set of x whose
prediction band for a mean of m readings, f(x) +- t s sqrt(1/(m w0(x)) + g'g)
(w0 as in forward prediction),
contains the reading (inverting the band; for order 1 this is Fieller's
interval: E. C. Fieller, J. R. Stat. Soc. Suppl. 7 (1940) 1-64; see also
Draper & Smith sec. 3.2). Bounds are sought up to half the range beyond either
end; a band that does not close there leaves that bound open.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

from .curve import ENDS, EXTEND, RANGE_NODES, Curve, newton_in_cells
from .linalg import powers
from .results import InverseEstimate, Prediction, Uncertainty
from .validation import check_level, check_replicates, check_vector

if TYPE_CHECKING:  # the calibration builds on this module (through its orders' checks)
    from .calibration import Calibration


_KINDS = np.array([0, 1, 2])  # inverse prediction's roots: the estimate, the lower end, the upper end
_EDGES = np.array([0.0, 1.0, -1.0])  # the band edge whose root each kind is (sign of the half-width)
for _a in (_KINDS, _EDGES):
    _a.flags.writeable = False


def _range_words(curve: Curve) -> str:
    return f"[{curve.x_min:.6g}, {curve.x_max:.6g}]"


def predict(cal: Calibration, new_x, order: int, level: float = 0.95) -> tuple[Prediction, ...]:
    """Fitted value, mean interval and prediction interval at each new x."""
    level = check_level(level)
    x0 = check_vector(new_x, "new_x", flat=True)
    curve = cal.order(order).curve
    t = curve.t_value(level)
    weighted = cal.weighting.weighted
    # an x far beyond the calibration's scale overflows to inf and its cells come out empty, without warnings
    with np.errstate(over="ignore", invalid="ignore"):
        z0 = cal.scaled_x(x0)
        fitted = curve.value(z0)  # curve units until the end
        var_mean = curve.mean_variance(z0)
        var_new = curve.s**2 * (cal.weighting.variance_factor(x0, _weight_response(curve, z0, fitted))
                                if weighted else 1.0)
        half_mean = t * np.sqrt(var_mean)
        half_pred = t * np.sqrt(var_new + var_mean)
        columns = curve.to_y(np.array([fitted, fitted - half_mean, fitted + half_mean, fitted - half_pred,
                                       fitted + half_pred])).tolist()
    far = ((x0 < curve.x_min) | (x0 > curve.x_max)).tolist()
    notes = [""] * x0.size
    if any(far):
        outside = f"x outside the calibrated range {_range_words(curve)}: extrapolation"
        notes = [outside if beyond else "" for beyond in far]
    if weighted:
        no_weight = f"weights '{cal.weighting.label}' give no weight for a reading here"
        for i in (~np.isfinite(half_pred)).nonzero()[0].tolist():
            notes[i] = f"{notes[i]}; {no_weight}" if notes[i] else no_weight
    return tuple(map(Prediction._make, zip(x0.tolist(), *columns, notes)))


def roots_of(curve: Curve, readings: np.ndarray, z_lo: float, z_hi: float):
    """Every z in [z_lo, z_hi] (grid nodes) with f(z) = reading (in curve units): (reading index, z), sorted.

    The grid cells where f - reading changes sign (a zero counts as positive, so a root on a node is found
    once) are found run by run: between the grid's turning nodes f is monotonic, so each reading changes
    sign at most once in a run, at the node a binary search of the run's values finds. Memory stays O(n)."""
    z, f = curve.grid
    # the cells that lie in [z_lo, z_hi]: from the first node at or above z_lo to the cell ending at the last
    # node at or below z_hi (the nodes rise)
    first, last = int(np.searchsorted(z, z_lo, "left")), int(np.searchsorted(z, z_hi, "right")) - 2
    rows, cells = [], []
    for start, stop, rising in _monotonic_runs(f):
        run = f[start: stop + 1]
        # the first node of the run where f >= reading (rising) or f < reading (falling)
        j = np.searchsorted(run, readings, "left") if rising else run.size - np.searchsorted(
            run[::-1], readings, "left")
        hit = np.flatnonzero((j > 0) & (j < run.size))
        cell = start + j[hit] - 1
        keep = (cell >= first) & (cell <= last)
        rows.append(hit[keep])
        cells.append(cell[keep])
    rows, cells = np.concatenate(rows), np.concatenate(cells)
    target = readings[rows]
    zs = newton_in_cells(lambda zz: (curve.value(zz) - target, curve.slope(zz)), z[cells], z[cells + 1],
                         f[cells] - target, f[cells + 1] - target)
    # a root exactly on the lower end node is not seen as a change within the range
    if first + 1 < z.size:
        on_end = np.flatnonzero((f[first] - readings == 0) & (f[first + 1] - readings >= 0))
        if on_end.size:
            rows, zs = np.concatenate([rows, on_end]), np.concatenate([zs, np.full(on_end.size, z[first])])
    order = np.lexsort((zs, rows))
    return rows[order], zs[order]


def _monotonic_runs(f: np.ndarray):
    """(first node, last node, rising) of each stretch of the grid values f over which they do not fall
    (rising) or do not rise: consecutive runs share their end node, and every cell lies in one run."""
    step = np.diff(f)
    up = step >= 0
    if up.all() or not up.any():  # the usual case: one run
        return [(0, step.size, bool(up[0]))]
    ends = np.concatenate([np.flatnonzero(up[1:] != up[:-1]) + 1, [step.size]])
    starts = np.concatenate([[0], ends[:-1]])
    return [(int(a), int(b), bool(up[a])) for a, b in zip(starts, ends)]


def _weight_response(curve: Curve, zz: np.ndarray, fz: np.ndarray) -> np.ndarray:
    """The response at z that a 1/y scheme weights by, in units of y (fz: ``curve`` at zz, curve units)."""
    base = curve.weight_curve
    return curve.to_y(fz if base is curve else base.value(zz))


def _variance_factor_and_slope(curve: Curve, zz: np.ndarray, fz: np.ndarray, dfz: np.ndarray):
    """1/w0 of a new reading at z and its derivative along z (1 and 0 when unweighted); f and f'
    in curve units."""
    cal = curve.cal
    weighting = cal.weighting
    if not weighting.weighted:
        return 1.0, 0.0
    base = curve.weight_curve
    if base is not curve:
        fz, dfz = base.value(zz), base.slope(zz)
    x, y = cal.raw_x(zz), curve.to_y(fz)
    return (weighting.variance_factor(x, y),
            weighting.variance_factor_slope(x, y, curve.to_y(dfz) / cal.dx_dz) * cal.dx_dz)


def _solve_on_monotonic_band(curve: Curve, cal: Calibration, y0: np.ndarray, m: np.ndarray, t: float):
    """z estimate, lower and upper z of every reading at once when the band rises (times the sign
    of the slope) over the whole grid; None otherwise.

    Then the estimate is the one root of f - y0 in [-1, 1], and since the gap factors as
    (f - y0)^2 - half^2 = (f + half - y0)(f - half - y0), the interval ends are the roots of the band's
    edges minus y0 (for a rising curve, the upper edge gives the lower end). Each root is bracketed
    by a binary search of the grid values, and all are refined by one Newton iteration. Readings
    outside the calibrated response range get no estimate (nan) but their interval all the same; an
    edge that does not reach the reading within the grid leaves that end open (nan). Also returns
    whether the band holds each reading somewhere on the grid.
    """
    t2, t2s2 = t**2, t**2 * curve.s**2
    band = curve.monotonic_band(t2, m)
    if band is None:
        return None
    sign, table, local = band  # kind 0: the curve, 1: its upper edge, 2: its lower edge
    z = curve.grid[0]
    ys = sign * y0
    first, last = RANGE_NODES
    rows = ((ys >= table[0, first]) & (ys <= table[0, last])).nonzero()[0]
    inside = ys[rows]
    cell = np.minimum(np.maximum(np.searchsorted(table[0, first: last + 1], inside), 1), last - first) + first
    j_lo = np.searchsorted(table[1], ys, "left")  # first node where the upper edge reaches the reading
    j_hi = np.searchsorted(table[2], ys, "right")  # first node where the lower edge passes it
    held = (j_hi > 0) & (j_lo < z.size)  # the interval [lower, upper] meets the grid
    lo_rows, hi_rows = (held & (j_lo > 0)).nonzero()[0], (held & (j_hi < z.size)).nonzero()[0]
    which = np.concatenate([rows, lo_rows, hi_rows])
    kind = np.repeat(_KINDS, [rows.size, lo_rows.size, hi_rows.size])
    right = np.concatenate([cell, j_lo[lo_rows], j_hi[hi_rows]])
    edge = _EDGES[kind]
    moving = edge != 0
    mm, target = m[which], ys[which]
    spread, weighted = t2s2 / mm, cal.weighting.weighted

    local_rows = local.T.copy()
    open_edges = weighted or t2s2 == 0  # where the band's half-width can be zero, or undefined

    def value_and_slope(zz):  # called inside newton_in_cells, which ignores division warnings
        f, df, var, dvar = local_rows @ powers(zz, local_rows.shape[1] - 1).T
        var = np.maximum(var, 0.0)
        if weighted:
            vfz, dvf = _variance_factor_and_slope(curve, zz, sign * f, sign * df)
            half = np.sqrt(spread * vfz + var)
            dhalf = (spread * dvf + dvar) / (2 * half)
        else:
            half = np.sqrt(spread + var)
            dhalf = dvar / (2 * half)
        # on the curve itself (edge 0) the half-width's slope does not count, even where it is undefined
        return f + edge * half - target, df + edge * (np.where(moving, dhalf, 0.0) if open_edges else dhalf)

    found = newton_in_cells(value_and_slope, z[right - 1], z[right], table[kind, right - 1] - target,
                            table[kind, right] - target)
    out = np.full((3, y0.size), np.nan)
    out[kind, which] = found
    return out, held


def _grid_gap(curve: Curve, y0: np.ndarray, m: np.ndarray, t: float):
    """gap(z) = (f(z) - y0)^2 - t^2 (s^2 / (m w(z)) + Var f(z)) at every grid node for every reading (negative
    where the band holds the reading), inf where the weights are not defined; and where they are not."""
    (_, f), vm = curve.grid, curve.grid_mean_variance
    with np.errstate(invalid="ignore"):
        g = (f[None, :] - y0[:, None]) ** 2 - t**2 * curve.s**2 * curve.grid_variance_factor[None, :] / m[:, None] \
            - t**2 * vm[None, :]
    undefined = ~np.isfinite(g)
    g[undefined] = np.inf  # no weight for a reading there: outside the band
    return g, undefined


def _band_edges(curve: Curve, cal: Calibration, y0: np.ndarray, m: np.ndarray, z_hat: np.ndarray, t: float):
    """Lower and upper z of the band component holding z_hat (nan where it stays open), and whether
    each stays open because the band reaches the edge of the weights' domain (x <= 0 under 1/x
    schemes, a fitted y <= 0 under 1/y schemes).

    gap(z) = (f(z) - y0)^2 - t^2 (s^2 / (m w(z)) + Var f(z)) is negative at z_hat;
    each edge lies in the cell between the nearest grid node where gap > 0 and
    its neighbour towards z_hat (or z_hat itself). Both edges of every reading
    are refined together by Newton's method on gap. A node where the weights
    are not defined counts as outside; a bound in the cell next to it is open.
    """
    z = curve.grid[0]
    t2, t2s2 = t**2, t**2 * curve.s**2

    def gap_and_slope(zz, y, mm):
        fz, dfz, vz, dvz = curve.local(zz)
        d = fz - y
        vf, dvf = _variance_factor_and_slope(curve, zz, fz, dfz)
        return d * d - t2s2 * vf / mm - t2 * vz, 2 * d * dfz - t2s2 * dvf / mm - t2 * dvz

    g, undefined = _grid_gap(curve, y0, m, t)
    outside = g > 0
    below = outside & (z[None, :] < z_hat[:, None])
    above = outside & (z[None, :] > z_hat[:, None])
    rows_lo, rows_hi = np.flatnonzero(below.any(axis=1)), np.flatnonzero(above.any(axis=1))
    j_lo = z.size - 1 - np.argmax(below[rows_lo][:, ::-1], axis=1)  # last node outside, below z_hat
    j_hi = np.argmax(above[rows_hi], axis=1)  # first node outside, above z_hat
    g_hat = gap_and_slope(z_hat, y0, m)[0]
    # inner end of each cell: the neighbour node towards z_hat, or z_hat itself when it is nearer
    k_lo, k_hi = j_lo + 1, j_hi - 1
    node_lo, node_hi = z[k_lo] < z_hat[rows_lo], z[k_hi] > z_hat[rows_hi]
    in_lo = np.where(node_lo, z[k_lo], z_hat[rows_lo])
    in_hi = np.where(node_hi, z[k_hi], z_hat[rows_hi])
    g_in_lo = np.where(node_lo, g[rows_lo, k_lo], g_hat[rows_lo])
    g_in_hi = np.where(node_hi, g[rows_hi, k_hi], g_hat[rows_hi])
    rows = np.concatenate([rows_lo, rows_hi])
    found = newton_in_cells(lambda zz: gap_and_slope(zz, y0[rows], m[rows]),
                            np.concatenate([z[j_lo], in_hi]), np.concatenate([in_lo, z[j_hi]]),
                            np.concatenate([g[rows_lo, j_lo], g_in_hi]),
                            np.concatenate([g_in_lo, g[rows_hi, j_hi]]))
    lower, upper = np.full(y0.size, np.nan), np.full(y0.size, np.nan)
    lower[rows_lo] = found[: rows_lo.size]
    upper[rows_hi] = found[rows_lo.size:]
    edge_lo, edge_hi = np.zeros(y0.size, bool), np.zeros(y0.size, bool)
    edge_lo[rows_lo], edge_hi[rows_hi] = undefined[rows_lo, j_lo], undefined[rows_hi, j_hi]
    lower[edge_lo], upper[edge_hi] = np.nan, np.nan
    return lower, upper, edge_lo, edge_hi


def _domain_edge(cal: Calibration) -> str:
    return "x <= 0" if not cal.weighting.iterative else "a fitted y <= 0"


def _outside_anchor(curve: Curve, y0: np.ndarray, m: np.ndarray, t: float):
    """For readings beyond the response at one end of a calibrated range the curve does not turn in: the
    grid node at or beyond that end (z = -1 or 1) where the prediction band holds the reading best (the
    smallest gap, ``_grid_gap``), nan where the band holds it at no such node."""
    z, f = curve.grid
    first, last = RANGE_NODES
    below_end = np.abs(y0 - f[first]) <= np.abs(y0 - f[last])  # the end whose response is nearer
    g, _ = _grid_gap(curve, y0, m, t)
    side = np.where(below_end[:, None], np.arange(z.size)[None, :] > first, np.arange(z.size)[None, :] < last)
    g[side] = np.inf
    best = np.argmin(g, axis=1)
    return np.where(g[np.arange(y0.size), best] <= 0, z[best], np.nan)


def _estimates(curve: Curve, y0: np.ndarray):
    """Every root of f(z) = y0 in the calibrated range ([-1, 1]; ``roots_of``: reading index, z), the number of
    roots of each reading, and its z estimate: its one root (nan with none or several)."""
    rows, zs = roots_of(curve, y0, -1.0, 1.0)
    count = np.bincount(rows, minlength=y0.size)
    z_hat = np.full(y0.size, np.nan)
    single = count[rows] == 1
    z_hat[rows[single]] = zs[single]
    return rows, zs, count, z_hat


def read_x(cal: Calibration, responses: np.ndarray, order: int) -> np.ndarray:
    """The x estimate of each response on the curve of ``order`` (nan outside the calibrated range or where several
    x give it): ``inverse``'s estimate, without the interval."""
    curve = cal.order(order).curve
    with np.errstate(over="ignore"):  # a response far beyond the scale of y is inf: outside the range
        return cal.raw_x(_estimates(curve, curve.from_y(responses))[3])


def inverse(cal: Calibration, readings, order: int, replicates=1, level: float = 0.95) -> tuple[InverseEstimate, ...]:
    """x estimate and interval for each reading (the mean of ``replicates`` readings). A reading beyond the
    responses at the ends of the calibrated range gets no estimate, but its interval (the x whose prediction
    band holds it) and a note that says on which side of the standards it lies."""
    level = check_level(level)
    y0 = check_vector(readings, "reading", flat=True)
    m = check_replicates(replicates, y0.size)
    curve = cal.order(order).curve
    t = curve.t_value(level)
    with np.errstate(over="ignore"):  # a reading far beyond the responses' scale is inf: outside the range
        y0_curve = curve.from_y(y0)
    solved = _solve_on_monotonic_band(curve, cal, y0_curve, m, t)
    at_edge = np.zeros((2, y0.size), bool)  # bounds open at the edge of the weights' domain
    monotonic = curve.turning_points().size == 0
    if solved is not None:
        (z_hat, lower_z, upper_z), held = solved
        count = np.isfinite(z_hat).astype(np.intp)  # one root or none
    else:
        rows, zs, count, z_hat = _estimates(curve, y0_curve)
        anchor = z_hat.copy()  # where the band holds each reading: its estimate, or a node beyond the range
        beyond = np.flatnonzero((count == 0) & monotonic & np.isfinite(y0_curve))
        if beyond.size:
            anchor[beyond] = _outside_anchor(curve, y0_curve[beyond], m[beyond], t)
        ok = np.flatnonzero(np.isfinite(anchor))
        held = np.isfinite(anchor)
        lower_z, upper_z = np.full(y0.size, np.nan), np.full(y0.size, np.nan)
        if ok.size:
            lower_z[ok], upper_z[ok], at_edge[0, ok], at_edge[1, ok] = _band_edges(
                curve, cal, y0_curve[ok], m[ok], anchor[ok], t)
    notes = [""] * y0.size
    lo_resp, hi_resp = sorted(curve.to_y(curve.value(ENDS)).tolist())
    rising = bool(curve.value(ENDS[1]) >= curve.value(ENDS[0]))
    for i in (count != 1).nonzero()[0].tolist():
        if count[i] > 1:
            xs = ", ".join(f"{v:.6g}" for v in cal.raw_x(zs[rows == i]))
            notes[i] = f"several x in the calibrated range give this reading ({xs}): the curve is not monotonic"
        elif monotonic:
            above = bool(y0[i] > hi_resp)
            where = "above the highest standard" if above == rising else "below the lowest standard"
            notes[i] = (f"reading {'above' if above else 'below'} the calibrated response range [{lo_resp:.6g}, "
                        f"{hi_resp:.6g}], {where}: no estimate outside the calibrated range; "
                        + ("lower and upper are the x whose prediction band holds the reading" if held[i] else
                           f"the prediction band does not hold it within {EXTEND:.0%} of the range beyond the "
                           "calibrated range"))
        else:
            notes[i] = "no x within the calibrated range gives this reading"
    zz = np.array([z_hat, lower_z, upper_z])
    # an interval with a bound that is open (nan) or beyond the calibrated range gets a note
    flagged = held & (count <= 1) & ~(np.abs(zz[1:]) <= 1).all(axis=0)
    for i in flagged.nonzero()[0].tolist():
        parts = [notes[i]] if notes[i] else []
        for bound, name, edge in ((lower_z[i], "lower", at_edge[0, i]), (upper_z[i], "upper", at_edge[1, i])):
            if edge:
                parts.append(f"{name} bound open: the prediction band reaches {_domain_edge(cal)}, where "
                             f"weights '{cal.weighting.label}' are not defined")
            elif not math.isfinite(bound):
                parts.append(f"{name} bound open: the prediction band does not close within "
                             f"{EXTEND:.0%} of the range beyond the calibrated range")
            elif bound < -1 or bound > 1:
                parts.append(f"{name} bound lies beyond the calibrated range")
        notes[i] = "; ".join(parts)
    return tuple(map(InverseEstimate._make, zip(y0.tolist(), *cal.raw_x(zz).tolist(), notes)))


def why_no_estimate(note: str) -> str:
    """Of the note of an inverse row without an x estimate, the reason (its first clause, as ``inverse`` writes
    it), without the words on the interval: for tables that show no interval."""
    return note.split("; ", 1)[0]


def uncertainty(cal: Calibration, readings, order: int, replicates=1, level: float = 0.95) -> tuple[Uncertainty, ...]:
    """Standard uncertainty of the x estimate of each reading (the mean of ``replicates`` readings), from the
    calibration and the readings' own scatter (module docstring); the estimate is ``inverse``'s."""
    found = inverse(cal, readings, order, replicates, level)
    m = check_replicates(replicates, len(found))
    curve = cal.order(order).curve
    k = curve.t_value(level)
    x = np.array([e.x for e in found])
    ok = np.isfinite(x)
    u = np.full(x.size, np.nan)
    if ok.any():
        z = cal.scaled_x(x[ok])
        f, dfz, var_mean, _ = curve.local(z)
        vf, _ = _variance_factor_and_slope(curve, z, f, dfz)
        with np.errstate(divide="ignore", invalid="ignore"):
            u[ok] = np.sqrt(curve.s**2 * vf / m[ok] + var_mean) / np.abs(dfz / cal.dx_dz)
    rows = []
    for e, ui in zip(found, u.tolist()):
        note = e.note if math.isfinite(e.x) else why_no_estimate(e.note)
        if math.isfinite(e.x) and not math.isfinite(ui):
            note = "the curve is flat at this x (or the weights give no weight there): no first-order uncertainty"
            ui = math.nan
        elif note and math.isfinite(e.x):
            note = f"first-order uncertainty, uncertain itself here: {note}"
        relative = 100.0 * ui / abs(e.x) if math.isfinite(ui) and e.x != 0 else math.nan
        rows.append(Uncertainty(e.reading, e.x, ui, curve.df, k, k * ui, relative, note))
    return tuple(rows)
