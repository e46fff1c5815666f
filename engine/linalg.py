"""The factorisations the engine uses, each through LAPACK (scipy.linalg.lapack, numpy.linalg), and the
leverage that counts as 1."""

from __future__ import annotations

import numpy as np
from scipy.linalg import lapack

# a leverage above this is 1 in double precision: that standard alone fixes the curve at its x
LEVERAGE_ONE = 1 - 1e-10
_GEQRF, _ORGQR = lapack.get_lapack_funcs(("geqrf", "orgqr"), dtype=np.float64)
# work space per column: at least LAPACK's optimal block size (32 in the reference implementation), so the
# factors are those scipy.linalg.qr gives after its own work-space query
_WORK_PER_COLUMN = 64


def householder_qr(a: np.ndarray):
    """Reduced Householder QR of a float64 m x n matrix, m >= n (LAPACK dgeqrf and dorgqr, as
    scipy.linalg.qr(mode="economic") without its argument checks and work-space query, which cost more than
    the factorisation of a calibration's design). ``a`` is a temporary the caller does not read again: a
    Fortran-ordered one (as numpy.polynomial's Vandermonde matrices are) is factorised in place, with no copy
    (numpy.linalg.qr copies a million-point basis twice)."""
    reflectors, tau = _geqrf(a)
    r = reflectors[: a.shape[1]].copy()  # the upper triangle; below it, zeros row by row (numpy.triu costs more)
    for i in range(1, r.shape[0]):
        r[i, :i] = 0.0
    return _orgqr(reflectors, tau), r


def orthonormal_columns(a: np.ndarray) -> np.ndarray:
    """Q alone of ``householder_qr(a)`` (the same numbers), for a fit that needs no R; ``a`` is a temporary,
    overwritten as there."""
    return _orgqr(*_geqrf(a))


def _geqrf(a: np.ndarray):
    qr, tau, _, info = _GEQRF(a, lwork=_WORK_PER_COLUMN * a.shape[1], overwrite_a=1)
    if info:
        raise np.linalg.LinAlgError(f"LAPACK dgeqrf failed (info {info})")
    return qr, tau


def _orgqr(reflectors: np.ndarray, tau: np.ndarray) -> np.ndarray:
    q, _, info = _ORGQR(reflectors, tau, lwork=_WORK_PER_COLUMN * reflectors.shape[1], overwrite_a=1)
    if info:
        raise np.linalg.LinAlgError(f"LAPACK dorgqr failed (info {info})")
    return q


def powers(z: np.ndarray, k: int) -> np.ndarray:
    """z^0 .. z^k as the columns of a Fortran-ordered matrix, each power the one before times z: the values of
    numpy.polynomial.polynomial.polyvander(z, k), without its argument handling."""
    v = np.empty((k + 1, z.size))
    v[0] = 1.0
    for j in range(1, k + 1):
        np.multiply(v[j - 1], z, out=v[j])
    return v.T


def triangular_inverse(r: np.ndarray) -> np.ndarray:
    """R^-1 of an upper triangular R with a non-zero diagonal (LAPACK dgesv on the identity). Exactly
    upper triangular: below the diagonal R holds zeros only, so partial pivoting swaps no rows, L = I,
    and back substitution leaves those zeros as they are."""
    return np.linalg.inv(r)
