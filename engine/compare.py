"""Today's calibration against a reference calibration at the same order.

Models (each set keeps its own weights, the same scheme applied to its own data):

- separate curves: a polynomial of order k for each set, RSS_s on df_s = n - 2(k + 1);
- one curve for both sets: RSS_c on n - (k + 1);
- same shape: one curve but a separate intercept for each set, RSS_p on n - (k + 2).

Where both sets fit exactly at the order (``Calibration.fits_exactly``), RSS_s is rounding error and the
three tests are nan. Coincidence: F = ((RSS_c - RSS_s) / (k + 1)) / (RSS_s / df_s); parallelism (same shape):
F = ((RSS_p - RSS_s) / k) / (RSS_s / df_s): the extra-sum-of-squares tests of coincident and
parallel regressions (Draper & Smith, Applied Regression Analysis, 3rd ed., Wiley 1998, ch. 14 on
indicator variables; Weisberg, Applied Linear Regression, 4th ed., Wiley 2014, sec. 5.1). Both assume
one residual SD; the residual SDs are compared by F = s_today^2 / s_ref^2 on (df_today, df_ref),
two-sided. Differences of coefficients and of fitted responses use the pooled s^2 = RSS_s / df_s
with t on df_s, which is what the separate-curves model with set indicators gives.
"""

from __future__ import annotations

import math

import numpy as np

from .calibration import Calibration
from .distributions import f_sf, t_quantile, t_two_sided
from .errors import OrderError
from .prediction import read_x
from .results import Comparison, DifferenceRow, FTest, OrderChoice
from .selection import choose_order
from .validation import check_count, check_level, check_order, check_vector, default_max_order, order_limit


def _scaled_rss(cal: Calibration, order: int, e: int) -> float:
    """``cal``'s residual sum of squares at ``order`` times 2^-2e (its own refined residuals)."""
    r = cal.scaled_residuals(order)
    return math.ldexp(float(r @ r), 2 * (cal.y_exponent - e))


def _model_rss(today: Calibration, reference: Calibration, k: int) -> tuple[float, float, float, int]:
    """RSS_s, RSS_c and RSS_p (module docstring) times 2^-2e, and e. The separate curves are each set's own
    fit; one curve is the engine's fit of both sets (each point keeping its own weight); the separate
    intercept is one more column, d (1 for today's points), added to that fit: RSS_p = RSS_c - (d_r'e)^2 /
    (d_r'd_r) with e the one curve's weighted residuals and d_r = sqrt(w) d less its projection on the
    curve's basis (the update of a least-squares fit by one column, e.g. Seber & Lee, Linear Regression
    Analysis, 2nd ed., Wiley 2003, sec. 3.7; from memory)."""
    sets = (today, reference)
    weights = (np.concatenate([c.weighting.values if c.weighting.weighted else np.ones(c.n_points) for c in sets])
               if any(c.weighting.weighted for c in sets) else None)
    both = Calibration(np.concatenate([today.x, reference.x]), np.concatenate([today.y, reference.y]),
                       max_order=k, weights=weights)
    e = both.y_exponent
    rss_s = _scaled_rss(today, k, e) + _scaled_rss(reference, k, e)
    if today.fits_exactly(k) and reference.fits_exactly(k):
        rss_s = 0.0  # rounding error: no test rests on it
    residuals, q = both.scaled_residuals(k), both.orthonormal_basis(k)
    d = both.sqrt_w * np.concatenate([np.ones(today.n_points), np.zeros(reference.n_points)])
    d -= q @ (q.T @ d)
    rss_c = _scaled_rss(both, k, e)
    return rss_s, rss_c, rss_c - float(d @ residuals) ** 2 / float(d @ d), e


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
        np.concatenate([c.weighting.values if c.weighting.weighted else np.ones(c.n_points) for c in sets])
        if any(c.weighting.weighted for c in sets) else None)
    both = Calibration(x, np.concatenate([today.y, reference.y]), max_order=limit, weights=weights)
    return choose_order(both, alpha=alpha)


def compare(today: Calibration, reference: Calibration, order: int, level: float = 0.95, at=()) -> Comparison:
    """Tests that the curves coincide, that they are parallel and that their residual SDs agree; the
    difference of each raw coefficient (today - reference) and of the fitted responses at ``at``, each
    with its two-sided interval at ``level``; and the x the reference curve reads for today's response at
    each x of ``at``."""
    level, at, order = check_level(level), check_vector(at, "at", flat=True), check_count(order, "order")
    for cal, which in ((today, "today's"), (reference, "reference")):
        _check_order(order, cal, which)
    k = order
    rss_s, rss_c, rss_p, e = _model_rss(today, reference, k)
    df_s = today.n_points + reference.n_points - 2 * (k + 1)
    same_curve = _f_test(rss_c - rss_s, k + 1, rss_s, df_s)
    same_shape = _f_test(rss_p - rss_s, k, rss_s, df_s)

    fit_t, fit_r = today.fit(k), reference.fit(k)
    s_t, s_r = fit_t.residual_sd, fit_r.residual_sd
    df_t, df_r = fit_t.df_resid, fit_r.df_resid
    ratio = (s_t / s_r) ** 2
    one_tail = float(f_sf(ratio, df_t, df_r))
    same_sd = FTest(ratio, df_t, df_r, min(1.0, 2 * min(one_tail, 1 - one_tail)))
    if today.fits_exactly(k) and reference.fits_exactly(k):  # two rounding errors compared: no test
        same_sd = FTest(math.nan, df_t, df_r, math.nan)

    s_pool = math.ldexp(math.sqrt(rss_s / df_s), e)
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
    responses, read_back = (), ()
    if at.size:
        fitted, unscaled = [], []
        for cal in (today, reference):
            curve = cal.order(k).curve
            zz = cal.scaled_x(at)
            fitted.append(curve.to_y(curve.value(zz)))
            unscaled.append(curve.mean_variance(zz) / curve.s**2)  # Var(fitted mean) / sigma^2
        responses = tuple(row(float(x0), float(r), float(t), float(vt + vr))
                       for x0, t, r, vt, vr in zip(at, *fitted, *unscaled))
        read_back = tuple(read_x(reference, fitted[0], k).tolist())
    return Comparison(k, level, same_curve, same_shape, same_sd, s_r, s_t, coefficients, responses, read_back)
