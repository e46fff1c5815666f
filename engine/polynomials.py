"""Evaluating polynomials in the scaled variable: Horner's rule and columns of powers."""

from __future__ import annotations

import numpy as np


def power_columns(z: np.ndarray, width: int) -> np.ndarray:
    """Columns z^0 .. z^(width-1) of a 1-D array z, by repeated multiplication (as numpy.vander with
    increasing=True, without its argument handling)."""
    out = np.empty((z.size, width))
    out[:, 0] = 1.0
    if width > 1:
        out[:, 1:] = z[:, None]
        np.multiply.accumulate(out[:, 1:], axis=1, out=out[:, 1:])
    return out


def power_rows(z: np.ndarray, width: int) -> np.ndarray:
    """Rows z^0 .. z^(width-1) of a 1-D array z (the transpose of ``power_columns``, each row contiguous)."""
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
