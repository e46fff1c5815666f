"""Evaluating polynomials in the scaled variable: Horner's rule and rows of powers."""

from __future__ import annotations

import numpy as np


def power_rows(z: np.ndarray, width: int) -> np.ndarray:
    """Rows z^0 .. z^(width-1) of a 1-D array z, each row contiguous, by repeated multiplication (as
    numpy.vander with increasing=True, transposed, without its argument handling)."""
    out = np.empty((width, z.size))
    out[0] = 1.0
    if width > 1:
        out[1:] = z
        np.multiply.accumulate(out[1:], axis=0, out=out[1:])
    return out


def horner(coefficients, z):
    """sum_j c_j z^j by Horner's rule (coefficients lowest power first)."""
    z = np.asarray(z, dtype=float)
    if len(coefficients) == 1:
        return np.full(z.shape, coefficients[0], dtype=float)
    out = coefficients[-1] * z + coefficients[-2]
    for c in coefficients[-3::-1]:
        out = out * z + c
    return out
