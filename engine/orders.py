"""One order of a calibration: every figure of that order, read from the calibration's one factorisation."""

from __future__ import annotations

import math
from functools import cached_property
from typing import TYPE_CHECKING

import numpy as np

from .curve import Curve
from .diagnostics import back_calculate, point_diagnostics
from .doubledouble import ldexp
from .linalg import LEVERAGE_ONE
from .distributions import t_two_sided
from .results import Influence, OrderFit, OrderStats, PointDiagnostics

if TYPE_CHECKING:  # a Calibration makes its OrderResults
    from .calibration import Calibration


def prediction_sum_of_squares(e: np.ndarray, h: np.ndarray) -> float:
    """PRESS of one order: sum (e_i / (1 - h_i))^2, or nan unless every leverage is below 1 (``LEVERAGE_ONE``)."""
    if not (h <= LEVERAGE_ONE).all():
        return math.nan
    d = 1.0 - h
    np.divide(e, d, out=d)
    return float(np.square(d, out=d).sum())


class OrderResults:
    """One order of a calibration; every figure is computed from the calibration's one factorisation on
    first use and then kept (as statsmodels' regression results compute derived statistics).

    ``stats`` (goodness of fit), ``fit`` (raw power coefficients with standard errors, t and p, and the
    residual SD, df and R^2 they rest on),
    ``curve`` (values, band and roots in the scaled variable: ``curve.Curve``), ``leverage``, ``influence``
    (leverages, studentized residuals, Cook's distances and the outliers' Bonferroni p-values) and
    ``diagnostics(alpha)`` (each standard's figures and notes, ``diagnostics.point_diagnostics``).
    """

    def __init__(self, cal: Calibration, order: int):
        self.cal, self.order = cal, order
        self._diagnostics: dict[float, PointDiagnostics] = {}

    @property
    def stats(self) -> OrderStats:
        return self.cal.stats(self.order)

    @cached_property
    def fit(self) -> OrderFit:
        cal, k = self.cal, self.order
        coef, diag = cal.raw_solution(k)
        sd = cal.scaled_residual_sd(k)
        coefs, ses, ts = [], [], []
        exact = cal.exact_order is not None and k >= cal.exact_order  # no t test on rounding error
        for j, (b, d) in enumerate(zip(coef.tolist(), diag.tolist())):
            se = sd * math.sqrt(d)
            ts.append(math.nan if exact else
                      b / se if se > 0 else (math.nan if b == 0 else math.copysign(math.inf, b)))
            # back to the units of x and y; t (a ratio) is taken before, so it survives over- or underflow
            e = cal.y_exponent - cal.x_exponent * j
            coefs.append(ldexp(b, e))
            ses.append(ldexp(se, e))
        df = cal.n_points - k - 1
        p_values = t_two_sided(np.array(ts), df).tolist()
        return OrderFit(k, tuple(coefs), tuple(ses), tuple(ts), tuple(p_values), math.ldexp(sd, cal.y_exponent), df,
                        cal.r_squared(k))

    @cached_property
    def curve(self) -> Curve:
        return Curve(self.cal, self.order)

    @cached_property
    def back_calculation(self) -> tuple[np.ndarray, np.ndarray]:
        """``diagnostics.back_calculate``: the back-calculated x and how many x give each standard's response."""
        return back_calculate(self.cal, self.curve)

    @cached_property
    def leverage(self) -> np.ndarray:
        """h_i: the diagonal of the hat matrix, the running sums of squared Q entries up to this order."""
        return self.cal.leverage(self.order)

    def diagnostics(self, alpha: float = 0.05) -> PointDiagnostics:
        """Each standard's fitted value, residuals, leverage, Cook's distance, back-calculated x and note
        (``diagnostics.point_diagnostics``), made once per alpha."""
        if alpha not in self._diagnostics:
            self._diagnostics[alpha] = point_diagnostics(self.cal, self.order, alpha)
        return self._diagnostics[alpha]

    @cached_property
    def influence(self) -> Influence:
        """Weighted residuals e_i, leverages h_i, p = order + 1, df = n - p: r_i = e_i / (s sqrt(1 - h_i)),
        t_i = r_i sqrt((df - 1) / (df - r_i^2)), D_i = r_i^2 h_i / (p (1 - h_i)) (Cook & Weisberg, Residuals
        and Influence in Regression, Chapman & Hall 1982, ch. 2 and 3), and n P(|T_(df-1)| > |t_i|) capped at 1."""
        cal, k = self.cal, self.order
        e = cal.scaled_residuals(k)  # in curve units, as s
        h = self.leverage
        df, n = cal.n_points - k - 1, cal.n_points
        with np.errstate(divide="ignore", invalid="ignore"):
            one_minus_h = 1.0 - h
            r = e / (cal.scaled_residual_sd(k) * np.sqrt(one_minus_h))
            r2 = r * r
            t = r * np.sqrt((df - 1) / (df - r2)) if df > 1 else np.full_like(r, np.nan)
            cook = r2 * h / ((k + 1) * one_minus_h)
        bonferroni = np.minimum(1.0, n * t_two_sided(t, df - 1)) if df >= 2 else np.full(t.shape, np.nan)
        return Influence(h, r, t, cook, bonferroni)
