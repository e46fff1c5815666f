"""Weights for weighted least squares: explicit values or a named scheme.

A weight w_i says that the variance of y_i is sigma^2 / w_i. The schemes
"1/x", "1/x^2", "1/y", "1/y^2" are the usual choices in bioanalytical
calibration (common practice; see e.g. Almeida, Castel-Branco & Falcao,
J. Chromatogr. B 774 (2002) 215-222).

The 1/y and 1/y^2 schemes read the fitted curve, not the observed responses
(whose errors the weights would then share, which biases the slope by about
-CV^2 for 1/y and -2 CV^2 for 1/y^2): iteratively reweighted least squares,
starting from the observed responses' weights (or the unweighted fit where a
response is not positive), each cycle weighting by the fitted values of
order WEIGHT_ORDER (or the max order, if lower) from the cycle before, until
no weight changes by more than SETTLED (relative) from one cycle to the next,
at most CYCLES cycles
(generalized least squares iterated to convergence: Carroll & Ruppert,
Transformation and Weighting in Regression, Chapman & Hall 1988, sec. 2.1-2.3,
from memory). One weight vector serves every order, so that nested orders can
be compared; a quadratic follows the bend of a calibration curve closely enough
for weights, and the fewer coefficients it has, the less a standard's weight
follows that standard's own error (with the max order of 4 on 6 levels x 3 at a
CV of 20 %, a slope bias of -0.7 % for 1/y was left; measured, common practice).

For a new reading the variance factor 1/w0 is needed too: under a scheme it is
the scheme evaluated at the new point (x0, or for the y schemes the same fitted
curve of order WEIGHT_ORDER at x0, in forward and inverse prediction alike);
under explicit weights it is 1/w interpolated linearly in x between the
standards (the mean of 1/w at each distinct x), held constant beyond them.
"""

from __future__ import annotations

import numpy as np

from .errors import WeightError
from .validation import check_scheme_base, check_weights, first_failing, positive_weights

SCHEMES = {"1/x": ("x", 1), "1/x^2": ("x", 2), "1/y": ("y", 1), "1/y^2": ("y", 2)}
SETTLED = 1e-10
CYCLES = 100
WEIGHT_ORDER = 2


def weight_order(max_order: int) -> int:
    """The order of the curve whose fitted values give 1/y weights."""
    return min(WEIGHT_ORDER, max_order)


class Weighting:
    """Resolved weights of one calibration and the variance factor of new readings."""

    def __init__(self, weights, x: np.ndarray, y: np.ndarray):
        self.scheme = None
        if weights is None:
            self.values = None
            return
        if isinstance(weights, str):
            key = weights.strip().lower().replace(" ", "")
            if key not in SCHEMES:
                raise WeightError(
                    f"weights: unknown scheme '{weights}'; use one of "
                    + ", ".join(f"'{s}'" for s in SCHEMES)
                    + " or a range of positive numbers",
                    argument="weights",
                )
            self.scheme = key
            var, power = SCHEMES[key]
            if var == "y":  # set by ``settle`` from the fitted curve
                self.values = np.ones_like(x)
                return
            check_scheme_base(key, var, x)
            self.values = _from_base(key, x)
        else:
            self.values = check_weights(weights, x.size)
        if self.scheme is None:
            ux, inv = np.unique(x, return_inverse=True)
            self._grid = ux
            # a subnormal weight's 1/w and a slope over x spacings near the double range are inf, as they are
            with np.errstate(over="ignore"):
                self._var = np.bincount(inv, 1.0 / self.values) / np.bincount(inv)
                self._slopes = np.diff(self._var) / np.diff(ux)

    @property
    def iterative(self) -> bool:
        """True for the 1/y schemes, whose weights come from the fitted curve (``settle``)."""
        return self.scheme is not None and SCHEMES[self.scheme][0] == "y"

    def settle(self, x: np.ndarray, y: np.ndarray, fitted_for) -> None:
        """Iterate the 1/y weights (module docstring); ``fitted_for(w)`` gives the fitted y of the
        standards under weights w."""
        values = _from_base(self.scheme, y) if (y > 0).all() else np.ones_like(x)
        for _ in range(CYCLES):
            fitted = fitted_for(values)
            i = first_failing(fitted > 0)
            if i is not None:
                raise WeightError(
                    f"weights '{self.scheme}' need a fitted y > 0 at every standard, but the curve gives "
                    f"{float(fitted[i]):.6g} at x = {float(x[i]):g} (x[{i}]); use 1/x weights or none",
                    argument="x",
                    index=i,
                )
            new = _from_base(self.scheme, fitted)
            if np.max(np.abs(new / values - 1.0)) <= SETTLED:
                self.values = values
                return
            values = new
        raise WeightError(
            f"weights '{self.scheme}' did not settle in {CYCLES} cycles of reweighting by the fitted curve; "
            "use 1/x weights or none",
            argument="weights",
        )

    @property
    def weighted(self) -> bool:
        """Whether the fit is weighted (weights given as values or by a scheme); the one test of it."""
        return self.values is not None

    @property
    def label(self) -> str:
        if not self.weighted:
            return "none"
        return self.scheme if self.scheme else "values"

    def variance_factor(self, x_new, y_new):
        """1/w0 of a new reading at x_new with response y_new (nan where undefined)."""
        x_new = np.asarray(x_new, dtype=float)
        if not self.weighted:
            return np.ones_like(x_new)
        if self.scheme is None:
            return np.interp(x_new, self._grid, self._var)
        var, power = SCHEMES[self.scheme]
        base = np.asarray(x_new if var == "x" else y_new, dtype=float)
        with np.errstate(invalid="ignore"):
            return np.where(base > 0, base ** float(power), np.nan)

    def variance_factor_slope(self, x_new, y_new, dy_dx):
        """d(1/w0)/dx at x_new, where the response y_new = f(x_new) has slope dy_dx."""
        x_new = np.asarray(x_new, dtype=float)
        if not self.weighted:
            return np.zeros_like(x_new)
        if self.scheme is None:
            cell = np.clip(np.searchsorted(self._grid, x_new) - 1, 0, self._slopes.size - 1)
            inside = (x_new > self._grid[0]) & (x_new < self._grid[-1])
            return np.where(inside, self._slopes[cell], 0.0)
        var, power = SCHEMES[self.scheme]
        base = x_new if var == "x" else np.asarray(y_new, dtype=float)
        chain = 1.0 if var == "x" else dy_dx
        with np.errstate(invalid="ignore"):
            return np.where(base > 0, power * base ** float(power - 1) * chain, np.nan)


def _from_base(key: str, base: np.ndarray) -> np.ndarray:
    """The weights base^-power of scheme ``key`` (base > 0, checked by the caller), each a positive finite
    number."""
    power = SCHEMES[key][1]
    with np.errstate(over="ignore"):
        values = base ** (-float(power))
    return positive_weights(values, "works out as")
