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

# grid over z for locating roots and band edges: 400 cells across the calibrated
# range [-1, 1] (its ends are nodes), and the curve is used up to EXTEND (in units
# of the range) beyond each end, only for interval bounds and back-calculation
_CELLS = 400
EXTEND = 0.5
_Z_TOLERANCE = 2.0**-50


def check_level(level) -> float:
    try:
        v = float(level)
    except (TypeError, ValueError):
        raise OptionError(f"level must be a number between 0 and 1, not {level!r}", argument="level") from None
    if not 0 < v < 1:
        raise OptionError(f"level must be between 0 and 1 (for example 0.95), not {level!r}", argument="level")
    return v


def curve_of(cal: Calibration, order) -> "Curve":
    """The curve of ``order``, made once per calibration and order."""
    k = cal.resolve_order(order)
    cache = cal.__dict__.setdefault("_curves", {})
    if k not in cache:
        cache[k] = Curve(cal, k)
    return cache[k]


class Curve:
    """Order ``order`` of ``cal``: y(z) = sum_j a_j z^j and Var(mean y(z)) = s^2 |z' R^-1|^2."""

    def __init__(self, cal: Calibration, order: int):
        self.cal = cal
        self.order = cal.resolve_order(order)
        self.a = cal.scaled_coefficients(self.order)
        r_inv = cal.r_factor_inverse(self.order)
        self.r_inv = r_inv
        # Var(mean f(z)) / s^2 = b(z)' C b(z) with C = R^-1 R^-T: a polynomial in z of degree 2k
        c = r_inv @ r_inv.T
        p = self.order + 1
        self._var_poly = np.array([np.trace(np.fliplr(c), offset=p - 1 - d) for d in range(2 * p - 1)])
        self.stats = cal.stats(self.order)
        self.s = self.stats.residual_sd
        self.df = self.stats.df_resid
        self.x_min = float(cal.x.min())
        self.x_max = float(cal.x.max())
        self._grid = None

    def basis(self, z) -> np.ndarray:
        return np.vander(np.atleast_1d(np.asarray(z, dtype=float)), self.order + 1, increasing=True)

    def value(self, z) -> np.ndarray:
        return horner(self.a, z)

    def slope(self, z) -> np.ndarray:
        """dy/dz."""
        return horner(self.a[1:] * np.arange(1, self.a.size), z)

    def mean_variance(self, z) -> np.ndarray:
        """Var of the fitted mean at z, in units of y squared."""
        return self.s**2 * np.maximum(horner(self._var_poly, z), 0.0)

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
            step = 2.0 / _CELLS
            outside = int(round(2 * EXTEND / step))
            z = np.concatenate([-1 - step * np.arange(outside, 0, -1), np.linspace(-1.0, 1.0, _CELLS + 1),
                                1 + step * np.arange(1, outside + 1)])
            self._grid = z, self.value(z), self.mean_variance(z)
        return self._grid


def horner(coefficients, z):
    """sum_j c_j z^j by Horner's rule (coefficients lowest power first)."""
    z = np.asarray(z, dtype=float)
    out = np.full(z.shape, coefficients[-1], dtype=float)
    for c in coefficients[-2::-1]:
        out = out * z + c
    return out


def sign_changes(values: np.ndarray, z: np.ndarray, lo: float, hi: float):
    """Cells [z_j, z_j+1] inside [lo, hi] where a row of ``values`` (on the grid z) changes sign.

    A zero counts as positive, so a root on a node is found once. Returns row and
    cell indices.
    """
    up = values >= 0
    inside = (z[:-1] >= lo) & (z[1:] <= hi)
    return np.nonzero((up[:, :-1] != up[:, 1:]) & inside[None, :])


def secant_in_cells(func, lo, hi, f_lo, f_hi, steps: int = 12):
    """Vectorised secant iteration kept inside each small bracketing cell [lo, hi].

    Started from the cell's ends, it converges superlinearly on a smooth function
    (the cells are 1/200 of the range wide); each iterate is clipped to its cell
    and a flat step falls back to the midpoint. Returns the iterate with the
    smaller |func|.
    """
    a, b = np.array(lo, dtype=float), np.array(hi, dtype=float)
    fa, fb = np.array(f_lo, dtype=float), np.array(f_hi, dtype=float)
    lo, hi = a.copy(), b.copy()
    for _ in range(steps):
        with np.errstate(divide="ignore", invalid="ignore"):
            c = np.where(fb == 0, b, b - fb * (b - a) / (fb - fa))
        c = np.where(np.isfinite(c), np.clip(c, lo, hi), (lo + hi) / 2)
        done = np.abs(c - b) <= _Z_TOLERANCE
        a, fa, b, fb = b, fb, c, func(c)
        if done.all():
            break
    return np.where(np.abs(fb) <= np.abs(fa), b, a)
