"""The fitted curve of one order in the scaled variable z: values, band, roots.

Shared by forward prediction, inverse prediction and the diagnostics. For a
weighted fit the variance of a new reading at x0 is sigma^2 / w0, with 1/w0 from
``Weighting.variance_factor``. Responses are in curve units, y 2^-e with the
calibration's exact power-of-two scaling (``to_y`` and ``from_y`` convert), so
that variances and squared gaps neither overflow nor underflow.
"""

from __future__ import annotations

import math
from functools import cached_property
from typing import TYPE_CHECKING

import numpy as np

from .distributions import t_quantile
from .linalg import powers
from .weighting import weight_order

if TYPE_CHECKING:  # the calibration builds on this module
    from .calibration import Calibration

# grid over z for locating roots and band edges: 400 cells across the calibrated
# range [-1, 1] (its ends are nodes), and the curve is used up to EXTEND (in units
# of the range) beyond each end, only for interval bounds and back-calculation
_CELLS = 400
EXTEND = 0.5
_STEP = 2.0 / _CELLS
_OUTSIDE = int(round(2 * EXTEND / _STEP))
GRID_Z = np.concatenate([-1 - _STEP * np.arange(_OUTSIDE, 0, -1), np.linspace(-1.0, 1.0, _CELLS + 1),
                         1 + _STEP * np.arange(1, _OUTSIDE + 1)])
GRID_Z.flags.writeable = False
RANGE_NODES = (_OUTSIDE, _OUTSIDE + _CELLS)  # indices of z = -1 and z = 1 in GRID_Z
ENDS = np.array([-1.0, 1.0])  # z at the ends of the calibrated range
ENDS.flags.writeable = False
# Newton stops when no point moved more than this (z spans 2 over the calibrated range)
_Z_TOLERANCE = 2.0**-46


class Curve:
    """Order ``order`` of ``cal``: f(z) = sum_j a_j z^j and Var(mean f(z)) = s^2 |z' R^-1|^2, in curve
    units (y = 2^e f with e = ``cal.y_exponent``). Made once per order: ``cal.order(k).curve``."""

    def __init__(self, cal: Calibration, order: int):
        self.cal = cal
        self.order = order
        self.e = cal.y_exponent
        self.a = cal.scaled_coefficients(self.order)
        self._da = _derivative(self.a)
        self._turns_in: dict[tuple[float, float], np.ndarray] = {}
        self.s = cal.scaled_residual_sd(self.order)  # in curve units
        self.df = cal.n_points - order - 1
        self.x_min = float(cal.x[cal.by_x[0]])
        self.x_max = float(cal.x[cal.by_x[-1]])
        self._t: dict[float, float] = {}
        self._bands: dict[tuple[float, float], tuple | None] = {}

    @cached_property
    def _variance(self) -> tuple[np.ndarray, float]:
        """Var(mean f(z)) / s^2 = b(z)' C b(z) with C = R^-1 R^-T: a polynomial in z of degree 2k, kept as
        C 2^-2g (R^-1 scaled exactly by 2^-g to entries below 1), so that it cannot overflow where weights
        near the ends of the double range make R tiny; and s 2^g, whose square puts 2^2g back (made on first
        use: back-calculation needs only the curve)."""
        r_inv = self.cal.r_factor_inverse(self.order)
        g = math.frexp(float(np.abs(r_inv).max()))[1]
        r_scaled = np.ldexp(r_inv, -g)
        c = r_scaled @ r_scaled.T
        p = np.arange(self.order + 1)
        return np.bincount(np.add.outer(p, p).ravel(), c.ravel()), math.ldexp(self.s, g)  # z^i z^j = z^(i+j)

    @cached_property
    def local_polynomials(self) -> np.ndarray:
        """f, f', Var(mean f)/s^2 and its slope as the columns of one matrix over z^0 .. z^2k."""
        var_poly = self._variance[0]
        out = np.zeros((var_poly.size, 4))
        for column, c in enumerate((self.a, self._da, var_poly, _derivative(var_poly))):
            out[: c.size, column] = c
        return out

    @cached_property
    def stats(self):
        """``cal.stats(order)``: made on first use (back-calculation and bands need only s and df)."""
        return self.cal.stats(self.order)

    def to_y(self, values) -> np.ndarray:
        """Curve units to the units of y."""
        return np.ldexp(values, self.e)

    def from_y(self, values) -> np.ndarray:
        """The units of y to curve units."""
        return np.ldexp(np.asarray(values, dtype=float), -self.e)

    def value(self, z) -> np.ndarray:
        """f(z) in curve units."""
        return _horner(self.a, z)

    def slope(self, z) -> np.ndarray:
        """dy/dz."""
        return _horner(self._da, z)

    def mean_variance(self, z) -> np.ndarray:
        """Var of the fitted mean at z, in curve units squared."""
        var_poly, s_var = self._variance
        return s_var**2 * np.maximum(_horner(var_poly, z), 0.0)

    def local(self, z: np.ndarray):
        """f(z), f'(z), the variance of the fitted mean and its slope, at the points z (1-D), in curve units."""
        v = powers(z, self.local_polynomials.shape[0] - 1) @ self.local_polynomials
        s2 = self._variance[1] ** 2
        return v[:, 0], v[:, 1], s2 * np.maximum(v[:, 2], 0.0), s2 * v[:, 3]

    def t_value(self, level: float) -> float:
        if level not in self._t:
            self._t[level] = float(t_quantile(0.5 + level / 2, self.df))
        return self._t[level]

    def turning_points(self, lo: float = -1.0, hi: float = 1.0) -> np.ndarray:
        """z in (lo, hi) where dy/dz changes sign, sorted (read-only; kept per interval)."""
        key = (lo, hi)
        if key not in self._turns_in:
            every = self._all_turns
            turns = every[(every > lo) & (every < hi)]
            turns.flags.writeable = False
            self._turns_in[key] = turns
        return self._turns_in[key]

    @cached_property
    def _all_turns(self) -> np.ndarray:
        nonzero = np.flatnonzero(self._da)
        d = self._da[: nonzero[-1] + 1] if nonzero.size else self._da[:0]
        if d.size == 2:  # a straight slope: one root
            return np.array([-d[0] / d[1]])
        if d.size < 2:
            return np.empty(0)
        roots = np.roots(d[::-1])
        real = np.sort(roots[np.abs(roots.imag) <= 1e-9 * (1 + np.abs(roots.real))].real)
        # a double root is not a turn: keep those where the slope changes sign
        return real[np.sign(self.slope(real - 1e-7)) != np.sign(self.slope(real + 1e-7))]

    @cached_property
    def grid(self):
        """z nodes over the extended range, with the curve there (curve units)."""
        return GRID_Z, self.value(GRID_Z)

    @cached_property
    def grid_mean_variance(self) -> np.ndarray:
        """The variance of the fitted mean at every grid node (curve units squared)."""
        return self.mean_variance(GRID_Z)

    @property
    def weight_curve(self) -> "Curve":
        """The curve whose fitted values give 1/y weights (``weighting.weight_order``): this one unless the
        weights follow the fitted response."""
        cal = self.cal
        return cal.order(weight_order(cal.max_order)).curve if cal.weighting.iterative else self

    @cached_property
    def grid_variance_factor(self) -> np.ndarray:
        """1/w0 of a new reading at every grid node (one 1 when unweighted)."""
        weighting = self.cal.weighting
        if not weighting.weighted:
            return np.ones(1)
        z, f = self.weight_curve.grid
        return weighting.variance_factor(self.cal.raw_x(z), self.to_y(f))

    def monotonic_band(self, t2: float, m: np.ndarray):
        """For readings that all average the same number m of replicates: the sign of the curve's slope,
        the rows (curve, upper edge, lower edge) of the band f +- t sqrt(s^2 / (m w0) + Var f) on the grid,
        times that sign, and the local polynomials with that sign and t^2 s^2 folded in, when both edges
        rise strictly over the whole grid; else None. Made once per t^2 and m."""
        if m.size > 1 and not (m == m[0]).all():
            return None
        key = (t2, float(m[0]))
        if key not in self._bands:
            t2s2 = t2 * self.s**2
            (_, f), vm = self.grid, self.grid_mean_variance
            sign = 1.0 if f[-1] >= f[0] else -1.0
            table = np.empty((3, f.size))
            curve_row, upper, lower = table
            np.multiply(f, sign, out=curve_row)
            with np.errstate(invalid="ignore"):
                half = np.sqrt(t2s2 * self.grid_variance_factor / m[0] + t2 * vm)
            np.add(curve_row, half, out=upper)
            np.subtract(curve_row, half, out=lower)
            rising = bool((upper[1:] > upper[:-1]).all() and (lower[1:] > lower[:-1]).all())
            # sign f, sign f', t^2 Var(mean f) and its slope, as polynomials in z (columns)
            t2s2_var = t2 * self._variance[1] ** 2
            local = self.local_polynomials * np.array([sign, sign, t2s2_var, t2s2_var])
            self._bands[key] = (sign, table, local) if rising else None
        return self._bands[key]


def _horner(c: np.ndarray, z):
    """sum_j c_j z^j by Horner's rule: numpy.polynomial.polynomial.polyval(z, c), step for step (so the same
    numbers, nan at an infinite z included), without its argument handling, which costs more than the sum at
    a calibration's few points."""
    c = c.tolist()  # Python floats: cheaper to combine with an array than numpy scalars, the same sums
    v = c[-1] + z * 0.0
    for a in c[-2::-1]:
        v = a + v * z
    return v


def _derivative(c: np.ndarray) -> np.ndarray:
    """Coefficients of the derivative of sum_j c_j z^j (as numpy.polynomial.polynomial.polyder, without its
    argument handling)."""
    return c[1:] * np.arange(1.0, c.size) if c.size > 1 else np.zeros(1)


def newton_in_cells(func, lo, hi, f_lo, f_hi, steps: int = 8):
    """Vectorised Newton iteration kept inside each small bracketing cell [lo, hi].

    ``func`` maps points (one per cell) to (value, slope). The start is the
    linear interpolation between the cell's ends (the cells are 1/200 of the
    range wide, so it is already close); Newton then converges quadratically.
    Each iterate is clipped to its cell (a step to infinity ends at the cell's
    end); an undefined step (0/0) keeps the point. It stops
    when no point moved more than the tolerance, or when the contraction seen
    over the last two steps (quadratic: next ~ moved^3 / previous^2) puts the
    next move below it.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.minimum(np.maximum(lo - f_lo * (hi - lo) / (f_hi - f_lo), lo), hi)  # nan stays nan
        if np.isnan(z).any():
            z = np.where(np.isnan(z), (lo + hi) / 2, z)
        previous = None
        for _ in range(steps):
            value, slope = func(z)
            new = np.minimum(np.maximum(z - value / slope, lo), hi)
            moved = float(np.abs(new - z).max(initial=0.0))
            if moved != moved:  # a nan step (0/0): keep the point
                new = np.where(np.isnan(new), z, new)
                moved = float(np.abs(new - z).max(initial=0.0))
            z = new
            if moved <= _Z_TOLERANCE or (previous is not None and moved**3 <= _Z_TOLERANCE * previous**2):
                break
            previous = moved
    return z
