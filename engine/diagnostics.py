"""Diagnostics of one order: per standard, and checks of the whole curve.

Per standard (weighted residuals e_i = sqrt(w_i)(y_i - f(x_i)), leverage h_i):
internally studentized r_i = e_i / (s sqrt(1 - h_i)); externally studentized
t_i = r_i sqrt((df - 1) / (df - r_i^2)); Cook's D_i = r_i^2 h_i / (p (1 - h_i))
(Cook & Weisberg, Residuals and Influence in Regression, Chapman & Hall 1982,
ch. 2 and 3). Outliers: Bonferroni p = n * P(|T_(df-1)| > |t_i|) below alpha;
influential: D_i above the median of F(p, n - p) (a common practice threshold,
Cook & Weisberg 1982). Back-calculated x solves f(x) = y_i, up to a quarter of
the range beyond either end, nearest the standard's own x.
"""

from __future__ import annotations

import functools
import math

import numpy as np
from scipy import special

from .calibration import Calibration, householder_qr
from .curve import ENDS, Curve, curve_of
from .distributions import f_quantile, normal_two_sided, t_two_sided
from .polynomials import power_rows
from .prediction import roots_of
from .results import Check, PointDiagnostics
from .selection import check_alpha, fmt_p, mandel_test

BACK_CALC_EXTEND = 0.25


def _studentized(cal: Calibration, curve: Curve):
    """Leverages, studentized residuals (internally and externally), Cook's D, Bonferroni p-values of
    the externally studentized residuals and the Cook's D threshold of a curve (computed once)."""
    cached = curve.__dict__.get("_studentized")
    if cached is not None:
        return cached
    e = cal.scaled_residuals(curve.order)  # in curve units, as s
    h = cal.leverage(curve.order)
    with np.errstate(divide="ignore", invalid="ignore"):
        one_minus_h = 1.0 - h
        r = e / (curve.s * np.sqrt(one_minus_h))
        r2, df = r * r, curve.df
        t = r * np.sqrt((df - 1) / (df - r2)) if df > 1 else np.full_like(r, np.nan)
        cook = r2 * h / ((curve.order + 1) * one_minus_h)
    n, p = cal.n_points, curve.order + 1
    curve._studentized = h, r, t, cook, _bonferroni(t, curve.df, n), float(f_quantile(0.5, p, n - p))
    return curve._studentized


def _back_calculate(cal: Calibration, curve: Curve):
    """x solving f(x) = y_i for each standard, nearest its own x, and how many solutions there are."""
    rows, zs = roots_of(curve, curve.from_y(cal.y), -1 - 2 * BACK_CALC_EXTEND, 1 + 2 * BACK_CALC_EXTEND)
    count = np.bincount(rows, minlength=cal.n_points)
    if rows.size == cal.n_points and count.max() == 1:  # the usual case: one root per standard, in order
        return cal.raw_x(zs), count
    back = np.full(cal.n_points, np.nan)
    if rows.size and count.max() > 1:  # keep the root nearest each standard's own x
        order = np.lexsort((np.abs(zs - cal.z[rows]), rows))
        first = order[np.concatenate(([True], rows[order][1:] != rows[order][:-1]))]
        rows, zs = rows[first], zs[first]
    back[rows] = cal.raw_x(zs)
    return back, count


def _bonferroni(t: np.ndarray, df: int, n: int) -> np.ndarray:
    if df < 2:
        return np.full(t.shape, np.nan)
    return np.minimum(1.0, n * t_two_sided(t, df - 1))


def point_diagnostics(cal: Calibration, order: int, alpha: float = 0.05) -> PointDiagnostics:
    """Fitted, residual, studentized residuals, leverage, Cook's D, back-calculated x per standard."""
    alpha = check_alpha(alpha)
    curve = curve_of(cal, order)
    h, r, t, cook, bonf, cook_cut = _studentized(cal, curve)
    fitted = cal.y - cal.weighted_residuals(curve.order) / cal.sqrt_w
    resid = cal.y - fitted
    back, count = _back_calculate(cal, curve)
    x = cal.x
    notes = [""] * cal.n_points
    flagged = (count != 1) | (bonf < alpha) | (cook > cook_cut) | (h > 1 - 1e-10) | (x == 0)
    for i in flagged.nonzero()[0].tolist():
        words = []
        if count[i] > 1:
            words.append("several x give this response; the one nearest the standard is shown")
        elif count[i] == 0:
            words.append("no x near the calibrated range gives this response")
        if bonf[i] < alpha:
            words.append(f"outlier (externally studentized {t[i]:.3g}, Bonferroni p = {fmt_p(float(bonf[i]))})")
        if cook[i] > cook_cut:
            words.append(f"influential (Cook's distance {cook[i]:.3g} > {cook_cut:.3g})")
        if h[i] > 1 - 1e-10:
            words.append("leverage 1: this standard alone fixes the curve here")
        if x[i] == 0:
            words.append("deviation % not defined at x = 0")
        notes[i] = "; ".join(words)
    dev = np.full(cal.n_points, np.nan)
    np.divide(100.0 * (back - x), np.abs(x), out=dev, where=x != 0)
    columns = (fitted, resid, r, t, h, cook, back, dev)
    return PointDiagnostics(*map(tuple, np.array(columns).tolist()), tuple(notes))


def runs_test(residuals_by_x: np.ndarray) -> tuple[float, float, int]:
    """Wald-Wolfowitz runs test of residual signs (zero counts as positive).

    z = (R - mu) / sigma with mu = 2 n1 n2 / N + 1 and
    sigma^2 = 2 n1 n2 (2 n1 n2 - N) / (N^2 (N - 1)), normal approximation
    without continuity correction (Wald & Wolfowitz, Ann. Math. Stat. 11 (1940) 147-162).
    Returns z, two-sided p and the number of runs.
    """
    pos = residuals_by_x >= 0
    runs = int(1 + np.count_nonzero(pos[1:] != pos[:-1]))
    n1 = int(np.count_nonzero(pos))
    n2 = pos.size - n1
    big_n = pos.size
    if n1 == 0 or n2 == 0:
        return math.nan, math.nan, runs
    mu = 2.0 * n1 * n2 / big_n + 1
    var = 2.0 * n1 * n2 * (2.0 * n1 * n2 - big_n) / (big_n**2 * (big_n - 1))
    if var <= 0:
        return math.nan, math.nan, runs
    z = (runs - mu) / math.sqrt(var)
    return z, float(normal_two_sided(z)), runs


def durbin_watson(residuals_by_x: np.ndarray) -> float:
    """DW = sum (e_t - e_(t-1))^2 / sum e_t^2 (Durbin & Watson, Biometrika 37 (1950) 409-428)."""
    d = residuals_by_x[1:] - residuals_by_x[:-1]
    return float(d @ d / (residuals_by_x @ residuals_by_x))


def breusch_pagan(residuals: np.ndarray, z: np.ndarray, order: int, q=None) -> tuple[float, float]:
    """Koenker's studentized Breusch-Pagan LM = n R^2 of e^2 on 1, z, ..., z^order; chi2(order).

    Breusch & Pagan, Econometrica 47 (1979) 1287-1294; Koenker, J. Econometrics 17 (1981) 107-112.
    """
    e2 = residuals**2
    if q is None:  # an orthonormal basis of 1, z, ..., z^order
        q, _ = householder_qr(power_rows(z, order + 1).T)
    d = e2 - e2.sum() / e2.size
    tss = float(d @ d)
    if tss == 0:
        return math.nan, math.nan
    # the regression sum of squares: the basis holds the constant, so the fit of e^2 less its mean is
    # the projection of e^2 - mean, whose squared length is |Q'(e^2 - mean)|^2
    c = q.T @ d
    lm = e2.size * float(c @ c) / tss
    return lm, float(special.chdtrc(order, lm))


@functools.cache
def _shapiro():
    """scipy.stats.shapiro, imported on first use (scipy.stats takes half a second to import), undecorated:
    the same computation without the axis/NaN-policy wrapper, which costs ten times the test itself
    (tests compare against scipy.stats.shapiro)."""
    from scipy.stats import shapiro

    return getattr(shapiro, "__wrapped__", shapiro)


def _verdict(p: float, alpha: float, bad: str, good: str) -> tuple[str, str]:
    if p != p:
        return "n/a", ""
    return ("warning", bad) if p < alpha else ("ok", good)


def curve_checks(cal: Calibration, order: int, alpha: float = 0.05, point_labels=None) -> tuple[Check, ...]:
    """Lack of fit, Mandel, runs, Durbin-Watson, Shapiro-Wilk, Breusch-Pagan, monotonicity, outliers, influence.

    ``point_labels`` (a sequence, or a function of the point's index) names the points in details
    (default "point 1", "point 2", ...).
    """
    alpha = check_alpha(alpha)
    if point_labels is None:
        def label(i: int) -> str:
            return f"point {i + 1}"
    elif callable(point_labels):
        label = point_labels
    else:
        label = list(point_labels).__getitem__
    curve = curve_of(cal, order)
    cook, bonf, cut = _studentized(cal, curve)[3:]
    n, p = cal.n_points, curve.order + 1
    by_x = cal.by_x
    out = []

    lof = curve.stats.lack_of_fit
    if lof is None:
        out.append(Check("lack of fit", math.nan, math.nan, "n/a",
                         "needs replicated x and more distinct x values than coefficients"))
    else:
        v, d = _verdict(lof.test.p_value, alpha, "the curve misses the level means by more than replicate scatter",
                        "the curve agrees with the level means within replicate scatter")
        out.append(Check("lack of fit", lof.test.statistic, lof.test.p_value, v,
                         f"F({lof.test.df_num}, {lof.test.df_den}); {d}"))

    if cal.max_order >= 2:
        mt = mandel_test(cal)
        v, d = _verdict(mt.p_value, alpha, "the quadratic term is significant: a straight line is not adequate",
                        "a straight line is adequate against a quadratic")
        out.append(Check("Mandel linear vs quadratic", mt.statistic, mt.p_value, v, f"F(1, {mt.df_den}); {d}"))
    else:
        out.append(Check("Mandel linear vs quadratic", math.nan, math.nan, "n/a", "needs a max order of 2 or more"))

    # the tests below do not depend on the residuals' scale: use them scaled, so that huge or tiny
    # magnitudes do not over- or underflow in squares
    e = cal.scaled_residuals(curve.order)
    e_by_x = e[by_x]
    z, pz, runs = runs_test(e_by_x)
    v, d = _verdict(pz, alpha, "residual signs cluster along x: the curve shape may be wrong",
                    "residual signs alternate as expected by chance")
    out.append(Check("runs of residual signs", z, pz, v, f"{runs} runs in x order; {d}" if pz == pz else
                     "all residuals have the same sign"))

    dw = durbin_watson(e_by_x) if e.any() else math.nan
    if dw != dw:
        out.append(Check("Durbin-Watson", dw, math.nan, "n/a", "residuals are all zero"))
    else:
        far = not 1.5 <= dw <= 2.5
        out.append(Check("Durbin-Watson", dw, math.nan, "warning" if far else "ok",
                         "residuals in x order; values outside 1.5 to 2.5 suggest correlated residuals "
                         "(rule of thumb, common practice)"))

    if n >= 3 and e.max() > e.min():
        # scaled by a power of two to a largest |e| in [0.5, 1): the statistic is scale-free, and the
        # algorithm takes a range below 1e-19 as zero
        w_stat, w_p = _shapiro()(np.ldexp(e, -math.frexp(float(np.abs(e).max()))[1]))
        v, d = _verdict(float(w_p), alpha, "residuals depart from a normal distribution",
                        "no evidence against normal residuals")
        out.append(Check("Shapiro-Wilk", float(w_stat), float(w_p), v, d))
    else:
        out.append(Check("Shapiro-Wilk", math.nan, math.nan, "n/a", "needs 3 or more distinct residuals"))

    if curve.order >= 1:
        q = cal.orthonormal_basis(curve.order) if cal.weighting.values is None else None
        lm, bp = breusch_pagan(e, cal.z, curve.order, q)
        v, d = _verdict(bp, alpha, "residual spread changes with x: consider weights such as 1/x or 1/x^2",
                        "no evidence that the residual spread changes with x")
        out.append(Check("Breusch-Pagan", lm, bp, v, f"chi2({curve.order}); {d}"))

    turns = curve.turning_points()
    if turns.size:
        xs = ", ".join(f"{v:.6g}" for v in cal.raw_x(turns))
        out.append(Check("monotonic over the range", float(turns.size), math.nan, "warning",
                         f"the curve turns at x = {xs}: a reading may map to more than one x"))
    else:
        start, end = curve.value(ENDS).tolist()
        rising = end > start
        out.append(Check("monotonic over the range", 0.0, math.nan, "ok",
                         f"{'increasing' if rising else 'decreasing'} from x = {curve.x_min:.6g} to {curve.x_max:.6g}"))

    def named(points) -> str:
        return ", ".join(map(label, points)) or "none"

    flagged = (bonf < alpha).nonzero()[0].tolist()
    defined = bonf[bonf == bonf]
    smallest = float(defined.min()) if defined.size else math.nan
    out.append(Check("outliers", float(len(flagged)), smallest, "warning" if flagged else "ok",
                     named(flagged)
                     + f" (externally studentized residual, Bonferroni at {alpha:g}; p-value is the smallest)"))

    infl = (cook > cut).nonzero()[0].tolist()
    out.append(Check("influential points", float(len(infl)), math.nan, "warning" if infl else "ok",
                     named(infl)
                     + f" (Cook's distance above {cut:.3g}, the median of F({p}, {n - p}))"))
    return tuple(out)
