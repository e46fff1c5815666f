"""Detection and quantitation limits of one calibration, by published methods (alpha = beta).

A sample is read as the mean of m readings; nu is the residual df, t1 = t(1 - alpha; nu),
t2 = t(1 - alpha/2; nu), and s_new(x)^2 = s^2 / (m w0(x)) + Var f(x) the variance of a new mean
reading about the fitted curve (w0 as in ``prediction``; 1 without weights).

- Prediction band (Hubaux & Vos, Anal. Chem. 42 (1970) 849-855), any order and weighting:
  critical response yC = f(0) + t1 s_new(0) (the upper one-sided bound at the blank), decision limit
  xC with f(xC) = yC, detection limit xD with f(xD) - t1 s_new(xD) = yC; quantitation limit in the
  DIN 32645 form xQ = k t2 s_new(xQ) / |f'(xQ)| with k = 3 (a relative uncertainty of 1/k = 33 %).
  For a falling curve the signs turn over.
- ISO 11843-2 (straight line, constant SD): xc = t1 (s/b) sqrt(1/m + 1/n + xbar^2/Qx), critical
  response a + b xc, minimum detectable value xd = delta (s/b) sqrt(1/m + 1/n + xbar^2/Qx) with delta
  the non-centrality for which the non-central t with nu df has P(T <= t1) = beta.
- ICH Q2(R1) sec. 6.3 and 7.3: 3.3 sigma/S and 10 sigma/S, sigma the residual SD (under weights, of
  a reading at x = 0: s sqrt(1/w0(0))) or the standard error of the intercept, S the slope at x = 0.
- Blank readings, DIN 32645 blank method (n_b readings, mean yb, SD sb, f = n_b - 1):
  yC = yb + t(1 - alpha; f) sb sqrt(1/m + 1/n_b), xC = (yC - yb)/|S|, xD = 2 xC,
  xQ = k t(1 - alpha/2; f) (sb/|S|) sqrt(1/m + 1/n_b).

The DIN 32645, ISO 11843-2 and ICH Q2 formulas are given from memory of the published documents.
These are estimates from one calibration; the methods require confirming them with samples near
the limit.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
from scipy import special

from .calibration import Calibration
from .curve import Curve
from .distributions import t_quantile
from .results import Limit
from .validation import check_alpha, check_replicates, check_vector
from .words import fmt_value

K_QUANTITATION = 3.0  # DIN 32645: 1/k = 33 % relative uncertainty at the quantitation limit
ICH_DETECTION, ICH_QUANTITATION = 3.3, 10.0
_NODES = 4001  # grid over [0, twice the highest standard] on which the band's crossings are bracketed
BAND, ISO, ICH_SD, ICH_SE, BLANK = ("prediction band", "ISO 11843-2", "ICH residual SD", "ICH intercept SE",
                                    "blank readings")


def iso_delta(df, alpha: float, beta: float) -> float:
    """ISO 11843-2's delta: the non-centrality of the non-central t with ``df`` degrees of freedom whose
    cumulative probability at t(1 - alpha; df) is beta (computed, not the approximation 2 t)."""
    from scipy.optimize import brentq

    t1 = float(t_quantile(1.0 - alpha, df))
    z = float(special.ndtri(1.0 - beta))
    # P(T <= t1) falls from 1/2 at delta = t1 towards 0; delta = t1 + z (1 + t1) already passes beta
    return brentq(lambda d: special.nctdtr(df, d, t1) - beta, t1, t1 + z * (1.0 + t1) + 10.0, xtol=1e-14)


class _Band:
    """f, dy/dx and s_new of one curve at raw x, in curve units (y 2^-e)."""

    def __init__(self, cal: Calibration, curve: Curve, m: int):
        self.cal, self.curve, self.m = cal, curve, m

    def variance_factor(self, x, f) -> np.ndarray:
        w = self.cal.weighting
        return w.variance_factor(x, self.curve.to_y(f)) if w.weighted else np.ones_like(x)

    def __call__(self, x):
        x = np.atleast_1d(np.asarray(x, dtype=float))
        f, dfz, vm, _ = self.curve.local(self.cal.scaled_x(x))
        with np.errstate(invalid="ignore"):
            s_new = np.sqrt(self.curve.s**2 * self.variance_factor(x, f) / self.m + vm)
        return f, dfz / self.cal.dx_dz, s_new


def _first_root(func, band: _Band, grid: np.ndarray, on_grid: tuple) -> float:
    """Smallest x of (0, grid[-1]] where func(x, f, dy/dx, s_new) (negative just above 0) reaches zero, bracketed
    on the grid (``on_grid``: the band there) and refined by brentq; nan if it does not. The bracket's ends are
    the grid's values (brentq asks for them first), so that brentq sees the change of sign the grid found."""
    from scipy.optimize import brentq

    with np.errstate(invalid="ignore"):
        values = func(grid, *on_grid)
    up = np.flatnonzero(values >= 0)
    if not up.size or up[0] == 0:
        return math.nan
    j = int(up[0])
    ends = {float(grid[j - 1]): float(values[j - 1]), float(grid[j]): float(values[j])}

    def at(v):
        if v in ends:
            return ends[v]
        x = np.array([v])
        return float(func(x, *band(x))[0])

    return brentq(at, grid[j - 1], grid[j], xtol=1e-15 * float(grid[-1]))


def branch_words(cal: Calibration, curve: Curve, limit: float = math.nan) -> str:
    """Words when the curve is not monotonic from the blank (x = 0) through the calibrated range and on to
    ``limit`` (when that lies beyond the highest standard); empty when it is.

    The one rule for every row: a limit at the blank is read on the branch of the curve that the standards
    calibrate, so the curve must keep the sign of its slope over the calibrated range all the way down to
    the blank (and up to the limit). A turn between the blank and the lowest standard puts the blank on
    another branch (the critical response can then fall below the fitted blank, and S at x = 0 has the
    wrong sign); a turn inside the range leaves no one sign to keep (common practice: a calibration is
    used only where it is monotonic)."""
    lo = min(0.0, curve.x_min)
    hi = max(curve.x_max, limit) if math.isfinite(limit) else curve.x_max
    turns = curve.turning_points(float(cal.scaled_x(lo)), float(cal.scaled_x(hi)))
    if not turns.size:
        return ""
    xs = cal.raw_x(turns)
    places = []
    for v in xs.tolist():
        where = ("between the blank and the lowest standard" if v < curve.x_min else
                 "beyond the highest standard" if v > curve.x_max else "inside the calibrated range")
        places.append(f"x = {fmt_value(v)}, {where}")
    return (f"the curve is not monotonic from the blank (x = 0) to x = {fmt_value(hi)}: it turns at "
            f"{'; '.join(places)}, so a limit at the blank would not be read on the branch the standards "
            "calibrate, and no limit is given; check the low standards and the order")


def _range_words(named, x_min: float, x_max: float) -> str:
    out = [name for name, v in named if math.isfinite(v) and not x_min <= v <= x_max]
    if not out:
        return ""
    names = out[0] if len(out) == 1 else ", ".join(out[:-1]) + " and " + out[-1]
    return (f"{names} limit{'s' if len(out) > 1 else ''} outside the calibrated range "
            f"[{fmt_value(x_min)}, {fmt_value(x_max)}]: "
            "a limit depends on where the standards lie (through the xbar^2/Qx term), so confirm it with standards "
            "near the limit")


def _weight_words(cal: Calibration, band: _Band, zero: _AtZero, t1: float) -> str:
    """Why the weights leave a new reading at x = 0 without scatter of its own (empty when they do not)."""
    w = cal.weighting
    if not w.weighted or w.scheme is None:
        return ""
    vf0 = float(band.variance_factor(np.zeros(1), np.array([zero.f]))[0])
    tail = ("so the prediction band has no reading scatter at the blank and no band-based limit exists; use a "
            "variance model with a blank term (weights as a range, such as 1/(c + x)^2) or give blank readings")
    if w.scheme.endswith(("x", "x^2")):
        return f"weights '{w.scheme}' give a new reading at x = 0 zero variance (1/w0 = 0), {tail}"
    if not (vf0 > 0 and abs(zero.f) > t1 * zero.se_mean):
        return (f"weights '{w.scheme}' take a reading's variance from the fitted response, which at x = 0 "
                f"({fmt_value(float(band.curve.to_y(zero.f)))}) does not differ significantly from zero, {tail}")
    return ""


def _band_row(cal, curve, band: _Band, t1: float, t2: float, sign: float, degenerate: str) -> Limit:
    none = (math.nan,) * 4
    if degenerate:
        return Limit(BAND, *none, degenerate)
    x_min, x_max = curve.x_min, curve.x_max
    x_end = 2.0 * x_max
    f0, _, s0 = band(0.0)
    y_c = float(f0[0] + sign * t1 * s0[0])

    def decision(x, f, d, s):
        return sign * (f - y_c)

    def detection(x, f, d, s):
        return sign * (f - y_c) - t1 * s

    def quantitation(x, f, d, s):
        return x * sign * d - K_QUANTITATION * t2 * s

    grid = np.linspace(0.0, x_end, _NODES)
    on_grid = band(grid)  # once, for the three limits' brackets
    found = [_first_root(g, band, grid, on_grid) for g in (decision, detection, quantitation)]
    reached = [v for v in found if math.isfinite(v)]
    turns = branch_words(cal, curve, max(reached, default=x_min))  # a limit not reached is left empty
    if turns:
        return Limit(BAND, *none, turns)
    notes = [f"Hubaux-Vos; quantitation in the DIN 32645 form, k = {K_QUANTITATION:g}"]
    if len(reached) < 3:
        notes.append(f"a limit left empty is not reached within twice the highest standard (x = {fmt_value(x_end)})")
    if x_min > 0:
        notes.append("the blank (x = 0) lies below the lowest standard: the band there is extrapolated")
    notes.append(_range_words(zip(("decision", "detection", "quantitation"), found), x_min, x_max))
    return Limit(BAND, float(curve.to_y(y_c)), *found, "; ".join(n for n in notes if n))


class _AtZero(NamedTuple):
    """The curve at x = 0: response f, the sign of its slope, 1/|S| as x per unit of response (curve
    units, so that it neither over- nor underflows with the raw slope), S in the units of y per x, and
    the standard error of the fitted response there (curve units)."""

    f: float
    sign: float
    x_per_response: float
    slope: float
    se_mean: float


def _at_zero(cal: Calibration, curve: Curve) -> _AtZero:
    f, dfz, vm, _ = curve.local(np.array([float(cal.scaled_x(0.0))]))
    dfz = float(dfz[0])
    with np.errstate(divide="ignore"):
        per = cal.dx_dz / abs(dfz) if dfz else math.inf
    return _AtZero(float(f[0]), 1.0 if dfz >= 0 else -1.0, per, float(curve.to_y(dfz)) / cal.dx_dz,
                   math.sqrt(float(vm[0])))


def _iso_row(cal: Calibration, curve: Curve, zero: _AtZero, m: int, alpha: float, t1: float) -> Limit:
    none, order = (math.nan,) * 4, curve.order
    if order != 1:
        return Limit(ISO, *none, "does not apply: ISO 11843-2 covers a straight line with constant SD; this curve "
                                 f"is of order {order} (see the prediction band row)")
    if cal.weighting.weighted:
        return Limit(ISO, *none, "does not apply: ISO 11843-2 covers a straight line with constant SD; this "
                                 f"calibration is weighted ('{cal.weighting.label}') (see the prediction band row)")
    z, n, df = cal.z, cal.n_points, curve.df
    zbar = float(z.mean())  # xbar^2 / Qx in the scaled variable z (x less 0 is z less z(0), times x per z)
    root = math.sqrt(1.0 / m + 1.0 / n + (zbar - float(cal.scaled_x(0.0))) ** 2 / float(((z - zbar) ** 2).sum()))
    delta = iso_delta(df, alpha, alpha)
    x_c, x_d = t1 * curve.s * zero.x_per_response * root, delta * curve.s * zero.x_per_response * root
    note = (f"delta = {delta:.5g} from the non-central t ({df} df; the approximation 2t would give "
            f"{2 * t1:.5g}); ISO 11843-2 defines no quantitation limit")
    extra = _range_words((("decision", x_c), ("detection", x_d)), curve.x_min, curve.x_max)
    y_c = float(curve.to_y(zero.f + zero.sign * t1 * curve.s * root))
    return Limit(ISO, y_c, x_c, x_d, math.nan, "; ".join(n for n in (note, extra) if n))


def _ich_rows(cal: Calibration, curve: Curve, zero: _AtZero, band: _Band, degenerate: str, flat: str
              ) -> list[Limit]:
    where = f"S = {fmt_value(zero.slope)}, the slope at x = 0" + (f" of the order-{curve.order} curve"
                                                            if curve.order > 1 else "")
    if cal.weighting.weighted:
        factor = float(band.variance_factor(np.zeros(1), np.array([zero.f]))[0])
        sd = curve.s * math.sqrt(factor) if factor > 0 else math.nan
        sd_words = (f"sigma = {fmt_value(float(curve.to_y(sd)))}, the SD of a reading at x = 0 under the weights "
                    "(s sqrt(1/w0))")
    else:
        sd = curve.s
        sd_words = f"sigma = {fmt_value(float(curve.to_y(sd)))}, the residual SD"
    se_words = f"sigma = {fmt_value(float(curve.to_y(zero.se_mean)))}, the standard error of the intercept"
    rows = []
    for name, sigma, words, bad in ((ICH_SD, sd, sd_words, flat or degenerate),
                                    (ICH_SE, zero.se_mean, se_words, flat)):
        if bad:
            rows.append(Limit(name, math.nan, math.nan, math.nan, math.nan, bad))
            continue
        lod, loq = (k * sigma * zero.x_per_response for k in (ICH_DETECTION, ICH_QUANTITATION))
        turns = branch_words(cal, curve, loq)
        if turns:
            rows.append(Limit(name, math.nan, math.nan, math.nan, math.nan, turns))
            continue
        notes = [f"{ICH_DETECTION:g} sigma/S and {ICH_QUANTITATION:g} sigma/S; {words}; {where}",
                 _range_words((("detection", lod), ("quantitation", loq)), curve.x_min, curve.x_max)]
        rows.append(Limit(name, math.nan, math.nan, lod, loq, "; ".join(n for n in notes if n)))
    return rows


def _blank_row(cal: Calibration, curve: Curve, zero: _AtZero, readings: np.ndarray, m: int, alpha: float,
               bad: str) -> Limit:
    none = (math.nan,) * 4
    n_b = readings.size
    if bad:
        return Limit(BLANK, *none, bad)
    if n_b < 2:
        return Limit(BLANK, *none, f"blank: {n_b} reading{'s' if n_b != 1 else ''}; the blank method needs at "
                                   "least 2 readings to estimate their SD")
    scaled = curve.from_y(readings)  # curve units keep the squares in range
    mean, sd = float(scaled.mean()), float(scaled.std(ddof=1))
    if not sd > 0:
        return Limit(BLANK, *none, f"blank: all {n_b} readings are equal ({fmt_value(float(curve.to_y(mean)))}), so "
                                   "their SD is 0 and gives no limit; enter the readings at full resolution")
    root = math.sqrt(1.0 / m + 1.0 / n_b)
    t1, t2 = float(t_quantile(1.0 - alpha, n_b - 1)), float(t_quantile(1.0 - alpha / 2, n_b - 1))
    per = sd * zero.x_per_response  # sb / |S|
    x_c, x_q = t1 * per * root, K_QUANTITATION * t2 * per * root
    turns = branch_words(cal, curve, x_q)
    if turns:
        return Limit(BLANK, *none, turns)
    notes = [f"DIN 32645 blank method; {n_b} readings, mean {fmt_value(float(curve.to_y(mean)))}, SD "
             f"{fmt_value(float(curve.to_y(sd)))}; S = {fmt_value(zero.slope)}, the slope at x = 0; "
             "ICH with sigma the blank SD: "
             f"3.3 sigma/S = {fmt_value(ICH_DETECTION * per)}, 10 sigma/S = {fmt_value(ICH_QUANTITATION * per)}",
             _range_words((("decision", x_c), ("detection", 2 * x_c), ("quantitation", x_q)), curve.x_min,
                          curve.x_max)]
    y_c = float(curve.to_y(mean + zero.sign * t1 * sd * root))
    return Limit(BLANK, y_c, x_c, 2 * x_c, x_q, "; ".join(n for n in notes if n))


def detection_limits(cal: Calibration, order: int, blank=None, replicates=1, alpha: float = 0.05
                     ) -> tuple[Limit, ...]:
    """Rows: prediction band, ISO 11843-2, ICH residual SD, ICH intercept SE and, with ``blank``
    readings, the blank method (formulas in the module docstring)."""
    alpha = check_alpha(alpha)
    m = int(check_replicates(replicates, 1)[0])
    readings = None if blank is None else check_vector(blank, "blank", flat=True)
    curve = cal.order(order).curve
    band = _Band(cal, curve, m)
    t1 = float(t_quantile(1.0 - alpha, curve.df))
    t2 = float(t_quantile(1.0 - alpha / 2, curve.df))
    zero = _at_zero(cal, curve)
    no_slope = ""  # no row has a slope to work with
    if curve.x_max <= 0:
        no_slope = (f"every standard lies at x <= 0 (the highest is {fmt_value(curve.x_max)}): limits above the blank "
                    "need x > 0")
    else:
        no_slope = branch_words(cal, curve)
    if not no_slope and math.isinf(zero.x_per_response):
        no_slope = "the curve is flat at x = 0 (slope 0), so no limit follows from it; check the low standards"
    flat = no_slope
    if not flat and cal.fits_exactly(curve.order):  # the blank readings still have a slope to work with
        flat = ("the curve passes through every standard (residual SD at rounding level), so its scatter gives "
                "no limit; give blank readings")
    degenerate = flat or _weight_words(cal, band, zero, t1)
    iso = Limit(ISO, *(math.nan,) * 4, flat) if flat else _iso_row(cal, curve, zero, m, alpha, t1)
    rows = [_band_row(cal, curve, band, t1, t2, zero.sign, degenerate), iso,
            *_ich_rows(cal, curve, zero, band, degenerate, flat)]
    if readings is not None:
        rows.append(_blank_row(cal, curve, zero, readings, m, alpha, no_slope))
    return tuple(rows)
