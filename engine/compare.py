"""Today's calibration against a reference calibration at the same order.

Models (each set keeps its own weights, the same scheme applied to its own data):

- separate curves: a polynomial of order k for each set, RSS_s on df_s = n - 2(k + 1);
- one curve for both sets: RSS_c on n - (k + 1);
- same shape: one curve but a separate intercept for each set, RSS_p on n - (k + 2).

Coincidence: F = ((RSS_c - RSS_s) / (k + 1)) / (RSS_s / df_s); parallelism (same shape):
F = ((RSS_p - RSS_s) / k) / (RSS_s / df_s): the extra-sum-of-squares tests of coincident and
parallel regressions (Draper & Smith, Applied Regression Analysis, 3rd ed., Wiley 1998, ch. 14 on
indicator variables; Weisberg, Applied Linear Regression, 4th ed., Wiley 2014, sec. 5.1). Both assume
one residual SD; the residual SDs are compared by F = s_today^2 / s_ref^2 on (df_today, df_ref),
two-sided. Differences of coefficients and of fitted responses use the pooled s^2 = RSS_s / df_s
with t on df_s, which is what the separate-curves model with set indicators gives.
"""

from __future__ import annotations

import numpy as np
from numpy.polynomial import polynomial as P

from .calibration import Calibration, default_max_order
from .distributions import f_sf, t_quantile, t_two_sided
from .errors import OrderError
from .prediction import inverse
from .results import Comparison, DifferenceRow, FTest, OrderChoice
from .selection import choose_order
from .validation import check_count, check_level, check_order, check_vector, order_limit


def _rss(columns: np.ndarray, yw: np.ndarray) -> float:
    """Residual sum of squares of yw on the (already weighted) columns, by QR with explicit residuals."""
    q, _ = np.linalg.qr(columns, mode="reduced")
    e = yw - q @ (q.T @ yw)
    return float(e @ e)


def _check_order(order: int, cal: Calibration, which: str) -> None:
    try:
        check_order(order, "order", cal.n_points, cal.n_distinct)
    except OrderError as err:
        raise OrderError(f"{which} calibration: {err.message}", argument="order") from None


def _f_test(extra: float, df_extra: int, rss: float, df: int) -> FTest:
    f = (extra / df_extra) / (rss / df) if rss > 0 else float("nan")
    return FTest(f, df_extra, df, float(f_sf(f, df_extra, df)))


def shared_order(today: Calibration, reference: Calibration, alpha: float = 0.05) -> OrderChoice:
    """The order the default rule picks for both sets' standards together (one curve through all of them),
    up to the default max order of all of them (``default_max_order``) and an order each set can fit on its
    own (``order_limit``).

    One order for both sets, chosen from data whose sum does not carry their difference: with the order
    chosen from today's standards alone, the order follows today's noise and the comparison at that order
    rejects identical curves too often (same shape 6.7 % at 5 %, 6 levels x 2; benchmarks/error_rates.py)."""
    sets = (today, reference)
    x = np.concatenate([today.x, reference.x])
    limit = max(1, min(default_max_order(x.size, np.unique(x).size),
                       *(order_limit(c.n_points, c.n_distinct) for c in sets)))
    weights = today.weighting.scheme or (
        None if all(c.weighting.values is None for c in sets) else
        np.concatenate([np.ones(c.n_points) if c.weighting.values is None else c.weighting.values for c in sets]))
    both = Calibration(x, np.concatenate([today.y, reference.y]), max_order=limit, weights=weights)
    return choose_order(both, alpha=alpha)


def compare(today: Calibration, reference: Calibration, order: int, level: float = 0.95, at=()) -> Comparison:
    """Tests that the curves coincide, that they are parallel and that their residual SDs agree; the
    difference of each raw coefficient (today - reference) and of the fitted responses at ``at``, each
    with its two-sided interval at ``level``; and the x today's curve reads for the reference's response."""
    level, at, order = check_level(level), check_vector(at, "at", flat=True), check_count(order, "order")
    for cal, which in ((today, "today's"), (reference, "reference")):
        _check_order(order, cal, which)
    k = order
    x = np.concatenate([today.x, reference.x])
    y = np.concatenate([today.y, reference.y])
    sw = np.concatenate([today.sqrt_w, reference.sqrt_w])
    d = np.concatenate([np.ones(today.n_points), np.zeros(reference.n_points)])
    lo, hi = float(x.min()), float(x.max())
    z = (x - (lo + hi) / 2) / ((hi - lo) / 2)
    scale = float(np.abs(y).max())
    yw = sw * y / scale
    common = P.polyvander(z, k) * sw[:, None]
    rss_c = _rss(common, yw)
    rss_p = _rss(np.column_stack([common, d * sw]), yw)
    rss_s = _rss(np.column_stack([common, common * d[:, None]]), yw)
    df_s = x.size - 2 * (k + 1)
    same_curve = _f_test(rss_c - rss_s, k + 1, rss_s, df_s)
    same_shape = _f_test(rss_p - rss_s, k, rss_s, df_s)

    fit_t, fit_r = today.fit(k), reference.fit(k)
    s_t, s_r = fit_t.residual_sd, fit_r.residual_sd
    df_t, df_r = fit_t.stats.df_resid, fit_r.stats.df_resid
    ratio = (s_t / s_r) ** 2
    one_tail = float(f_sf(ratio, df_t, df_r))
    same_sd = FTest(ratio, df_t, df_r, min(1.0, 2 * min(one_tail, 1 - one_tail)))

    s_pool = scale * float(np.sqrt(rss_s / df_s))
    q = float(t_quantile(0.5 + level / 2, df_s))

    def row(item, ref, now, unscaled_var):
        diff = now - ref
        se = s_pool * float(np.sqrt(unscaled_var))
        p = float(t_two_sided(diff / se, df_s)) if se > 0 else float("nan")
        return DifferenceRow(item, ref, now, diff, diff - q * se, diff + q * se, p)

    coefficients = tuple(
        row(j, b_r, b_t, (se_t / s_t) ** 2 + (se_r / s_r) ** 2)
        for j, (b_t, b_r, se_t, se_r) in enumerate(zip(fit_t.coefficients, fit_r.coefficients,
                                                        fit_t.std_errors, fit_r.std_errors))
    )
    at = np.atleast_1d(np.asarray(at, dtype=float))
    levels, read_back = (), ()
    if at.size:
        fitted, unscaled = [], []
        for cal in (today, reference):
            curve = cal.order(k).curve
            zz = cal.scaled_x(at)
            fitted.append(curve.to_y(curve.value(zz)))
            unscaled.append(curve.mean_variance(zz) / curve.s**2)  # Var(fitted mean) / sigma^2
        levels = tuple(row(float(x0), float(r), float(t), float(vt + vr))
                       for x0, t, r, vt, vr in zip(at, *fitted, *unscaled))
        read_back = tuple(e.x for e in inverse(reference, fitted[0], k, 1, level))
    return Comparison(k, level, same_curve, same_shape, same_sd, s_r, s_t, coefficients, levels, read_back)
