"""The calibration workloads the benchmarks time: one worksheet's worth of work.

A typical calibration: 8 levels x 3 replicates, max order 4; choose the order,
build every table, 10 forward predictions, 10 inverse predictions, residual
diagnostics and curve checks. ``degreewise_engine`` does it with the engine,
``statsmodels_pipeline`` with statsmodels and scipy as an analyst would.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import statsmodels.api as sm
import statsmodels.formula.api as smf
from scipy import optimize, stats
from statsmodels.sandbox.stats.runs import runstest_1samp
from statsmodels.stats.anova import anova_lm
from statsmodels.stats.diagnostic import het_breuschpagan
from statsmodels.stats.outliers_influence import OLSInfluence
from statsmodels.stats.stattools import durbin_watson

from degreewise import engine


def typical(seed: int = 1):
    rng = np.random.default_rng(seed)
    x = np.repeat(np.linspace(1.0, 50.0, 8), 3)
    y = 2.0 + 3.0 * x + 0.01 * x**2 + rng.normal(0.0, 1.0, x.size)
    new_x = np.linspace(2.0, 48.0, 10)
    readings = np.linspace(12.0, 170.0, 10)
    return x, y, new_x, readings


def degreewise_engine(x, y, new_x, readings, max_order=4):
    cal = engine.Calibration(x, y, max_order=max_order)
    order = engine.choose_order(cal).order
    for rule in ("forward", "aicc", "bic", "press"):
        engine.choose_order(cal, rule)
    [cal.stats(k) for k in range(1, cal.max_order + 1)]
    cal.sequential_table()
    cal.fit(order)
    engine.predict(cal, new_x, order)
    engine.inverse(cal, readings, order)
    engine.point_diagnostics(cal, order)
    engine.curve_checks(cal, order)
    return order


def statsmodels_pipeline(x, y, new_x, readings, max_order=4, alpha=0.05):
    design = lambda v, k: np.vander(v, k + 1, increasing=True)  # noqa: E731
    fits = {k: sm.OLS(y, design(x, k)).fit() for k in range(1, max_order + 1)}
    # the sequential (Type I) table of the max-order model, the statsmodels way
    terms = " + ".join(["x"] + [f"I(x**{k})" for k in range(2, max_order + 1)])
    table = anova_lm(smf.ols(f"y ~ {terms}", pd.DataFrame({"x": x, "y": y})).fit(), typ=1)
    seq_p = table["PR(>F)"].to_numpy()[:-1]
    order = max([j + 1 for j, p in enumerate(seq_p) if p < alpha] or [1])
    for k in range(2, max_order + 1):
        anova_lm(fits[k - 1], fits[k])
    levels = pd.Categorical(x)
    cell = sm.OLS(y, pd.get_dummies(levels).to_numpy(dtype=float)).fit()
    for k in range(1, max_order + 1):
        anova_lm(fits[k], cell)
        fits[k].aic, fits[k].bic
        OLSInfluence(fits[k]).hat_matrix_diag
    res = fits[order]
    res.conf_int()
    res.get_prediction(design(new_x, order)).summary_frame()
    coef = res.params
    cov = res.cov_params()
    t = stats.t.ppf(0.975, res.df_resid)

    def band(v, reading):
        d = design(np.atleast_1d(v), order)
        var = res.scale + np.einsum("ij,jk,ik->i", d, cov, d)
        return (np.polynomial.polynomial.polyval(v, coef) - reading) ** 2 - t**2 * var

    lo, hi = x.min(), x.max()
    for reading in readings:
        f = lambda v: np.polynomial.polynomial.polyval(v, coef) - reading  # noqa: E731
        if f(lo) * f(hi) < 0:
            est = optimize.brentq(f, lo, hi)
            span = hi - lo
            for a, b in ((lo - span / 2, est), (est, hi + span / 2)):
                g = lambda v: band(v, reading)[0]  # noqa: E731
                if g(a) * g(b) < 0:
                    optimize.brentq(g, a, b)
    infl = OLSInfluence(res)
    infl.resid_studentized_internal, infl.resid_studentized_external, infl.cooks_distance
    # back-calculated x of every standard, and monotonicity (turning points of the curve in range)
    span = hi - lo
    for xi, yi in zip(x, y):
        f = lambda v: np.polynomial.polynomial.polyval(v, coef) - yi  # noqa: E731
        a, b = lo - span / 4, hi + span / 4
        if f(a) * f(b) < 0:
            optimize.brentq(f, a, b)
    turns = np.polynomial.polynomial.polyroots(np.polynomial.polynomial.polyder(coef)) if order > 1 else []
    [t for t in np.atleast_1d(turns) if np.isreal(t) and lo < t.real < hi]
    by_x = np.argsort(x, kind="stable")
    durbin_watson(res.resid[by_x])
    runstest_1samp(res.resid[by_x], cutoff=0, correction=False)
    stats.shapiro(res.resid)
    het_breuschpagan(res.resid, design(x, order))
    return order
