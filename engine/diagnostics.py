"""Diagnostics of one order: per standard, and checks of the whole curve.

Per standard (weighted residuals e_i = sqrt(w_i)(y_i - f(x_i)), leverage h_i, p coefficients,
df = n - p): internally studentized r_i = e_i / (s sqrt(1 - h_i)); externally studentized
t_i = r_i sqrt((df - 1) / (df - r_i^2)); Cook's D_i = r_i^2 h_i / (p (1 - h_i)) (Cook & Weisberg,
Residuals and Influence in Regression, Chapman & Hall 1982, ch. 2 and 3). Back-calculated x solves
f(x) = y_i, up to a quarter of the range beyond either end, nearest the standard's own x.

The checks table holds its own error rate. Lack of fit warns below alpha, the level at which the order
rules read the same test (so that CALIB_STATS, CALIB_ORDERS and the checks never disagree on it); each
of the FAMILY other tests warns when its p-value is below alpha / FAMILY (Bonferroni). On a correct
curve (normal errors, the model and weights right) the table as a whole then warns with probability
at most 2 alpha. The standards' notes flag outliers and influential points at alpha / FAMILY.

- Outliers: Bonferroni p = n P(|T_(df-1)| > |t_i|), t_i following Student's t (Cook & Weisberg 1982,
  sec. 2.2.1, from memory).
- Influential points: under the model r_i^2 / df ~ Beta(1/2, (df - 1)/2) (Cook & Weisberg 1982,
  sec. 2.2.1, from memory), so P(D_j >= d) = P(|T_(df-1)| >= t) with q = d p (1 - h_j) / h_j and
  t^2 = q (df - 1) / (df - q). A Cook's distance d has the p-value S(d) = sum_j P(D_j >= d), the
  Bonferroni bound on P(max_j D_j >= d): one threshold for every standard, which a point of high
  leverage reaches with a smaller residual.
- Runs of residual signs and Durbin-Watson read the residuals in x order, so where x repeats they use
  one residual per level, the weighted level mean u_l = sum_i w_i e_i / sqrt(W_l) (W_l = sum_i w_i):
  the full fit equals the weighted fit of the level means, so u = (I - Q Q') eps with the level
  design's Q, as the tests assume, and no test depends on the order in which replicates were typed.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.polynomial import polynomial as P
from scipy import special

from .calibration import LEVERAGE_ONE, Calibration, householder_qr
from .curve import ENDS, Curve
from .distributions import beta_cdf, log_factorials, normal_two_sided, t_two_sided
from .prediction import roots_of
from .results import Check, PointDiagnostics
from .selection import fmt_p, mandel_test
from .validation import check_alpha

BACK_CALC_EXTEND = 0.25
# tests in the checks table besides lack of fit (Mandel, runs, Durbin-Watson, Shapiro-Wilk,
# Breusch-Pagan, outliers, influential points): each warns below alpha / FAMILY
FAMILY = 7


def check_level(alpha: float) -> float:
    """The level at which each test of the checks table but lack of fit (and each standard's note) warns."""
    return check_alpha(alpha) / FAMILY


def cook_tail(d: float, h: np.ndarray, p: int, df: int) -> np.ndarray:
    """P(D_j >= d) for each standard j of leverage h_j below 1, under the model (module docstring)."""
    with np.errstate(divide="ignore"):
        q = d * p * (1.0 - h) / h
    inside = q < df
    t2 = np.where(inside, q * (df - 1) / np.where(inside, df - q, 1.0), 0.0)
    return np.where(inside, t_two_sided(np.sqrt(t2), df - 1), 0.0)


def _influence(cook: np.ndarray, h: np.ndarray, t: np.ndarray, p: int, df: int, level: float):
    """The p-value S(max D) of the largest Cook's distance, and the standards whose S(D_i) < level.

    S(D_i) holds the standard's own term P(D_i >= D_i) = P(|T_(df-1)| >= |t_i|) (t_i externally
    studentized), so only standards whose own term is below the level can be flagged; among them, by
    falling D, the flagged ones are a prefix (S falls as d grows), found by binary search."""
    usable = (h <= LEVERAGE_ONE) & np.isfinite(cook)
    if df < 2 or not usable.any():
        return math.nan, []
    hu = h[usable]

    def tail_sum(d: float) -> float:
        return float(cook_tail(d, hu, p, df).sum())

    p_max = min(1.0, tail_sum(float(cook[usable].max())))
    if not p_max < level:  # not even the largest distance
        return p_max, []
    candidates = np.flatnonzero(usable & (t_two_sided(t, df - 1) < level))
    by_size = candidates[np.argsort(-cook[candidates], kind="stable")]
    lo, hi = 0, by_size.size  # S(D) < level holds for the first `lo` of by_size
    while lo < hi:
        mid = (lo + hi) // 2
        if tail_sum(float(cook[by_size[mid]])) < level:
            lo = mid + 1
        else:
            hi = mid
    return p_max, sorted(by_size[:lo].tolist())


def back_calculate(cal: Calibration, curve: Curve):
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


def deviation_percent(back: np.ndarray, x: np.ndarray) -> np.ndarray:
    """100 (back-calculated x - x) / |x| per standard; nan at x = 0."""
    dev = np.full(x.size, np.nan)
    with np.errstate(over="ignore"):  # a back-calculated x near the double range: an empty cell
        np.divide(100.0 * (back - x), np.abs(x), out=dev, where=x != 0)
    return dev


def point_diagnostics(cal: Calibration, order: int, alpha: float = 0.05) -> PointDiagnostics:
    """Fitted, residual, studentized residuals, leverage, Cook's D, back-calculated x per standard;
    notes flag outliers and influential points at ``check_level(alpha)``, as the checks table does."""
    level = check_level(alpha)
    results = cal.order(order)
    curve = results.curve
    h, r, t, cook, bonf = results.influence
    exact = cal.fits_exactly(curve.order)  # then the residuals are rounding, and no standard stands out
    influential = set() if exact else set(_influence(cook, h, t, curve.order + 1, curve.df, level)[1])
    if exact:
        bonf = np.ones_like(bonf)
    fitted = cal.y - cal.weighted_residuals(curve.order) / cal.sqrt_w
    resid = cal.y - fitted
    back, count = back_calculate(cal, curve)
    x = cal.x
    notes = [""] * cal.n_points
    flagged = (count != 1) | (bonf < level) | (h > LEVERAGE_ONE) | (x == 0)
    flagged[list(influential)] = True
    for i in flagged.nonzero()[0].tolist():
        words = []
        if count[i] > 1:
            words.append("several x give this response; the one nearest the standard is shown")
        elif count[i] == 0:
            words.append("no x near the calibrated range gives this response")
        if bonf[i] < level:
            words.append(f"outlier (externally studentized {t[i]:.3g}, Bonferroni p = {fmt_p(float(bonf[i]))})")
        if i in influential:
            words.append(f"influential (Cook's distance {cook[i]:.3g})")
        if h[i] > LEVERAGE_ONE:
            words.append("leverage 1: this standard alone fixes the curve here")
        if x[i] == 0:
            words.append("deviation % not defined at x = 0")
        notes[i] = "; ".join(words)
    columns = (fitted, resid, r, t, h, cook, back, deviation_percent(back, x))
    return PointDiagnostics(*map(tuple, np.array(columns).tolist()), tuple(notes))


def level_residuals(cal: Calibration, order: int):
    """One residual per distinct x, in x order: u_l = sum_i w_i e_i / sqrt(W_l) (module docstring),
    in curve units; and the orthonormal basis of the level design sqrt(W_l) z_l^j, j = 0..order."""
    by_x = cal.by_x
    x = cal.x[by_x]
    starts = np.flatnonzero(np.concatenate(([True], x[1:] != x[:-1])))
    sw = cal.sqrt_w[by_x]
    u = np.add.reduceat(sw * cal.scaled_residuals(order)[by_x], starts)
    root_w = np.sqrt(np.add.reduceat(sw * sw, starts))
    q, _ = householder_qr(P.polyvander(cal.z[by_x][starts], order) * root_w[:, None])
    return u / root_w, q


def runs_distribution(n1: int, n2: int) -> tuple[np.ndarray, np.ndarray]:
    """The number of runs r = 2 .. n1 + n2 in a random arrangement of n1 and n2 signs, and P(R = r):
    P(R = 2k) = 2 C(n1-1, k-1) C(n2-1, k-1) / C(n, n1) and P(R = 2k+1) = [C(n1-1, k-1) C(n2-1, k) +
    C(n1-1, k) C(n2-1, k-1)] / C(n, n1) (Swed & Eisenhart, Ann. Math. Stat. 14 (1943) 66-87,
    from memory)."""
    r = np.arange(2, n1 + n2 + 1)
    k = r // 2
    ln_fact = log_factorials(n1 + n2)

    def lc(n: int, j: np.ndarray) -> np.ndarray:  # ln C(n, j), -inf outside 0 <= j <= n
        inside = (j >= 0) & (j <= n)
        j = np.where(inside, j, 0)
        return np.where(inside, ln_fact[n] - ln_fact[j] - ln_fact[n - j], -np.inf)

    total = ln_fact[n1 + n2] - ln_fact[n1] - ln_fact[n2]
    with np.errstate(divide="ignore"):
        even = math.log(2.0) + lc(n1 - 1, k - 1) + lc(n2 - 1, k - 1)
        odd = np.logaddexp(lc(n1 - 1, k - 1) + lc(n2 - 1, k), lc(n1 - 1, k) + lc(n2 - 1, k - 1))
    return r, np.exp(np.where(r % 2 == 0, even, odd) - total)


def runs_test(residuals_by_x: np.ndarray) -> tuple[float, float, int]:
    """Wald-Wolfowitz runs test of residual signs (zero counts as positive), normal approximation.

    z = (R - mu) / sigma with mu = 2 n1 n2 / N + 1 and
    sigma^2 = 2 n1 n2 (2 n1 n2 - N) / (N^2 (N - 1)), without continuity correction
    (Wald & Wolfowitz, Ann. Math. Stat. 11 (1940) 147-162). Returns z (negative: fewer runs than
    expected, the signs cluster; positive: more, they alternate), its two-sided normal p and the
    number of runs. The checks take p from the exact distribution (``runs_exact_p``).
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


def runs_exact_p(residuals_by_x: np.ndarray) -> float:
    """Two-sided exact p of the number of runs of residual signs (zero counts as positive):
    min(1, 2 min(P(R <= runs), P(R >= runs))) under the distribution given the numbers of each sign
    (``runs_distribution``); nan when every sign is the same."""
    pos = residuals_by_x >= 0
    runs = int(1 + np.count_nonzero(pos[1:] != pos[:-1]))
    n1 = int(np.count_nonzero(pos))
    if n1 == 0 or n1 == pos.size:
        return math.nan
    r, pmf = runs_distribution(n1, pos.size - n1)
    return min(1.0, 2 * min(float(pmf[r <= runs].sum()), float(pmf[r >= runs].sum())))


def durbin_watson(residuals_by_x: np.ndarray) -> float:
    """DW = sum (e_t - e_(t-1))^2 / sum e_t^2 (Durbin & Watson, Biometrika 37 (1950) 409-428)."""
    d = residuals_by_x[1:] - residuals_by_x[:-1]
    return float(d @ d / (residuals_by_x @ residuals_by_x))


def durbin_watson_p(d: float, q: np.ndarray) -> float:
    """P(DW <= d) for residuals (I - Q Q') eps, eps independent normal: the one-sided p against
    positive serial correlation. d/4 is taken as beta with the exact mean and variance of d
    (Durbin & Watson, Biometrika 37 (1950) 409-428, sec. 7; from memory): with M = I - QQ', A the
    difference matrix (d = u'Au / u'u) and nu = n - p, E d = tr(MA)/nu and
    Var d = 2 (nu tr((MA)^2) - tr(MA)^2) / (nu^2 (nu + 2)); tr(MA) = 2(n-1) - |DQ|^2 and
    tr((MA)^2) = 6n - 8 - 2 |AQ|^2 + |Q'AQ|^2 (D the first differences, A = D'D)."""
    n, p = q.shape
    nu = n - p
    dq = np.diff(q, axis=0)
    aq = np.zeros_like(q)
    aq[:-1] -= dq
    aq[1:] += dq
    qaq = dq.T @ dq
    tr1 = 2.0 * (n - 1) - float((dq * dq).sum())
    tr2 = 6.0 * n - 8 - 2 * float((aq * aq).sum()) + float((qaq * qaq).sum())
    mean, var = tr1 / nu, 2 * (nu * tr2 - tr1 * tr1) / (nu * nu * (nu + 2))
    mu, v = mean / 4, var / 16
    size = mu * (1 - mu) / v - 1
    return float(beta_cdf(d / 4, mu * size, (1 - mu) * size))


def breusch_pagan(residuals: np.ndarray, z: np.ndarray, order: int, q=None) -> tuple[float, float]:
    """Koenker's studentized Breusch-Pagan LM = n R^2 of e^2 on 1, z, ..., z^order; chi2(order).

    Breusch & Pagan, Econometrica 47 (1979) 1287-1294; Koenker, J. Econometrics 17 (1981) 107-112.
    """
    e2 = residuals**2
    if q is None:  # an orthonormal basis of 1, z, ..., z^order
        q, _ = householder_qr(P.polyvander(z, order))
    d = e2 - e2.sum() / e2.size
    tss = float(d @ d)
    if tss == 0:
        return math.nan, math.nan
    # the regression sum of squares: the basis holds the constant, so the fit of e^2 less its mean is
    # the projection of e^2 - mean, whose squared length is |Q'(e^2 - mean)|^2
    c = q.T @ d
    lm = e2.size * float(c @ c) / tss
    return lm, float(special.chdtrc(order, lm))


def _verdict(p: float, level: float) -> str:
    return "n/a" if p != p else ("warning" if p < level else "ok")


def _inadequate_words(cal: Calibration) -> str:
    return (f"a polynomial of order <= {cal.max_order} does not describe these data; "
            "consider a narrower range or another model")


def curve_checks(cal: Calibration, order: int, alpha: float = 0.05, point_labels=None) -> tuple[Check, ...]:
    """Lack of fit, Mandel, runs, Durbin-Watson, Shapiro-Wilk, Breusch-Pagan, monotonicity, outliers, influence.

    Each test warns below ``check_level(alpha)`` (module docstring). ``point_labels`` (a function of
    a point's index) gives a point's position (default "standard 3 of 18"); details add its x and y.
    """
    alpha = check_alpha(alpha)
    level = check_level(alpha)
    results = cal.order(order)
    curve = results.curve
    k, big_k = curve.order, cal.max_order
    h, _, t, cook, bonf = results.influence
    n, p = cal.n_points, k + 1
    position = point_labels or (lambda i: f"standard {i + 1} of {n}")
    at = f"warning below p = {level:.3g}"

    def named(points) -> str:
        return "; ".join(f"{position(i)}, x = {cal.x[i]:.6g}, y = {cal.y[i]:.6g}" for i in points) or "none"

    rows = {}
    misfit = False
    lof = curve.stats.lack_of_fit
    if lof is None:
        rows["lack of fit"] = Check("lack of fit", math.nan, math.nan, "n/a",
                                    "needs replicated x and more distinct x values than coefficients")
    elif lof.note or lof.test.p_value != lof.test.p_value:
        rows["lack of fit"] = Check("lack of fit", math.nan, math.nan, "n/a", lof.note or "not testable")
    else:
        test = lof.test
        v = _verdict(test.p_value, alpha)
        if v == "warning":
            misfit = True
            higher = [cal.stats(j).lack_of_fit for j in range(k + 1, big_k + 1)]
            fits = [j for j, lof_j in enumerate(higher, k + 1) if lof_j is not None and not lof_j.test.p_value < alpha]
            words = "the curve misses the level means by more than replicate scatter; " + (
                f"order {fits[0]} agrees with them" if fits else _inadequate_words(cal))
        else:
            words = "the curve agrees with the level means within replicate scatter"
        rows["lack of fit"] = Check("lack of fit", test.statistic, test.p_value, v,
                                    f"F({test.df_num}, {test.df_den}); {words}; warning below p = {alpha:.3g}")

    if big_k < 2:
        rows["Mandel"] = Check("Mandel linear vs quadratic", math.nan, math.nan, "n/a",
                               "needs a max order of 2 or more")
    else:
        mt = mandel_test(cal)
        if mt.p_value != mt.p_value:
            v, words = "n/a", "the quadratic fits exactly: nothing to test"
        elif k == 1:
            v = _verdict(mt.p_value, level)
            misfit |= v == "warning"
            words = ("the quadratic term is significant: a straight line is not adequate" if v == "warning"
                     else "a straight line is adequate against a quadratic") + f"; {at}"
        else:  # the chosen curve already holds the quadratic term: the test says whether it is needed
            v = "ok"
            words = (f"the quadratic term is justified (order {k} chosen; p < {alpha:g})" if mt.p_value < alpha
                     else f"the quadratic term alone is not significant against a straight line (p >= {alpha:g}); "
                          f"order {k} rests on its higher terms or was given")
        rows["Mandel"] = Check("Mandel linear vs quadratic", mt.statistic, mt.p_value, v, f"F(1, {mt.df_den}); {words}")

    # the tests below do not depend on the residuals' scale: use them scaled, so that huge or tiny
    # magnitudes do not over- or underflow in squares
    e = cal.scaled_residuals(k)
    u, q = level_residuals(cal, k)
    per = "level means (one per distinct x)" if u.size < n else "residuals"
    z_runs, _, runs = runs_test(u)
    p_runs = runs_exact_p(u)
    v = _verdict(p_runs, level)
    if v == "n/a":
        words = "all residuals have the same sign"
    elif v == "ok":
        words = f"{runs} runs of signs of the {per} in x order; no pattern along x; {at}"
    elif z_runs > 0:
        words = (f"{runs} runs of signs of the {per} in x order: the signs alternate more often than chance; "
                 f"look for a pattern in how the standards were prepared or run; {at}")
    else:
        misfit = True
        words = (f"{runs} runs of signs of the {per} in x order: the signs cluster along x; "
                 f"the curve shape may be wrong; {at}")
    # the statistic is the number of runs, whose exact distribution gives p (z only tells the side)
    rows["runs"] = Check("runs of residual signs", float(runs) if v != "n/a" else math.nan, p_runs, v, words)

    if u.size - p < 2 or not u.any():
        rows["DW"] = Check("Durbin-Watson", math.nan, math.nan, "n/a",
                           f"needs {p + 2} or more distinct x values and residuals that are not all zero")
    else:
        dw = durbin_watson(u)
        p_dw = durbin_watson_p(dw, q)
        v = _verdict(p_dw, level)
        misfit |= v == "warning"
        words = ("the residuals are positively correlated along x: the curve shape may be wrong" if v == "warning"
                 else "no evidence of positive correlation along x")
        rows["DW"] = Check("Durbin-Watson", dw, p_dw, v, f"{per} in x order, one-sided; {words}; {at}")

    if n >= 3 and e.max() > e.min():
        # scaled by a power of two to a largest |e| in [0.5, 1): the statistic is scale-free, and the
        # algorithm takes a range below 1e-19 as zero
        from scipy.stats import shapiro  # imported on first use: scipy.stats takes half a second to import

        # undecorated: scipy's axis/NaN-policy wrapper adds 11 % to a sheet's family after an edit
        # (benchmarks/bench_family.py); tests compare against the public scipy.stats.shapiro
        w_stat, w_p = getattr(shapiro, "__wrapped__", shapiro)(np.ldexp(e, -math.frexp(float(np.abs(e).max()))[1]))
        v = _verdict(float(w_p), level)
        words = ("residuals depart from a normal distribution" if v == "warning"
                 else "no evidence against normal residuals")
        rows["SW"] = Check("Shapiro-Wilk", float(w_stat), float(w_p), v, f"{words}; {at}")
    else:
        rows["SW"] = Check("Shapiro-Wilk", math.nan, math.nan, "n/a", "needs 3 or more distinct residuals")

    turns = curve.turning_points()
    if turns.size:
        misfit = True
        xs = ", ".join(f"{v:.6g}" for v in cal.raw_x(turns))
        rows["monotonic"] = Check("monotonic over the range", float(turns.size), math.nan, "warning",
                                  f"the curve turns at x = {xs}: a reading may map to more than one x; "
                                  f"the order {k} curve does not describe these data over this range; "
                                  "consider a narrower range or another model")
    else:
        start, end = curve.value(ENDS).tolist()
        rows["monotonic"] = Check("monotonic over the range", 0.0, math.nan, "ok",
                                  f"{'increasing' if end > start else 'decreasing'} from x = {curve.x_min:.6g} "
                                  f"to {curve.x_max:.6g}")

    if k >= 1:
        basis = cal.orthonormal_basis(k) if cal.weighting.values is None else None
        lm, p_bp = breusch_pagan(e, cal.z, k, basis)
        v = _verdict(p_bp, level)
        rows["BP"] = Check("Breusch-Pagan", lm, p_bp, v,
                           f"chi2({k}) on the {'weighted ' if cal.weighting.values is not None else ''}residuals; "
                           f"{_spread_words(cal, e, v, misfit)}; {at}")

    flagged = (bonf < level).nonzero()[0].tolist()
    defined = bonf[bonf == bonf]
    smallest = float(defined.min()) if defined.size else math.nan
    rows["outliers"] = Check("outliers", float(len(flagged)), smallest, _verdict(smallest, level),
                             named(flagged) + " (externally studentized residual, Bonferroni over the "
                             f"standards; p-value is the smallest; {at})")

    p_infl, infl = _influence(cook, h, t, p, curve.df, level)
    rows["influence"] = Check("influential points", float(len(infl)), p_infl, _verdict(p_infl, level),
                              named(infl) + " (Cook's distance against its distribution under the model, "
                              f"Bonferroni over the standards; p-value is the largest distance's; {at})")
    if cal.fits_exactly(curve.order):  # residuals are rounding: nothing to test in them
        exact = f"the data fit exactly at order {k} (residuals at rounding level): nothing to test"
        for key in ("lack of fit", "runs", "DW", "BP", "outliers", "influence") + (("Mandel",) if k == 1 else ()):
            if key in rows:
                rows[key] = Check(rows[key].name, math.nan, math.nan, "n/a", exact)
        # W is scale-free and describes the rounding residuals as they are; it is not a verdict on the curve
        rows["SW"] = rows["SW"]._replace(verdict="n/a", detail=exact)
    keys = ("lack of fit", "Mandel", "runs", "DW", "SW", "BP", "monotonic", "outliers", "influence")
    return tuple(rows[key] for key in keys if key in rows)


def _spread_words(cal: Calibration, e: np.ndarray, verdict: str, misfit: bool) -> str:
    """What a Breusch-Pagan verdict means for the weights in use."""
    if verdict != "warning":
        return "no evidence that the residual spread changes with x"
    e2 = e * e
    grows = float((e2 - e2.mean()) @ (cal.z - cal.z.mean())) > 0
    trend = "grows" if grows else "falls"
    if misfit:
        return (f"the residual spread {trend} with x, which a misfit of the curve (see above) can cause: "
                "settle the curve before choosing weights")
    scheme = cal.weighting.label
    if scheme == "none":
        return ("the residual spread grows with x: consider weights such as 1/x or 1/x^2" if grows else
                "the residual spread falls with x, which 1/x or 1/y weights would make worse; look at the replicates")
    if grows:
        return f"under weights '{scheme}' the weighted residual spread still grows with x: stronger weights may fit"
    return f"under weights '{scheme}' the weighted residual spread falls with x: the weights may be too strong"
