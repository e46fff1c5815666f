"""The factorisations the engine uses, each through numpy.linalg (LAPACK), and the leverage that counts as 1."""

from __future__ import annotations

import numpy as np

# a leverage above this is 1 in double precision: that standard alone fixes the curve at its x
LEVERAGE_ONE = 1 - 1e-10


def householder_qr(a: np.ndarray):
    """Reduced Householder QR (numpy.linalg.qr: LAPACK dgeqrf and dorgqr)."""
    return np.linalg.qr(a, mode="reduced")


def triangular_inverse(r: np.ndarray) -> np.ndarray:
    """R^-1 of an upper triangular R with a non-zero diagonal (LAPACK dgesv on the identity). Exactly
    upper triangular: below the diagonal R holds zeros only, so partial pivoting swaps no rows, L = I,
    and back substitution leaves those zeros as they are."""
    return np.linalg.inv(r)
