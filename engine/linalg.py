"""The factorisations the engine uses, each through LAPACK (scipy.linalg, numpy.linalg), and the leverage that
counts as 1."""

from __future__ import annotations

import numpy as np
import scipy.linalg

# a leverage above this is 1 in double precision: that standard alone fixes the curve at its x
LEVERAGE_ONE = 1 - 1e-10


def householder_qr(a: np.ndarray):
    """Reduced Householder QR (scipy.linalg.qr: LAPACK dgeqrf and dorgqr). ``a`` is a temporary the caller
    does not read again: a Fortran-ordered one (as numpy.polynomial's Vandermonde matrices are) is factorised
    in place, with no copy (numpy.linalg.qr copies a million-point basis twice)."""
    return scipy.linalg.qr(a, mode="economic", overwrite_a=True, check_finite=False)


def triangular_inverse(r: np.ndarray) -> np.ndarray:
    """R^-1 of an upper triangular R with a non-zero diagonal (LAPACK dgesv on the identity). Exactly
    upper triangular: below the diagonal R holds zeros only, so partial pivoting swaps no rows, L = I,
    and back substitution leaves those zeros as they are."""
    return np.linalg.inv(r)
