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
from typing import TYPE_CHECKING

import numpy as np
from scipy import special

from .curve import ENDS, Curve
from .distributions import beta_cdf, log_factorials, t_two_sided
from .linalg import LEVERAGE_ONE, orthonormal_columns, powers
from .prediction import roots_of
from .results import Check, PointDiagnostics
from .selection import mandel_test
from .validation import check_alpha
from .words import fmt_p, inadequate_words, lack_of_fit_note

if TYPE_CHECKING:  # the calibration builds on this module (through its orders)
    from .calibration import Calibration

BACK_CALC_EXTEND = 0.25


def warning_alpha(alpha: float) -> float:
    """The level at which each test of the checks table but lack of fit (and each standard's note) warns."""
    return check_alpha(alpha) / FAMILY


def cook_tail(d: float, h: np.ndarray, p: int, df: int) -> np.ndarray:
    """P(D_j >= d) for each standard j of leverage h_j below 1, under the model (module docstring)."""
    with np.errstate(divide="ignore"):
        q = d * p * (1.0 - h) / h
    inside = q < df
    t2 = np.where(inside, q * (df - 1) / np.where(inside, df - q, 1.0), 0.0)
    return np.where(inside, t_two_sided(np.sqrt(t2), df - 1), 0.0)


def _influence(cook: np.ndarray, h: np.ndarray, t: np.ndarray, p: int, df: int, warn_below: float):
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
    if not p_max < warn_below:  # not even the largest distance
        return p_max, []
    candidates = np.flatnonzero(usable & (t_two_sided(t, df - 1) < warn_below))
    by_size = candidates[np.argsort(-cook[candidates], kind="stable")]
    lo, hi = 0, by_size.size  # S(D) < level holds for the first `lo` of by_size
    while lo < hi:
        mid = (lo + hi) // 2
        if tail_sum(float(cook[by_size[mid]])) < warn_below:
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
    notes flag outliers and influential points at ``warning_alpha(alpha)``, as the checks table does.
    Read it as ``cal.order(order).diagnostics(alpha)``, which keeps it."""
    warn_below = warning_alpha(alpha)
    results = cal.order(order)
    curve = results.curve
    h, r, t, cook, bonf = results.influence
    exact = cal.fits_exactly(curve.order)  # then the residuals are rounding, and no standard stands out
    influential = set() if exact else set(_influence(cook, h, t, curve.order + 1, curve.df, warn_below)[1])
    if exact:
        bonf = np.ones_like(bonf)
    fitted = cal.y - cal.weighted_residuals(curve.order) / cal.sqrt_w
    resid = cal.y - fitted
    back, count = results.back_calculation
    x = cal.x
    notes = [""] * cal.n_points
    flagged = (count != 1) | (bonf < warn_below) | (h > LEVERAGE_ONE) | (x == 0)
    flagged[list(influential)] = True
    for i in flagged.nonzero()[0].tolist():
        words = []
        if count[i] > 1:
            words.append("several x give this response; the one nearest the standard is shown")
        elif count[i] == 0:
            words.append("no x near the calibrated range gives this response")
        if bonf[i] < warn_below:
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
    q = orthonormal_columns(powers(cal.z[by_x][starts], order) * root_w[:, None])
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
    a_less, b_less = lc(n1 - 1, k - 1), lc(n2 - 1, k - 1)
    with np.errstate(divide="ignore"):
        even = math.log(2.0) + a_less + b_less
        odd = np.logaddexp(a_less + lc(n2 - 1, k), lc(n1 - 1, k) + b_less)
    return r, np.exp(np.where(r % 2 == 0, even, odd) - total)


def runs_test(residuals_by_x: np.ndarray) -> tuple[float, int]:
    """Wald-Wolfowitz runs test of residual signs (zero counts as positive): the normal score of the runs.

    z = (R - mu) / sigma with mu = 2 n1 n2 / N + 1 and
    sigma^2 = 2 n1 n2 (2 n1 n2 - N) / (N^2 (N - 1)), without continuity correction
    (Wald & Wolfowitz, Ann. Math. Stat. 11 (1940) 147-162). Returns z (negative: fewer runs than
    expected, the signs cluster; positive: more, they alternate) and the number of runs. Its p-value comes
    from the exact distribution (``runs_exact_p``), not the normal approximation.
    """
    pos = residuals_by_x >= 0
    runs = int(1 + np.count_nonzero(pos[1:] != pos[:-1]))
    n1 = int(np.count_nonzero(pos))
    n2 = pos.size - n1
    big_n = pos.size
    if n1 == 0 or n2 == 0:
        return math.nan, runs
    mu = 2.0 * n1 * n2 / big_n + 1
    var = 2.0 * n1 * n2 * (2.0 * n1 * n2 - big_n) / (big_n**2 * (big_n - 1))
    if var <= 0:
        return math.nan, runs
    return (runs - mu) / math.sqrt(var), runs


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
        q = orthonormal_columns(powers(z, order))
    d = e2 - e2.sum() / e2.size
    tss = float(d @ d)
    if tss == 0:
        return math.nan, math.nan
    # the regression sum of squares: the basis holds the constant, so the fit of e^2 less its mean is
    # the projection of e^2 - mean, whose squared length is |Q'(e^2 - mean)|^2
    c = q.T @ d
    lm = e2.size * float(c @ c) / tss
    return lm, float(special.chdtrc(order, lm))


def _verdict(p: float, warn_below: float) -> str:
    return "n/a" if p != p else ("warning" if p < warn_below else "ok")


class _Context:
    """What the checks of one order share: the calibration, the order's results, the warning level and its
    words, and the residuals (scaled: the tests do not depend on their scale, and huge or tiny magnitudes then
    neither over- nor underflow in squares), also one per level in x order."""

    def __init__(self, cal: Calibration, order: int, alpha: float, point_labels):
        self.cal, self.alpha, self.warn_below = cal, alpha, warning_alpha(alpha)
        self.results = cal.order(order)
        self.curve = self.results.curve
        self.k, self.n = self.curve.order, cal.n_points
        self.at = f"warning below p = {self.warn_below:.3g}"
        self.position = point_labels or (lambda i: f"standard {i + 1} of {self.n}")
        self.e = cal.scaled_residuals(self.k)
        self.u, self.q = level_residuals(cal, self.k)
        self.per = "level means (one per distinct x)" if self.u.size < self.n else "residuals"
        self.misfit = False  # set by a check of the curve's shape that warns; the spread check's words read it

    def named(self, points) -> str:
        cal = self.cal
        return "; ".join(f"{self.position(i)}, x = {cal.x[i]:.6g}, y = {cal.y[i]:.6g}" for i in points) or "none"


def _lack_of_fit_check(c: _Context) -> Check:
    """Lack of fit, at alpha (the level of the order rules)."""
    cal, k, alpha = c.cal, c.k, c.alpha
    lof = c.curve.stats.lack_of_fit
    if lof is None:
        return Check("lack of fit", math.nan, math.nan, "n/a",
                     "needs replicated x and more distinct x values than coefficients")
    if (note := lack_of_fit_note(lof)) or lof.test.p_value != lof.test.p_value:
        return Check("lack of fit", math.nan, math.nan, "n/a", note or "not testable")
    test = lof.test
    v = _verdict(test.p_value, alpha)
    if v == "warning":
        c.misfit = True
        higher = [cal.stats(j).lack_of_fit for j in range(k + 1, cal.max_order + 1)]
        fits = [j for j, lof_j in enumerate(higher, k + 1) if lof_j is not None and not lof_j.test.p_value < alpha]
        words = "the curve misses the level means by more than replicate scatter; " + (
            f"order {fits[0]} agrees with them" if fits else inadequate_words(cal.max_order))
    else:
        words = "the curve agrees with the level means within replicate scatter"
    return Check("lack of fit", test.statistic, test.p_value, v,
                 f"F({test.df_num}, {test.df_den}); {words}; warning below p = {alpha:.3g}")


def _mandel_check(c: _Context) -> Check:
    k, alpha = c.k, c.alpha
    if c.cal.max_order < 2:
        return Check("Mandel linear vs quadratic", math.nan, math.nan, "n/a", "needs a max order of 2 or more")
    mt = mandel_test(c.cal)
    if mt.p_value != mt.p_value:
        v, words = "n/a", "the quadratic fits exactly: nothing to test"
    elif k == 1:
        v = _verdict(mt.p_value, c.warn_below)
        c.misfit |= v == "warning"
        words = ("the quadratic term is significant: a straight line is not adequate" if v == "warning"
                 else "a straight line is adequate against a quadratic") + f"; {c.at}"
    else:  # the chosen curve already holds the quadratic term: the test says whether it is needed
        v = "ok"
        words = (f"the quadratic term is justified (order {k} chosen; p < {alpha:g})" if mt.p_value < alpha
                 else f"the quadratic term alone is not significant against a straight line (p >= {alpha:g}); "
                      f"order {k} rests on its higher terms or was given")
    return Check("Mandel linear vs quadratic", mt.statistic, mt.p_value, v, f"F(1, {mt.df_den}); {words}")


def _runs_check(c: _Context) -> Check:
    z_runs, runs = runs_test(c.u)
    p_runs = runs_exact_p(c.u)
    v = _verdict(p_runs, c.warn_below)
    if v == "n/a":
        words = "all residuals have the same sign"
    elif v == "ok":
        words = f"{runs} runs of signs of the {c.per} in x order; no pattern along x; {c.at}"
    elif z_runs > 0:
        words = (f"{runs} runs of signs of the {c.per} in x order: the signs alternate more often than chance; "
                 f"look for a pattern in how the standards were prepared or run; {c.at}")
    else:
        c.misfit = True
        words = (f"{runs} runs of signs of the {c.per} in x order: the signs cluster along x; "
                 f"the curve shape may be wrong; {c.at}")
    # the statistic is the number of runs, whose exact distribution gives p (z only tells the side)
    return Check("runs of residual signs", float(runs) if v != "n/a" else math.nan, p_runs, v, words)


def _durbin_watson_check(c: _Context) -> Check:
    p = c.k + 1
    if c.u.size - p < 2 or not c.u.any():
        return Check("Durbin-Watson", math.nan, math.nan, "n/a",
                     f"needs {p + 2} or more distinct x values and residuals that are not all zero")
    dw = durbin_watson(c.u)
    p_dw = durbin_watson_p(dw, c.q)
    v = _verdict(p_dw, c.warn_below)
    c.misfit |= v == "warning"
    words = ("the residuals are positively correlated along x: the curve shape may be wrong" if v == "warning"
             else "no evidence of positive correlation along x")
    return Check("Durbin-Watson", dw, p_dw, v, f"{c.per} in x order, one-sided; {words}; {c.at}")


def _shapiro_wilk_check(c: _Context) -> Check:
    e = c.e
    if not (c.n >= 3 and e.max() > e.min()):
        return Check("Shapiro-Wilk", math.nan, math.nan, "n/a", "needs 3 or more distinct residuals")
    # scaled by a power of two to a largest |e| in [0.5, 1): the statistic is scale-free, and the
    # algorithm takes a range below 1e-19 as zero
    from scipy.stats import shapiro  # imported on first use: scipy.stats takes half a second to import

    # undecorated: scipy's axis/NaN-policy wrapper adds 11 % to a sheet's family after an edit
    # (benchmarks/bench_family.py); tests compare against the public scipy.stats.shapiro
    w_stat, w_p = getattr(shapiro, "__wrapped__", shapiro)(np.ldexp(e, -math.frexp(float(np.abs(e).max()))[1]))
    v = _verdict(float(w_p), c.warn_below)
    words = "residuals depart from a normal distribution" if v == "warning" else "no evidence against normal residuals"
    return Check("Shapiro-Wilk", float(w_stat), float(w_p), v, f"{words}; {c.at}")


def _monotonic_check(c: _Context) -> Check:
    curve = c.curve
    turns = curve.turning_points()
    if turns.size:
        c.misfit = True
        xs = ", ".join(f"{v:.6g}" for v in c.cal.raw_x(turns))
        return Check("monotonic over the range", float(turns.size), math.nan, "warning",
                     f"the curve turns at x = {xs}: a reading may map to more than one x; "
                     f"the order {c.k} curve does not describe these data over this range; "
                     "consider a narrower range or another model")
    start, end = curve.value(ENDS).tolist()
    return Check("monotonic over the range", 0.0, math.nan, "ok",
                 f"{'increasing' if end > start else 'decreasing'} from x = {curve.x_min:.6g} to {curve.x_max:.6g}")


def _breusch_pagan_check(c: _Context) -> Check:
    """Breusch-Pagan, after the checks of the curve's shape: where one warned (``c.misfit``), its words say
    that a misfit can cause a trend in spread."""
    cal, k = c.cal, c.k
    basis = None if cal.weighting.weighted else cal.orthonormal_basis(k)
    lm, p_bp = breusch_pagan(c.e, cal.z, k, basis)
    v = _verdict(p_bp, c.warn_below)
    return Check("Breusch-Pagan", lm, p_bp, v, f"chi2({k}) on the {'weighted ' if cal.weighting.weighted else ''}"
                 f"residuals; {_spread_words(cal, c.e, v, c.misfit)}; {c.at}")


def _outliers_check(c: _Context) -> Check:
    bonf = c.results.influence.bonferroni_p
    flagged = (bonf < c.warn_below).nonzero()[0].tolist()
    defined = bonf[bonf == bonf]
    smallest = float(defined.min()) if defined.size else math.nan
    return Check("outliers", float(len(flagged)), smallest, _verdict(smallest, c.warn_below),
                 c.named(flagged) + " (externally studentized residual, Bonferroni over the "
                 f"standards; p-value is the smallest; {c.at})")


def _influence_check(c: _Context) -> Check:
    h, _, t, cook, _ = c.results.influence
    p_infl, infl = _influence(cook, h, t, c.k + 1, c.curve.df, c.warn_below)
    return Check("influential points", float(len(infl)), p_infl, _verdict(p_infl, c.warn_below),
                 c.named(infl) + " (Cook's distance against its distribution under the model, "
                 f"Bonferroni over the standards; p-value is the largest distance's; {c.at})")


# computed in this order: Breusch-Pagan after the checks of the curve's shape, whose warnings its words read
_CHECKS = {"lack of fit": _lack_of_fit_check, "Mandel": _mandel_check, "runs": _runs_check,
           "DW": _durbin_watson_check, "SW": _shapiro_wilk_check, "monotonic": _monotonic_check,
           "BP": _breusch_pagan_check, "outliers": _outliers_check, "influence": _influence_check}
_TABLE = ("lack of fit", "Mandel", "runs", "DW", "SW", "BP", "monotonic", "outliers", "influence")
# the tests that warn below alpha / FAMILY: every check but lack of fit (at alpha) and monotonicity (no test)
FAMILY = len(_CHECKS.keys() - {"lack of fit", "monotonic"})


def curve_checks(cal: Calibration, order: int, alpha: float = 0.05, point_labels=None) -> tuple[Check, ...]:
    """Lack of fit, Mandel, runs, Durbin-Watson, Shapiro-Wilk, Breusch-Pagan, monotonicity, outliers, influence.

    Each test warns below ``warning_alpha(alpha)`` (module docstring). ``point_labels`` (a function of
    a point's index) gives a point's position (default "standard 3 of 18"); details add its x and y.
    """
    c = _Context(cal, order, check_alpha(alpha), point_labels)
    k = c.k
    rows = {key: check(c) for key, check in _CHECKS.items() if key != "BP" or k >= 1}
    if cal.fits_exactly(c.k):  # residuals are rounding: nothing to test in them
        exact = f"the data fit exactly at order {k} (residuals at rounding level): nothing to test"
        for key in ("lack of fit", "runs", "DW", "BP", "outliers", "influence") + (("Mandel",) if k == 1 else ()):
            if key in rows:
                rows[key] = Check(rows[key].name, math.nan, math.nan, "n/a", exact)
        # W is scale-free and describes the rounding residuals as they are; it is not a verdict on the curve
        rows["SW"] = rows["SW"]._replace(verdict="n/a", detail=exact)
    return tuple(rows[key] for key in _TABLE if key in rows)


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
