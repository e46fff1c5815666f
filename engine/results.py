"""Plain result objects handed out by the engine: immutable named tuples (cheap to make, read by name).

Not-applicable values are ``nan`` (for example a predicted R-squared when a
standard has leverage 1, or a lack-of-fit test without replicates).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from .distributions import t_quantile
from .errors import CalibrationError


class FTest(NamedTuple):
    """An F test: statistic with (df_num, df_den) degrees of freedom and its p-value."""

    statistic: float
    df_num: int
    df_den: int
    p_value: float


class LackOfFit(NamedTuple):
    """Residual split into lack of fit and pure error (replicated x). The test does not apply (its F and p
    are nan) where the data fit exactly at ``exact_order`` (at or below this order) or the replicates are
    identical (``identical_replicates``); ``words.lack_of_fit_note`` says so in words."""

    ss_lack_of_fit: float
    df_lack_of_fit: int
    ss_pure_error: float
    df_pure_error: int
    test: FTest
    exact_order: int | None = None
    identical_replicates: bool = False


class OrderStats(NamedTuple):
    """Goodness-of-fit figures of one order (weighted where weights are given).

    AICc and BIC use the Gaussian log-likelihood with k = order + 2 parameters
    (the coefficients and sigma): AIC = -2 ln L + 2k, AICc = AIC + 2k(k+1)/(n-k-1)
    (Hurvich & Tsai, Biometrika 76 (1989) 297-307), BIC = -2 ln L + k ln n
    (Schwarz, Ann. Statist. 6 (1978) 461-464). Predicted R-squared is
    1 - PRESS/TSS with PRESS = sum (e_i / (1 - h_ii))^2 (Allen, Technometrics 16
    (1974) 125-127).
    """

    order: int
    n_points: int
    df_resid: int
    rss: float
    residual_sd: float
    r_squared: float
    adj_r_squared: float
    press: float
    predicted_r_squared: float
    aicc: float
    bic: float
    overall: FTest | None
    lack_of_fit: LackOfFit | None


class OrderFit(NamedTuple):
    """Coefficients of one order in raw powers of x, intercept first, with the residual SD and df they rest on
    and R^2 (the order's other figures: ``Calibration.stats``)."""

    order: int
    coefficients: tuple[float, ...]
    std_errors: tuple[float, ...]
    t_values: tuple[float, ...]
    p_values: tuple[float, ...]
    residual_sd: float
    df_resid: int
    r_squared: float

    def interval(self, level: float = 0.95) -> tuple[tuple[float, float], ...]:
        """Two-sided confidence interval of each coefficient at ``level``."""
        q = float(t_quantile(0.5 + level / 2, self.df_resid))
        return tuple((b - q * s, b + q * s) for b, s in zip(self.coefficients, self.std_errors))


class SequentialRow(NamedTuple):
    """One term of the sequential (Type I) table, tested against the max-order residual."""

    term: int
    ss: float
    test: FTest


class SequentialTable(NamedTuple):
    """Sequential ANOVA of the max-order model."""

    max_order: int
    terms: tuple[SequentialRow, ...]
    ss_resid: float
    df_resid: int
    lack_of_fit: LackOfFit | None
    ss_total: float
    df_total: int


class OrderChoice(NamedTuple):
    """The order a rule picks; ``settings`` names the rule, alpha and max order that decided it, and
    ``words.order_reason(cal, choice)`` says why in words."""

    order: int
    rule: str
    alpha: float
    max_order: int

    @property
    def settings(self) -> str:
        return f"rule {self.rule}, alpha {self.alpha:g}, max order {self.max_order}"


class Influence(NamedTuple):
    """Per standard of one order, in the order given (``calibration.OrderResults.influence``)."""

    leverage: np.ndarray
    studentized: np.ndarray
    externally_studentized: np.ndarray
    cook: np.ndarray
    bonferroni_p: np.ndarray


class Prediction(NamedTuple):
    """Forward prediction at one new x."""

    x: float
    fitted: float
    mean_lower: float
    mean_upper: float
    pred_lower: float
    pred_upper: float
    note: str


class InverseEstimate(NamedTuple):
    """x estimate for one reading (mean of ``replicates`` readings) and its interval."""

    reading: float
    x: float
    lower: float
    upper: float
    note: str


class PointDiagnostics(NamedTuple):
    """Per-standard diagnostics, one entry per point in input order."""

    fitted: tuple[float, ...]
    residual: tuple[float, ...]
    studentized: tuple[float, ...]
    externally_studentized: tuple[float, ...]
    leverage: tuple[float, ...]
    cooks_distance: tuple[float, ...]
    back_calculated: tuple[float, ...]
    deviation_percent: tuple[float, ...]
    notes: tuple[str, ...]


class Check(NamedTuple):
    """One check of the curve: statistic, p-value (nan if none), verdict, detail."""

    name: str
    statistic: float
    p_value: float
    verdict: str
    detail: str


class DifferenceRow(NamedTuple):
    """Today minus reference for one coefficient (``item`` its power) or one x (``item`` the x), with the
    interval at the comparison's level and the two-sided p-value of no difference."""

    item: float
    reference: float
    today: float
    difference: float
    lower: float
    upper: float
    p_value: float


class Comparison(NamedTuple):
    """Today's calibration against a reference at one order: the tests that the curves coincide, that
    they have the same shape (all but the intercept) and the same residual SD (today^2 / reference^2);
    coefficient differences; response differences (``responses``, one per x of ``at``) and the x the
    reference curve reads for today's response there (``read_back``, nan outside the reference's calibrated
    range)."""

    order: int
    level: float
    same_curve: FTest
    same_shape: FTest
    same_sd: FTest
    reference_sd: float
    today_sd: float
    coefficients: tuple[DifferenceRow, ...]
    responses: tuple[DifferenceRow, ...]
    read_back: tuple[float, ...]


class Limit(NamedTuple):
    """Limits of one published method, in the units of y (critical response) and x (the limits); nan
    where the method defines no such value or where the note says why none exists."""

    method: str
    critical_response: float
    decision_limit: float
    detection_limit: float
    quantitation_limit: float
    note: str


class SpreadExponent(NamedTuple):
    """b in SD = c x^b from the replicate SDs (fitted on log scales) and its interval at ``level``."""

    b: float
    lower: float
    upper: float
    level: float
    levels: int


class SchemeResult(NamedTuple):
    """One weighting scheme fitted to the standards: the order used (None where the scheme does not
    apply), the summed and largest |back-calculated deviation %|, the p-value of the check for a trend
    in the spread of the weighted residuals, whether it is the picked scheme, and a note; ``problem``: the
    error that keeps the scheme from applying (its message ends the note)."""

    scheme: str
    order: int | None
    sum_abs_deviation: float
    max_abs_deviation: float
    spread_p: float
    picked: bool
    note: str
    problem: CalibrationError | None = None


class Uncertainty(NamedTuple):
    """The standard uncertainty of one x read back from the calibration (``prediction.uncertainty``): the x
    estimate, u, its degrees of freedom, the coverage factor k (Student t at the level), U = k u, 100 u / |x|,
    and a note."""

    reading: float
    x: float
    u: float
    df: int
    k: float
    expanded: float
    relative_percent: float
    note: str


class StandardVerdict(NamedTuple):
    """One standard judged by a criteria set: its point index (None for a standard the analyst excluded), x,
    back-calculated x, deviation %, its limit % (nan where the set has none), passed (None: not judged)
    and the reason in words."""

    point: int | None
    x: float
    back_calculated: float
    deviation: float
    limit: float
    passed: bool | None
    reason: str


class CriterionResult(NamedTuple):
    """One criterion of a set: its value, its limit (nan where it has none), met, and the words."""

    name: str
    value: float
    limit: float
    met: bool
    detail: str


class Verdict(NamedTuple):
    """A criteria set applied to one curve: the standards, the criteria, whether the run is acceptable, and
    the reasons in words (what failed, or that every criterion is met)."""

    standards: tuple[StandardVerdict, ...]
    criteria: tuple[CriterionResult, ...]
    acceptable: bool
    reasons: tuple[str, ...]


class ExclusionStep(NamedTuple):
    """A standard the set would let the analyst exclude next (``point`` of the original calibration), as it
    stood in the fit before (back-calculated x, deviation %, limit %), whether the calibrated range shrinks
    (its new ends in words, else empty) and the verdict of the curve refitted without it (None: the curve
    cannot be refitted; ``problem`` says why)."""

    point: int
    x: float
    back_calculated: float
    deviation: float
    limit: float
    shrinks: str
    then: Verdict | None
    problem: str
