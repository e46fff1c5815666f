"""Tail probabilities and quantiles through scipy.special (the fast ufuncs behind scipy.stats)."""

from __future__ import annotations

import numpy as np
from scipy import special


def f_sf(f, df_num, df_den):
    """P(F > f) for Snedecor's F(df_num, df_den); nan for a nan statistic."""
    return special.fdtrc(df_num, df_den, np.maximum(f, 0.0))


def t_two_sided(t, df):
    """P(|T| > |t|) for Student's t with df degrees of freedom."""
    return 2.0 * special.stdtr(df, -np.abs(t))


def t_quantile(p, df):
    """Quantile of Student's t: P(T <= q) = p."""
    return special.stdtrit(df, p)


def beta_cdf(x, a, b):
    """P(X <= x) for the beta distribution with shapes a and b."""
    return special.betainc(a, b, np.clip(x, 0.0, 1.0))


def log_factorials(n: int) -> np.ndarray:
    """ln j! for j = 0 .. n, through the log-gamma function."""
    return special.gammaln(np.arange(1.0, n + 2.0))


def chi2_sf(x, df):
    """P(X > x) for the chi-square distribution with df degrees of freedom."""
    return special.chdtrc(df, x)
