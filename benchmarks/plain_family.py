"""A plain numpy reference for one sheet's CALIB_* family: the numbers of the same nine outputs (CALIB_ORDER,
CALIB_ORDERS, CALIB_SEQF, CALIB_COEFS, CALIB_STATS, CALIB_PREDICT, CALIB_INVERSE, CALIB_RESIDUALS,
CALIB_CHECKS), from the same inputs as the desktop runtime hands them over (lists of one-cell rows of floats),
written the direct way and without refinement, for ``bench_family.py`` to time side by side.

How: one QR of the raw Vandermonde design per order 0..K (numpy.linalg.qr), coefficients by solving R b = Q'y,
(X'X)^-1 = R^-1 R^-T; the F tests, t intervals, prediction band, AICc, BIC and PRESS from their textbook
formulas; roots (inverse readings, interval ends on the band, back-calculated x, turning points) as the real
eigenvalues of companion matrices, one batched ``numpy.linalg.eigvals`` per job; the checks' statistics (runs
of the level means' signs with the exact distribution, Durbin-Watson with the beta approximation built from
explicit matrices, Shapiro-Wilk through the public scipy.stats.shapiro, Koenker's Breusch-Pagan, Bonferroni
outliers, Cook's distances against their distribution); distributions through scipy.special. The fits are
shared by the nine outputs, as the worksheet layer's caches share one calibration.

What it omits, against the worksheet functions: the exact power-of-two scaling of x and y and the centred,
scaled basis (it works in raw powers of x, fine for this workload's conditioning, not for Filip's); the
double-double refinement of coefficients, residuals and standard errors; weights and excluded standards; the
input validation with positioned messages (it converts the cells with numpy and trusts them); every text: the
order rules' reasons, notes, verdicts and details, headers and term names; the exact-fit and rank checks; the
test that a turning point is not a double root; the caches. Its numbers agree with the worksheet's to 1e-11
relative on this workload (``bench_family.py`` compares them before it times anything).
"""

from __future__ import annotations

import numpy as np
from scipy import special, stats

ALPHA, LEVEL, FAMILY = 0.05, 0.95, 7


def _cells(values) -> np.ndarray:
    return np.array(values, dtype=float).ravel()


def _real_roots(coefs: np.ndarray, lo: float, hi: float) -> np.ndarray:
    """The real roots in [lo, hi] of each row's polynomial sum_j c_j x^j (rows of one degree, leading
    coefficient non-zero), nan in place of the other roots: the eigenvalues of companion matrices."""
    count, d = coefs.shape[0], coefs.shape[1] - 1
    companion = np.zeros((count, d, d))
    companion[:, np.arange(1, d), np.arange(d - 1)] = 1.0
    companion[:, :, -1] = -coefs[:, :-1] / coefs[:, -1:]
    roots = np.linalg.eigvals(companion)
    keep = (np.abs(roots.imag) <= 1e-9 * (1 + np.abs(roots.real))) & (roots.real >= lo) & (roots.real <= hi)
    return np.where(keep, roots.real, np.nan)


def _fits(x, y, big_k):
    """Coefficients, residuals, leverages and unscaled covariance of every order 0..big_k."""
    fits = []
    for k in range(big_k + 1):
        q, r = np.linalg.qr(np.vander(x, k + 1, increasing=True))
        b = np.linalg.solve(r, q.T @ y)
        r_inv = np.linalg.inv(r)
        fits.append((b, y - np.polynomial.polynomial.polyval(x, b), (q * q).sum(axis=1), r_inv @ r_inv.T))
    return fits


def family(xs, ys, new_x, readings):
    """The nine outputs' numbers: order, orders, seqf, coefs, stats, predict, inverse, residuals, checks."""
    x, y, x0, y0 = _cells(xs), _cells(ys), _cells(new_x), _cells(readings)
    n = x.size
    levels, inverse, per_level = np.unique(x, return_inverse=True, return_counts=True)
    m = levels.size
    big_k = max(min(4, m - 2, n - 5), min(2, m - 2, n - 3))
    fits = _fits(x, y, big_k)
    orders = np.arange(big_k + 1)
    df = n - orders - 1
    rss = np.array([e @ e for _, e, _, _ in fits])
    tss = float(((y - y.mean()) ** 2).sum())
    ss_pure = float(((y - (np.bincount(inverse, y) / per_level)[inverse]) ** 2).sum())
    df_pe, df_lof = n - m, m - orders - 1

    def f_test(num, dfn, den, dfd):
        f = (num / dfn) / (den / dfd)
        return f, special.fdtrc(dfn, dfd, f)

    step_f, step_p = f_test(rss[:-1] - rss[1:], 1, rss[1:], df[1:])  # x^k against order k - 1, k = 1..K
    seq_ss = rss[:-1] - rss[1:]
    seq_f, seq_p = f_test(seq_ss, 1, rss[-1], df[-1])
    with np.errstate(divide="ignore", invalid="ignore"):
        over_f, over_p = f_test(tss - rss, orders, rss, df)
        lof_f, lof_p = f_test(rss - ss_pure, df_lof, ss_pure, df_pe)
    lof_ok = (df_lof >= 1) & (df_pe >= 1)
    press = np.array([((e / (1 - h)) ** 2).sum() for _, e, h, _ in fits])
    npar = orders + 2
    llf = -0.5 * n * (np.log(2 * np.pi) + np.log(rss / n) + 1)
    aicc = -2 * llf + 2 * npar + 2 * npar * (npar + 1) / (n - npar - 1)
    bic = -2 * llf + npar * np.log(n)
    sd = np.sqrt(rss / df)
    r2 = 1 - rss / tss
    adj = 1 - (1 - r2) * (n - 1) / df
    pred_r2 = 1 - press / tss

    # order rules
    level = ALPHA / (big_k - 1)
    stepdown = next((k for k in range(big_k, 1, -1) if step_p[k - 1] < level), 1)
    forward = 1
    while forward < big_k and step_p[forward] < ALPHA:
        forward += 1
    picks = {"stepdown": stepdown, "forward": forward, "aicc": 1 + int(np.argmin(aicc[1:])),
             "bic": 1 + int(np.argmin(bic[1:])), "press": 1 + int(np.argmin(press[1:]))}
    k = stepdown
    order_rows = [[j, int(df[j]), sd[j], r2[j], adj[j], pred_r2[j], aicc[j], bic[j], seq_p[j - 1], step_p[j - 1],
                   lof_p[j] if lof_ok[j] else None, ", ".join(r for r, o in picks.items() if o == j) or None]
                  for j in range(1, big_k + 1)]

    seqf = [[1, s, s, f, p] for s, f, p in zip(seq_ss.tolist(), seq_f.tolist(), seq_p.tolist())]
    seqf.append([int(df[-1]), rss[-1], rss[-1] / df[-1], None, None])
    if lof_ok[-1]:
        seqf.append([int(df_lof[-1]), rss[-1] - ss_pure, (rss[-1] - ss_pure) / df_lof[-1], lof_f[-1], lof_p[-1]])
        seqf.append([df_pe, ss_pure, ss_pure / df_pe, None, None])
    seqf.append([n - 1, tss, None, None, None])

    b, e, h, c = fits[k]
    dfk, s = int(df[k]), sd[k]
    t_q = special.stdtrit(dfk, 0.5 + LEVEL / 2)
    se = s * np.sqrt(np.diag(c))
    t_b = b / se
    coefs = np.column_stack([b, se, t_b, 2 * special.stdtr(dfk, -np.abs(t_b)), b - t_q * se, b + t_q * se]).tolist()

    stats_rows = {"points used": n, "order": k, "residual df": dfk, "residual SD": s, "R²": r2[k],
                  "adjusted R²": adj[k], "predicted R²": pred_r2[k], "AICc": aicc[k], "BIC": bic[k],
                  "F": over_f[k], "p-value": over_p[k], "lack-of-fit p": lof_p[k] if lof_ok[k] else None,
                  "x min": x.min(), "x max": x.max()}

    # forward prediction
    p = np.arange(k + 1)
    var_poly = np.bincount(np.add.outer(p, p).ravel(), c.ravel())  # x' C x as a polynomial in x
    fitted0 = np.polynomial.polynomial.polyval(x0, b)
    var_mean = s**2 * np.polynomial.polynomial.polyval(x0, var_poly)
    half_mean, half_pred = t_q * np.sqrt(var_mean), t_q * np.sqrt(s**2 + var_mean)
    predict = np.column_stack([fitted0, fitted0 - half_mean, fitted0 + half_mean, fitted0 - half_pred,
                               fitted0 + half_pred]).tolist()

    # inverse prediction: the root of f - y0 in the range, the band's roots either side of it
    lo, hi = float(x.min()), float(x.max())
    span = hi - lo
    shifted = np.tile(b, (y0.size, 1))
    shifted[:, 0] -= y0
    roots = _real_roots(shifted, lo, hi)
    found = ~np.isnan(roots)
    estimate = np.where(found.sum(axis=1) == 1, np.max(roots, axis=1, where=found, initial=-np.inf), np.nan)
    # (f - y0)^2 - t^2 s^2 (1 + x' C x): a polynomial of degree 2k per reading
    gap = np.tile(np.convolve(b, b) - t_q**2 * s**2 * (np.eye(1, 2 * k + 1)[0] + var_poly), (y0.size, 1))
    gap[:, : k + 1] -= 2 * y0[:, None] * b
    gap[:, 0] += y0**2
    roots = _real_roots(gap, lo - span / 2, hi + span / 2)
    lower = np.max(roots, axis=1, where=roots < estimate[:, None], initial=-np.inf)
    upper = np.min(roots, axis=1, where=roots > estimate[:, None], initial=np.inf)
    inverse_rows = np.column_stack([estimate, np.where(np.isinf(lower), np.nan, lower),
                                    np.where(np.isinf(upper), np.nan, upper)]).tolist()

    # residuals: fitted, residual, studentized, leverage, Cook's D, back-calculated x, deviation %
    r_int = e / (s * np.sqrt(1 - h))
    t_ext = r_int * np.sqrt((dfk - 1) / (dfk - r_int**2))
    cook = r_int**2 * h / ((k + 1) * (1 - h))
    shifted = np.tile(b, (n, 1))
    shifted[:, 0] -= y
    roots = _real_roots(shifted, lo - span / 4, hi + span / 4)
    nearest = np.argmin(np.where(np.isnan(roots), np.inf, np.abs(roots - x[:, None])), axis=1)
    back = np.take_along_axis(roots, nearest[:, None], axis=1)[:, 0]  # nan when there is no root
    residuals = np.column_stack([y - e, e, r_int, h, cook, back, 100 * (back - x) / np.abs(x)]).tolist()

    # checks
    check_at = ALPHA / FAMILY
    by_level = np.bincount(inverse, e) / np.sqrt(per_level)  # one residual per distinct x, in x order
    ql, _ = np.linalg.qr(np.vander(levels, k + 1, increasing=True) * np.sqrt(per_level)[:, None])
    pos = by_level >= 0
    runs = 1 + int((pos[1:] != pos[:-1]).sum())
    n1, n2 = int(pos.sum()), int((~pos).sum())
    r_all = np.arange(2, m + 1)
    half = r_all // 2
    comb = special.comb
    pmf = np.where(r_all % 2 == 0, 2 * comb(n1 - 1, half - 1) * comb(n2 - 1, half - 1),
                   comb(n1 - 1, half - 1) * comb(n2 - 1, half) + comb(n1 - 1, half) * comb(n2 - 1, half - 1))
    pmf = pmf / comb(m, n1)
    p_runs = min(1.0, 2 * min(pmf[r_all <= runs].sum(), pmf[r_all >= runs].sum()))
    dw = float((np.diff(by_level) ** 2).sum() / (by_level @ by_level))
    nu = m - k - 1
    d_mat = np.diff(np.eye(m), axis=0)
    ma = (np.eye(m) - ql @ ql.T) @ (d_mat.T @ d_mat)
    tr1, tr2 = np.trace(ma), np.trace(ma @ ma)
    mean, var = tr1 / nu, 2 * (nu * tr2 - tr1**2) / (nu**2 * (nu + 2))
    mu4, v4 = mean / 4, var / 16
    size = mu4 * (1 - mu4) / v4 - 1
    p_dw = special.betainc(mu4 * size, (1 - mu4) * size, dw / 4)
    sw = stats.shapiro(e)
    e2 = e**2
    qb, _ = np.linalg.qr(np.vander(x, k + 1, increasing=True))
    d2 = e2 - e2.mean()
    lm = n * float(((qb.T @ d2) ** 2).sum()) / float(d2 @ d2)
    turns = np.count_nonzero(~np.isnan(_real_roots(np.polynomial.polynomial.polyder(b)[None, :], lo, hi))) if k > 1 else 0
    bonf = np.minimum(1.0, n * 2 * special.stdtr(dfk - 1, -np.abs(t_ext)))
    # S(d) = sum_j P(D_j >= d) for d = each standard's own Cook's distance (rows)
    q_mat = cook[:, None] * (k + 1) * (1 - h[None, :]) / h[None, :]
    inside = q_mat < dfk
    t2 = np.where(inside, q_mat * (dfk - 1) / np.where(inside, dfk - q_mat, 1.0), 0.0)
    tail = np.where(inside, 2 * special.stdtr(dfk - 1, -np.sqrt(t2)), 0.0).sum(axis=1)
    checks = [[lof_f[k], lof_p[k]], [step_f[1], step_p[1]], [float(runs), p_runs], [dw, p_dw],
              [sw.statistic, sw.pvalue], [lm, special.chdtrc(k, lm)], [float(turns), None],
              [float((bonf < check_at).sum()), bonf.min()],
              [float((tail < check_at).sum()), min(1.0, tail[np.argmax(cook)])]]
    return k, order_rows, seqf, coefs, stats_rows, predict, inverse_rows, residuals, checks
