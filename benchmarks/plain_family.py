"""A plain numpy/scipy floor for one sheet's 12 CALIB_* functions (ORDER, ORDERS, SEQF, COEFS, STATS,
PREDICT, INVERSE, RESIDUALS, CHECKS, LIMITS, WEIGHTING, COMPARE): the same numbers, computed directly.

Timed against the worksheet functions by bench_family.py beside it. Everything is O(n) or O(n log n)
in the number of points n (no n x n or m x m matrices): one Householder QR (numpy.linalg.qr) of the raw
Vandermonde design of order K serves every order 0..K (nested column spaces), roots are companion-matrix
eigenvalues (batched numpy.linalg.eigvals), distributions through scipy.special, Shapiro-Wilk through
scipy.stats.shapiro without its wrapper (as the engine), Durbin-Watson's beta approximation from trace
identities, the Cook's-distance tail sum with the same binary search as the engine.

Left out against the worksheet functions: input validation and messages, texts/notes/verdicts, the
centred scaled basis and power-of-two scaling, double-double refinement, excluded standards,
caches.  The 1/y, 1/y^2 IRLS is done as the engine (quadratic fitted values, to 1e-10).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special, stats
from scipy.optimize import brentq

ALPHA, LEVEL, FAMILY = 0.05, 0.95, 7


def cells(values) -> np.ndarray:
    return np.array(values, dtype=float).ravel()


def real_roots(coefs, lo, hi):
    """Real roots in [lo, hi] of each row's polynomial sum_j c_j x^j (nan elsewhere)."""
    count, d = coefs.shape[0], coefs.shape[1] - 1
    if d == 1:
        r = -coefs[:, :1] / coefs[:, 1:]
        return np.where((r >= lo) & (r <= hi), r, np.nan)
    comp = np.zeros((count, d, d))
    comp[:, np.arange(1, d), np.arange(d - 1)] = 1.0
    comp[:, :, -1] = -coefs[:, :-1] / coefs[:, -1:]
    roots = np.linalg.eigvals(comp)
    keep = (np.abs(roots.imag) <= 1e-9 * (1 + np.abs(roots.real))) & (roots.real >= lo) & (roots.real <= hi)
    return np.where(keep, roots.real, np.nan)


def default_k(n, m):
    return max(min(4, m - 2, n - 5), min(2, m - 2, n - 3))


class Fits:
    """Weighted (sqrt_w) fits of every order 0..K from one QR of the order-K design."""

    def __init__(self, x, y, big_k, sw=None):
        self.x, self.y, self.n, self.K = x, y, x.size, big_k
        self.sw = np.ones_like(x) if sw is None else sw
        V = np.vander(x, big_k + 1, increasing=True) * self.sw[:, None]
        q, r = np.linalg.qr(V)
        yw = y * self.sw
        self.q, self.r, self.yw = q, r, yw
        qty = q.T @ yw
        self.qty = qty
        self.rss = np.empty(big_k + 1)
        self.h = np.cumsum(q * q, axis=1)  # leverages of every order, column k
        e = yw - q[:, 0] * qty[0]
        self.rss[0] = e @ e
        for k in range(1, big_k + 1):
            e = e - q[:, k] * qty[k]
            self.rss[k] = e @ e
        self.df = self.n - np.arange(big_k + 1) - 1

    def order(self, k):
        """coefficients, weighted residuals, leverages, unscaled covariance of order k."""
        r = self.r[: k + 1, : k + 1]
        b = np.linalg.solve(r, self.qty[: k + 1])
        e = self.yw - self.q[:, : k + 1] @ self.qty[: k + 1]
        ri = np.linalg.inv(r)
        return b, e, self.h[:, k], ri @ ri.T

    def stepdown(self, alpha=ALPHA):
        K, rss, df = self.K, self.rss, self.df
        step_f = (rss[:-1] - rss[1:]) / (rss[1:] / df[1:])
        step_p = special.fdtrc(1, df[1:], step_f)
        level = alpha / (K - 1) if K > 1 else alpha
        return next((k for k in range(K, 1, -1) if step_p[k - 1] < level), 1), step_f, step_p


def back_calc(b, y, lo, hi, x):
    shifted = np.tile(b, (y.size, 1))
    shifted[:, 0] -= y
    roots = real_roots(shifted, lo, hi)
    nearest = np.argmin(np.where(np.isnan(roots), np.inf, np.abs(roots - x[:, None])), axis=1)
    return np.take_along_axis(roots, nearest[:, None], axis=1)[:, 0]


def var_poly(c):
    p = np.arange(c.shape[0])
    return np.bincount(np.add.outer(p, p).ravel(), c.ravel())


def family(xs, ys, new_x, readings, ref_x, ref_y, at):
    x, y, x0, y0 = cells(xs), cells(ys), cells(new_x), cells(readings)
    n = x.size
    levels, inv, per_level = np.unique(x, return_inverse=True, return_counts=True)
    m = levels.size
    big_k = default_k(n, m)
    F = Fits(x, y, big_k)
    rss, df = F.rss, F.df
    orders = np.arange(big_k + 1)
    tss = float(((y - y.mean()) ** 2).sum())
    means = np.bincount(inv, y) / per_level
    ss_pure = float(((y - means[inv]) ** 2).sum())
    df_pe, df_lof = n - m, m - orders - 1
    k, step_f, step_p = F.stepdown()
    seq_ss = rss[:-1] - rss[1:]
    seq_f = seq_ss / (rss[-1] / df[-1])
    seq_p = special.fdtrc(1, df[-1], seq_f)
    with np.errstate(divide="ignore", invalid="ignore"):
        over_f = ((tss - rss) / np.maximum(orders, 1)) / (rss / df)
        over_p = special.fdtrc(np.maximum(orders, 1), df, over_f)
        lof_f = ((rss - ss_pure) / df_lof) / (ss_pure / df_pe)
        lof_p = special.fdtrc(np.maximum(df_lof, 1), max(df_pe, 1), lof_f)
    # ORDERS
    press = np.array([((F.order(j)[1] / (1 - F.h[:, j])) ** 2).sum() for j in orders])
    npar = orders + 2
    llf = -0.5 * n * (np.log(2 * np.pi) + np.log(rss / n) + 1)
    aicc = -2 * llf + 2 * npar + 2 * npar * (npar + 1) / (n - npar - 1)
    bic = -2 * llf + npar * np.log(n)
    sd = np.sqrt(rss / df)
    r2 = 1 - rss / tss
    adj = 1 - (1 - r2) * (n - 1) / df
    forward = 1
    while forward < big_k and step_p[forward] < ALPHA:
        forward += 1
    picks = {"stepdown": k, "forward": forward, "aicc": 1 + int(np.argmin(aicc[1:])),
             "bic": 1 + int(np.argmin(bic[1:])), "press": 1 + int(np.argmin(press[1:]))}
    orders_rows = [[j, int(df[j]), sd[j], r2[j], adj[j], 1 - press[j] / tss, aicc[j], bic[j], seq_p[j - 1],
                    step_p[j - 1], lof_p[j]] for j in range(1, big_k + 1)]
    seqf = [[1, s, s, f, p] for s, f, p in zip(seq_ss, seq_f, seq_p)]
    # COEFS / STATS at k
    b, e, h, c = F.order(k)
    dfk, s = int(df[k]), sd[k]
    t_q = special.stdtrit(dfk, 0.5 + LEVEL / 2)
    se = s * np.sqrt(np.diag(c))
    tb = b / se
    coefs = np.column_stack([b, se, tb, 2 * special.stdtr(dfk, -np.abs(tb)), b - t_q * se, b + t_q * se])
    stats_row = [n, k, dfk, s, r2[k], adj[k], 1 - press[k] / tss, aicc[k], bic[k], over_f[k], over_p[k], lof_p[k],
                 x.min(), x.max()]
    # PREDICT
    vp = var_poly(c)
    f0 = np.polynomial.polynomial.polyval(x0, b)
    vm = s**2 * np.polynomial.polynomial.polyval(x0, vp)
    hm, hp = t_q * np.sqrt(vm), t_q * np.sqrt(s**2 + vm)
    predict = np.column_stack([f0, f0 - hm, f0 + hm, f0 - hp, f0 + hp])
    # INVERSE
    lo, hi = float(x.min()), float(x.max())
    span = hi - lo
    sh = np.tile(b, (y0.size, 1))
    sh[:, 0] -= y0
    rts = real_roots(sh, lo, hi)
    found = ~np.isnan(rts)
    est = np.where(found.sum(axis=1) == 1, np.max(rts, axis=1, where=found, initial=-np.inf), np.nan)
    gap = np.tile(np.convolve(b, b) - t_q**2 * s**2 * (np.eye(1, 2 * k + 1)[0] + vp), (y0.size, 1))
    gap[:, : k + 1] -= 2 * y0[:, None] * b
    gap[:, 0] += y0**2
    rts = real_roots(gap, lo - span / 2, hi + span / 2)
    lower = np.max(rts, axis=1, where=rts < est[:, None], initial=-np.inf)
    upper = np.min(rts, axis=1, where=rts > est[:, None], initial=np.inf)
    inverse = np.column_stack([est, lower, upper])
    # RESIDUALS
    r_int = e / (s * np.sqrt(1 - h))
    t_ext = r_int * np.sqrt((dfk - 1) / (dfk - r_int**2))
    cook = r_int**2 * h / ((k + 1) * (1 - h))
    back = back_calc(b, y, lo - span / 4, hi + span / 4, x)
    residuals = np.column_stack([y - e, e, r_int, h, cook, back, 100 * (back - x) / np.abs(x)])
    # CHECKS
    lvl = ALPHA / FAMILY
    by_level = np.bincount(inv, e) / np.sqrt(per_level)
    pos = by_level >= 0
    runs = 1 + int((pos[1:] != pos[:-1]).sum())
    n1, n2 = int(pos.sum()), int((~pos).sum())
    mu = 2 * n1 * n2 / m + 1
    z_runs = (runs - mu) / math.sqrt(max(2 * n1 * n2 * (2 * n1 * n2 - m) / (m**2 * (m - 1)), 1e-300))
    r_all = np.arange(2, m + 1)
    half = r_all // 2
    gl = special.gammaln

    def lc(a, j):
        with np.errstate(invalid="ignore"):
            return np.where((j >= 0) & (j <= a), gl(a + 1) - gl(j + 1) - gl(a - j + 1), -np.inf)

    with np.errstate(invalid="ignore"):
        lpmf = np.where(r_all % 2 == 0, np.log(2) + lc(n1 - 1, half - 1) + lc(n2 - 1, half - 1),
                        np.logaddexp(lc(n1 - 1, half - 1) + lc(n2 - 1, half), lc(n1 - 1, half) + lc(n2 - 1, half - 1)))
    pmf = np.exp(lpmf - lc(m, n1))
    p_runs = min(1.0, 2 * min(pmf[r_all <= runs].sum(), pmf[r_all >= runs].sum()))
    dw = float((np.diff(by_level) ** 2).sum() / (by_level @ by_level))
    ql, _ = np.linalg.qr(np.vander(levels, k + 1, increasing=True) * np.sqrt(per_level)[:, None])
    dq = np.diff(ql, axis=0)
    aq = np.zeros_like(ql)
    aq[:-1] -= dq
    aq[1:] += dq
    qaq = dq.T @ dq
    tr1 = 2.0 * (m - 1) - float((dq * dq).sum())
    tr2 = 6.0 * m - 8 - 2 * float((aq * aq).sum()) + float((qaq * qaq).sum())
    nu = m - k - 1
    mean, var = tr1 / nu, 2 * (nu * tr2 - tr1 * tr1) / (nu * nu * (nu + 2))
    mu4, v4 = mean / 4, var / 16
    size = mu4 * (1 - mu4) / v4 - 1
    p_dw = special.betainc(mu4 * size, (1 - mu4) * size, dw / 4)
    # as the engine: Shapiro-Wilk without the axis/nan-policy wrapper (~160 us)
    sw = getattr(stats.shapiro, "__wrapped__", stats.shapiro)(e)
    e2 = e**2
    d2 = e2 - e2.mean()
    qk = F.q[:, : k + 1]
    lm = n * float(((qk.T @ d2) ** 2).sum()) / float(d2 @ d2)
    p_bp = special.chdtrc(k, lm)
    slope = np.polynomial.polynomial.polyder(b)[None, :]
    turns = np.count_nonzero(~np.isnan(real_roots(slope, lo, hi))) if k > 1 else 0
    bonf = np.minimum(1.0, n * 2 * special.stdtr(dfk - 1, -np.abs(t_ext)))

    def tail(d):
        q = d * (k + 1) * (1 - h) / h
        inside = q < dfk
        t2 = np.where(inside, q * (dfk - 1) / np.where(inside, dfk - q, 1.0), 0.0)
        return float(np.where(inside, 2 * special.stdtr(dfk - 1, -np.sqrt(t2)), 0.0).sum())

    p_max = min(1.0, tail(float(cook.max())))
    flagged = 0
    if p_max < lvl:
        cand = np.flatnonzero(2 * special.stdtr(dfk - 1, -np.abs(t_ext)) < lvl)
        by_size = cand[np.argsort(-cook[cand])]
        a, z = 0, by_size.size
        while a < z:
            mid = (a + z) // 2
            if tail(float(cook[by_size[mid]])) < lvl:
                a = mid + 1
            else:
                z = mid
        flagged = a
    checks = [[lof_f[k], lof_p[k]], [step_f[1], step_p[1]], [z_runs, p_runs], [dw, p_dw], [sw.statistic, sw.pvalue],
              [lm, p_bp], [turns, None], [float((bonf < lvl).sum()), bonf.min()], [flagged, p_max]]
    limits = _limits(F, x, k, b, c, s, dfk)
    weighting = _weighting(x, y, big_k, levels, inv, per_level, k)
    compare = _compare(x, y, cells(ref_x), cells(ref_y), cells(at), k, b, c, rss[k], dfk)
    return (k, orders_rows, seqf, coefs, stats_row, predict, inverse, residuals, checks, limits, weighting, compare,
            picks)


def _first_root(g, x_end):
    """Bracketed on the 4001-node grid, then brentq to the engine's tolerance (the same limit to full precision)."""
    grid = np.linspace(0.0, x_end, 4001)
    up = np.flatnonzero(g(grid) >= 0)
    if not up.size or up[0] == 0:
        return math.nan
    j = int(up[0])
    return brentq(lambda v: float(g(v)), grid[j - 1], grid[j], xtol=1e-15 * x_end)


def _limits(F, x, k, b, c, s, dfk, alpha=ALPHA):
    t1 = special.stdtrit(dfk, 1 - alpha)
    t2 = special.stdtrit(dfk, 1 - alpha / 2)
    vp = var_poly(c)
    P = np.polynomial.polynomial
    db = P.polyder(b)

    def band(v):
        return P.polyval(v, b), P.polyval(v, db), np.sqrt(s**2 * (1 + P.polyval(v, vp)))

    f0, d0, s0 = band(0.0)
    yc = f0 + t1 * s0
    x_end = 2 * x.max()
    dec = _first_root(lambda v: band(v)[0] - yc, x_end)
    det = _first_root(lambda v: band(v)[0] - yc - t1 * band(v)[2], x_end)
    quant = _first_root(lambda v: v * band(v)[1] - 3 * t2 * band(v)[2], x_end)
    iso = None
    if k == 1:
        delta = brentq(lambda d: special.nctdtr(dfk, d, t1) - alpha, t1, t1 + 1.645 * (1 + t1) + 10, xtol=1e-14)
        root = math.sqrt(1 + 1 / x.size + x.mean() ** 2 / ((x - x.mean()) ** 2).sum())
        iso = (t1 * s * root / d0, delta * s * root / d0)
    se0 = s * math.sqrt(c[0, 0])
    return [[yc, dec, det, quant], iso, [3.3 * s / d0, 10 * s / d0], [3.3 * se0 / d0, 10 * se0 / d0]]


def _irls(x, y, big_k, power):
    """weights 1/fitted^power from the quadratic (or line) of the cycle before, until they settle (1e-10)."""
    q_order = 2 if big_k >= 2 else 1
    w = 1.0 / np.abs(y) ** power
    for _ in range(100):
        V = np.vander(x, q_order + 1, increasing=True) * np.sqrt(w)[:, None]
        coef = np.linalg.lstsq(V, y * np.sqrt(w), rcond=None)[0]
        fit = np.polynomial.polynomial.polyval(x, coef)
        new = 1.0 / fit**power
        if np.max(np.abs(new - w) / w) <= 1e-10:
            return new
        w = new
    return w


def _weighting(x, y, big_k, levels, inv, per_level, order=None):
    schemes = {"none": None}
    if (x > 0).all():
        schemes["1/x"], schemes["1/x^2"] = 1 / x, 1 / x**2
    schemes["1/y"], schemes["1/y^2"] = _irls(x, y, big_k, 1), _irls(x, y, big_k, 2)
    if levels.size < x.size:  # 1/x^2b from replicate SDs
        mean = np.bincount(inv, y) / per_level
        ss = np.bincount(inv, (y - mean[inv]) ** 2)
        use = (per_level >= 2) & (levels > 0) & (ss > 0)
        kk = per_level[use] - 1.0
        log_s = 0.5 * np.log(ss[use] / kk) - 0.5 * (special.digamma(kk / 2) + np.log(2.0 / kk))
        w = 4.0 / special.zeta(2.0, kk / 2)  # psi'(kk/2), as the engine
        u = np.log(levels[use])
        ub = (w * u).sum() / w.sum()
        bexp = float((w * (u - ub) * log_s).sum() / (w * (u - ub) ** 2).sum())
        schemes["1/x^2b"] = np.abs(x) ** (-2 * bexp)
    lo, hi = x.min(), x.max()
    span = hi - lo
    rows = []
    for name, w in schemes.items():
        F = Fits(x, y, big_k, None if w is None else np.sqrt(w))
        k = order if order is not None else F.stepdown()[0]
        b, e, _, _ = F.order(k)
        back = back_calc(b, y, lo - span / 4, hi + span / 4, x)
        dev = (100 * (back - x) / np.abs(x))[x != 0]
        keep = e != 0
        u = np.log(x) if (x > 0).all() else x
        le2 = 2 * np.log(np.abs(e[keep]))
        uc = u[keep] - u[keep].mean()
        ess = float((uc @ (le2 - le2.mean())) ** 2 / (uc @ uc))
        rows.append([name, k, np.abs(dev).sum(), np.abs(dev).max(), special.chdtrc(1, ess / (math.pi**2 / 2))])
    return rows


def _compare(x, y, rx, ry, at, k, b, c, rss_t, df_t):
    Fr = Fits(rx, ry, k)
    br, _, _, cr = Fr.order(k)
    rss_r, df_r = Fr.rss[k], Fr.df[k]
    xa, ya = np.concatenate([x, rx]), np.concatenate([y, ry])
    grp = np.concatenate([np.ones_like(x), np.zeros_like(rx)])
    Vp = np.vander(xa, k + 1, increasing=True)
    rss_sep, df_sep = rss_t + rss_r, df_t + df_r
    e1 = ya - Vp @ np.linalg.lstsq(Vp, ya, rcond=None)[0]
    Vs = np.column_stack([Vp, grp])
    e2 = ya - Vs @ np.linalg.lstsq(Vs, ya, rcond=None)[0]
    s2 = rss_sep / df_sep
    f_curve = ((e1 @ e1 - rss_sep) / (k + 1)) / s2
    f_shape = ((e2 @ e2 - rss_sep) / k) / s2
    rows = [[special.fdtrc(k + 1, df_sep, f_curve)], [special.fdtrc(k, df_sep, f_shape)]]
    st2, sr2 = rss_t / df_t, rss_r / df_r
    fs = st2 / sr2
    rows.append([2 * min(special.fdtr(df_t, df_r, fs), special.fdtrc(df_t, df_r, fs))])
    tq = special.stdtrit(df_sep, 0.5 + LEVEL / 2)
    se = np.sqrt(s2 * (np.diag(c) + np.diag(cr)))
    dlt = b - br
    tt = dlt / se
    rows += np.column_stack([br, b, dlt, dlt - tq * se, dlt + tq * se, 2 * special.stdtr(df_sep, -np.abs(tt))]).tolist()
    P = np.polynomial.polynomial
    vt, vr = P.polyval(at, var_poly(c)), P.polyval(at, var_poly(cr))
    ft, fr = P.polyval(at, b), P.polyval(at, br)
    sd = np.sqrt(s2 * (vt + vr))
    ta = (ft - fr) / sd
    rows += np.column_stack([fr, ft, ft - fr, ft - fr - tq * sd, ft - fr + tq * sd,
                             2 * special.stdtr(df_sep, -np.abs(ta))]).tolist()
    # the x the reference curve reads for today's response (detail column)
    back_calc(br, ft, rx.min() - 1e9, rx.max() + 1e9, at)
    return rows
