"""The fitted curve of one order in the scaled variable z: values, band, roots.

Shared by forward prediction, inverse prediction and the diagnostics. For a
weighted fit the variance of a new reading at x0 is sigma^2 / w0, with 1/w0 from
``Weighting.variance_factor``.
"""

from __future__ import annotations

import numpy as np

from .calibration import Calibration
from .distributions import t_quantile
from .errors import OptionError

# grid over z for locating roots and band edges; the curve is used up to EXTEND
# beyond each end of the calibrated range only for interval bounds
_GRID = 1201
EXTEND = 0.5
# brackets in z (which spans 2 over the calibrated range) are closed to this width
_Z_TOLERANCE = 2.0**-47


def check_level(level) -> float:
    try:
        v = float(level)
    except (TypeError, ValueError):
        raise OptionError(f"level must be a number between 0 and 1, not {level!r}", argument="level") from None
    if not 0 < v < 1:
        raise OptionError(f"level must be between 0 and 1 (for example 0.95), not {level!r}", argument="level")
    return v


class Curve:
    """Order ``order`` of ``cal``: y(z) = sum_j a_j z^j and Var(mean y(z)) = s^2 |z' R^-1|^2."""

    def __init__(self, cal: Calibration, order: int):
        self.cal = cal
        self.order = cal.resolve_order(order)
        self.a = cal.scaled_coefficients(self.order)
        self.r_inv = cal._r_inv[: self.order + 1, : self.order + 1]
        self.stats = cal.stats(self.order)
        self.s = self.stats.residual_sd
        self.df = self.stats.df_resid
        self.x_min = float(cal.x.min())
        self.x_max = float(cal.x.max())
        self._grid = None

    def basis(self, z) -> np.ndarray:
        return np.vander(np.atleast_1d(np.asarray(z, dtype=float)), self.order + 1, increasing=True)

    def value(self, z) -> np.ndarray:
        return np.polynomial.polynomial.polyval(z, self.a)

    def slope(self, z) -> np.ndarray:
        """dy/dz."""
        return np.polynomial.polynomial.polyval(z, np.polynomial.polynomial.polyder(self.a))

    def mean_variance(self, z) -> np.ndarray:
        """Var of the fitted mean at z, in units of y squared."""
        g = self.basis(z) @ self.r_inv
        return self.s**2 * np.einsum("ij,ij->i", g, g).reshape(np.shape(z))

    def t_value(self, level: float) -> float:
        return float(t_quantile(0.5 + level / 2, self.df))

    def turning_points(self) -> np.ndarray:
        """z in (-1, 1) where dy/dz changes sign, sorted."""
        d = np.polynomial.polynomial.polyder(self.a)
        if d.size < 2:
            return np.empty(0)
        d = np.trim_zeros(d, "b")
        if d.size < 2:
            return np.empty(0)
        roots = np.polynomial.polynomial.polyroots(d)
        real = roots[np.abs(roots.imag) <= 1e-9 * (1 + np.abs(roots.real))].real
        inside = np.sort(real[(real > -1) & (real < 1)])
        # a double root is not a turn: keep those where the slope changes sign
        keep = [z for z in inside if np.sign(self.slope(z - 1e-7)) != np.sign(self.slope(z + 1e-7))]
        return np.asarray(keep)

    @property
    def grid(self):
        """z nodes over the extended range, with the curve and mean variance there."""
        if self._grid is None:
            z = np.linspace(-1 - EXTEND, 1 + EXTEND, _GRID)
            self._grid = z, self.value(z), self.mean_variance(z)
        return self._grid


def illinois(func, lo, hi, f_lo, f_hi, steps: int = 60):
    """Vectorised regula falsi with the Illinois modification on brackets [lo, hi].

    f_lo and f_hi have opposite signs (or one is zero); ``func`` maps an array of
    points (one per bracket) to values. Converges superlinearly (Dowell & Jarratt,
    BIT 11 (1971) 168-174). A bracket is done when it is narrower than 2^-47
    (z spans 2 over the calibrated range) or its estimate moved less than that.
    """
    s, t = np.array(lo, dtype=float), np.array(hi, dtype=float)
    fs, ft = np.array(f_lo, dtype=float), np.array(f_hi, dtype=float)
    side = np.zeros(s.shape)
    best = np.where(np.abs(fs) <= np.abs(ft), s, t)
    live = (t - s > _Z_TOLERANCE) & (fs != 0) & (ft != 0)
    for _ in range(steps):
        if not live.any():
            break
        with np.errstate(divide="ignore", invalid="ignore"):
            r = (fs * t - ft * s) / (fs - ft)
        r = np.where((r > s) & (r < t), r, (s + t) / 2)
        fr = func(r)
        keep_s = live & (fr * ft > 0)  # r replaces t
        keep_t = live & (fs * fr > 0)  # r replaces s
        fs = np.where(keep_s & (side == -1), fs / 2, fs)
        ft = np.where(keep_t & (side == 1), ft / 2, ft)
        t, ft = np.where(keep_s, r, t), np.where(keep_s, fr, ft)
        s, fs = np.where(keep_t, r, s), np.where(keep_t, fr, fs)
        side = np.where(keep_s, -1, np.where(keep_t, 1, side))
        moved = np.abs(r - best)
        best = np.where(live, r, best)
        live &= (fr != 0) & (moved > _Z_TOLERANCE) & (t - s > _Z_TOLERANCE)
    return best
