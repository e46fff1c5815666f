"""Comparing weighting schemes on one set of standards, and the scheme the replicates imply.

Each scheme (none, 1/x, 1/x^2, 1/y, 1/y^2) is fitted at the order the default rule picks under it
(or at a given order) and judged by the back-calculated deviation % of the standards (sum and
largest |deviation %|, standards at x = 0 left out) and by the check for a trend in the spread of
its weighted residuals e: Harvey's test of multiplicative heteroscedasticity (Harvey, Econometrica 44
(1976) 461-465; recalled from memory): regress log e_i^2 on 1 and log x (x itself when some x <= 0);
under a constant spread with normal errors log e_i^2 = log sigma^2 + log chi2_1, whose variance is
pi^2 / 2, so the explained sum of squares over pi^2 / 2 is chi-square with 1 df. A spread that
follows a power of x (SD = c x^b) is linear in log x here, which is what weighting schemes assume;
the test has far more power against it than Breusch-Pagan's test of e^2, whose heavy tails hide a
spread growing over decades of x. Residuals that are exactly zero carry no spread and are left out.

The pick follows Almeida, Castel-Branco & Falcao, J. Chromatogr. B 774 (2002) 215-222 (recalled
from memory): no weights when the unweighted residuals show no trend in spread; otherwise, among
the weighted schemes whose residuals show none, the one with the smallest sum of |deviation %|
(with a note when no scheme removes the trend).

With replicates, the exponent b of SD = c x^b is fitted on log scales to the replicate SDs of the
levels with x > 0: log s_i - kappa(k_i) = log c + b log x_i by weighted least squares with weights
1/Var(log s_i), where for k_i = r_i - 1 degrees of freedom and normal readings
E log(s/sigma) = kappa(k) = (psi(k/2) + ln(2/k))/2 and Var log s = psi'(k/2)/4 (psi the digamma
function; moments of the log of a chi-square variable). The interval is the t interval with
L - 2 df for L levels. Its scheme, weights 1/x^(2b), is evaluated like the others.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

from .calibration import Calibration
from .curve import Curve
from .diagnostics import back_calculate, deviation_percent
from .distributions import chi2_sf, t_quantile
from .errors import WeightError
from .results import SchemeResult, SpreadExponent
from .selection import choose_order
from .validation import check_alpha, check_level, check_pair, check_scheme_base
from .words import fmt_p

SCHEMES = ("none", "1/x", "1/x^2", "1/y", "1/y^2")
FROM_REPLICATES = "1/x^2b"


def spread_exponent(x, y, level: float = 0.95) -> SpreadExponent | str:
    """b in SD = c x^b from the replicate SDs (module docstring), or the reason in words why not."""
    (x, y), level = check_pair(x, y), check_level(level)
    if y.any():  # an exact power-of-two scaling (it moves only log c) keeps squares in range
        y = np.ldexp(y, -math.frexp(float(np.abs(y).max()))[1])
    levels, inverse, counts = np.unique(x, return_inverse=True, return_counts=True)
    means = np.bincount(inverse, y) / counts
    ss = np.bincount(inverse, (y - means[inverse]) ** 2)
    use = (counts >= 2) & (levels > 0) & (ss > 0)
    if np.count_nonzero(use) < 3:
        return "needs replicate SDs at 3 or more levels with x > 0"
    k = counts[use] - 1.0
    log_s = 0.5 * np.log(ss[use] / k) - 0.5 * (special.digamma(k / 2) + np.log(2.0 / k))
    w = 4.0 / special.zeta(2.0, k / 2)  # psi'(k/2) = zeta(2, k/2), Hurwitz's zeta (what polygamma(1, .) returns)
    u = np.log(levels[use])
    ubar = (w * u).sum() / w.sum()
    quw = (w * (u - ubar) ** 2).sum()
    b = float((w * (u - ubar) * log_s).sum() / quw)
    a = (w * log_s).sum() / w.sum() - b * ubar
    df = u.size - 2
    scale = (w * (log_s - a - b * u) ** 2).sum() / df
    half = float(t_quantile(0.5 + level / 2, df)) * math.sqrt(scale / quw)
    return SpreadExponent(b, b - half, b + half, level, int(u.size))


def _judge(cal: Calibration, u: np.ndarray, scheme: str, weights, order, note: str = "") -> SchemeResult:
    """``cal``'s standards under one scheme, judged at ``order`` (chosen when None), u the regressor of Harvey's
    test (the same for every scheme); a scheme that cannot apply gets the engine's reason in the note (other
    errors, such as too few points, concern every scheme and are raised). Unweighted (weights None), ``cal``
    itself: its order's results are kept and shared."""
    if weights is None:
        fitted = cal
    else:
        try:
            if scheme.startswith("1/x"):
                check_scheme_base(scheme, "x", cal.x)
            fitted = cal.reweighted(weights)
        except WeightError as err:
            return _not_applied(scheme, note, err.message, err)
    k = order if order is not None else choose_order(fitted).order
    # a scheme's own calibration reads the curve alone, not fitted.order(k): an order's results and its
    # calibration refer to each other, so each scheme's calibration would stay in memory until the cycle
    # collector runs (6 sets of n-long arrays)
    back = cal.order(k).back_calculation[0] if fitted is cal else back_calculate(fitted, Curve(fitted, k))[0]
    x = cal.x
    nonzero = x != 0
    dev = deviation_percent(back, x)[nonzero]
    words = [note]
    if not np.isfinite(dev).all():
        words.append(f"{np.count_nonzero(~np.isfinite(dev))} standards cannot be back-calculated, so the "
                     "deviation sums are left empty")
        total = largest = math.nan
    else:
        total, largest = float(np.abs(dev).sum()), float(np.abs(dev).max(initial=0.0))
    if not nonzero.all():
        words.append("deviation % leaves out the standards at x = 0")
    p = harvey_p(fitted.scaled_residuals(k), u)
    return SchemeResult(scheme, k, total, largest, p, False, "; ".join(w for w in words if w))


def harvey_p(e: np.ndarray, u: np.ndarray) -> float:
    """p-value of Harvey's test (module docstring): ESS of log e^2 on [1, u], over pi^2 / 2, against chi2(1)."""
    keep = e != 0
    u = u[keep]
    if not u.size or u.min() == u.max():  # fewer than 2 distinct u
        return math.nan
    log_e2 = 2.0 * np.log(np.abs(e[keep]))  # scale-free: a common factor of e only shifts the intercept
    uc = u - u.mean()
    ess = float((uc @ (log_e2 - log_e2.mean())) ** 2 / (uc @ uc))
    return float(chi2_sf(ess / (math.pi**2 / 2), 1))


def _not_applied(scheme: str, note: str, why: str, problem: WeightError | None = None) -> SchemeResult:
    return SchemeResult(scheme, None, math.nan, math.nan, math.nan, False,
                        "; ".join(n for n in (note, f"does not apply: {why}") if n), problem)


def _pick(rows: list[SchemeResult], alpha: float) -> list[SchemeResult]:
    none = rows[0]
    if none.spread_p >= alpha:
        return [none._replace(picked=True, note="; ".join(n for n in (
            f"picked: the unweighted residuals show no trend in spread (p = {fmt_p(none.spread_p)} >= {alpha:g}), "
            "so weights are not needed (Almeida et al. 2002)", none.note) if n))] + rows[1:]
    usable = [i for i, r in enumerate(rows[1:], 1) if r.sum_abs_deviation == r.sum_abs_deviation]
    steady = [i for i in usable if rows[i].spread_p >= alpha]  # a nan p-value is not steady
    pool = steady or usable
    if not pool:
        return [none._replace(note="; ".join(n for n in (
            "no scheme picked: the unweighted residuals show a trend in spread and no weighted scheme "
            "back-calculates every standard", none.note) if n))] + rows[1:]
    best = min(pool, key=lambda i: rows[i].sum_abs_deviation)
    why = ("picked: the smallest sum of |deviation %| among the schemes whose weighted residuals show no trend "
           "in spread (Almeida et al. 2002)" if steady else
           "picked with care: no scheme removes the trend in spread; this one has the smallest sum of "
           "|deviation %|; consider weights from a variance model fitted to replicates")
    out = list(rows)
    out[best] = rows[best]._replace(picked=True, note="; ".join(n for n in (why, rows[best].note) if n))
    return out


def compare_weightings(cal: Calibration, order=None, alpha: float = 0.05) -> tuple[SchemeResult, ...]:
    """One row per scheme (``SCHEMES``, then ``FROM_REPLICATES`` when x repeats), the picked one marked: ``cal``'s
    standards refitted under each scheme at ``cal``'s max order. ``cal`` is unweighted; the worksheet's has the
    default max order unless a given order needs more, so that a 1/y scheme's weights come from the same curve
    (order min(2, max order)) as in every other function's fit under that scheme."""
    alpha = check_alpha(alpha)
    if cal.weighting.weighted:
        raise WeightError("compare_weightings needs the unweighted calibration; each scheme is fitted from it",
                          argument="weights")
    if order is not None:
        order = cal.resolve_order(order)
    u = np.log(cal.x) if (cal.x > 0).all() else cal.z  # Harvey's regressor: log x, or x (scaled) when some x <= 0
    rows = [_judge(cal, u, s, None if s == "none" else s, order) for s in SCHEMES]
    if cal.n_distinct < cal.n_points:
        fit = spread_exponent(cal.x, cal.y, 1.0 - alpha)
        if isinstance(fit, str):
            rows.append(_not_applied(FROM_REPLICATES, "", fit))
        else:
            words = (f"b = {fit.b:.3g} ({1 - alpha:.0%} interval {fit.lower:.3g} to {fit.upper:.3g}) from the "
                     f"replicate SDs at {fit.levels} levels: weights 1/x^{2 * fit.b:.3g}")
            rows.append(_judge(cal, u, FROM_REPLICATES, np.abs(cal.x) ** (-2.0 * fit.b), order, words))
    return tuple(_pick(rows, alpha))
