"""Weights for weighted least squares: explicit values or a named scheme.

A weight w_i says that the variance of y_i is sigma^2 / w_i. The schemes
"1/x", "1/x^2", "1/y", "1/y^2" are the usual choices in bioanalytical
calibration (common practice; see e.g. Almeida, Castel-Branco & Falcao,
J. Chromatogr. B 774 (2002) 215-222).

For a new reading the variance factor 1/w0 is needed too: under a scheme it is
the scheme evaluated at the new point (x0, or for the y schemes the fitted
response f(x0), in forward and inverse prediction alike);
under explicit weights it is 1/w interpolated linearly in x between the
standards (the mean of 1/w at each distinct x), held constant beyond them.
"""

from __future__ import annotations

import numpy as np

from .errors import WeightError

SCHEMES = {"1/x": ("x", 1), "1/x^2": ("x", 2), "1/y": ("y", 1), "1/y^2": ("y", 2)}


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
            base = x if var == "x" else y
            bad = np.flatnonzero(~(base > 0))
            if bad.size:
                i = int(bad[0])
                raise WeightError(
                    f"weights '{key}' needs every {var} > 0, but {var}[{i}] is {float(base[i])!r}",
                    argument="weights",
                    index=i,
                )
            with np.errstate(over="ignore"):  # a weight beyond the double range is reported just below
                self.values = base ** (-float(power))
        else:
            w = np.asarray(weights, dtype=float).ravel()
            if w.size != x.size:
                raise WeightError(
                    f"weights has {w.size} values but there are {x.size} points; "
                    "give one weight per point",
                    argument="weights",
                )
            bad = np.flatnonzero(~(np.isfinite(w) & (w > 0)))
            if bad.size:
                i = int(bad[0])
                raise WeightError(
                    f"weights[{i}] is {float(w[i])!r}: every weight must be a positive finite number",
                    argument="weights",
                    index=i,
                )
            self.values = w
        bad = np.flatnonzero(~np.isfinite(self.values) | (self.values <= 0))
        if bad.size:
            i = int(bad[0])
            raise WeightError(
                f"weights[{i}] works out as {float(self.values[i])!r}: every weight must be a "
                "positive finite number",
                argument="weights",
                index=i,
            )
        if self.scheme is None:
            ux, inv = np.unique(x, return_inverse=True)
            self._grid = ux
            self._var = np.bincount(inv, 1.0 / self.values) / np.bincount(inv)
            self._slopes = np.diff(self._var) / np.diff(ux)

    @property
    def label(self) -> str:
        if self.values is None:
            return "none"
        return self.scheme if self.scheme else "values"

    def variance_factor(self, x_new, y_new):
        """1/w0 of a new reading at x_new with response y_new (nan where undefined)."""
        x_new = np.asarray(x_new, dtype=float)
        if self.values is None:
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
        if self.values is None:
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
