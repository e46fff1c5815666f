"""The factorisations the engine uses, each through numpy.linalg (LAPACK)."""

from __future__ import annotations

import numpy as np


def householder_qr(a: np.ndarray):
    """Reduced Householder QR (numpy.linalg.qr: LAPACK dgeqrf and dorgqr)."""
    return np.linalg.qr(a, mode="reduced")


def triangular_inverse(r: np.ndarray) -> np.ndarray:
    """R^-1 of an upper triangular R with a non-zero diagonal (LAPACK dgesv on the identity). Exactly
    upper triangular: below the diagonal R holds zeros only, so partial pivoting swaps no rows, L = I,
    and back substitution leaves those zeros as they are."""
    return np.linalg.inv(r)
