"""The engine's factorisations against scipy.linalg.qr (the reference library they stand in for)."""

import numpy as np
import pytest
import scipy.linalg

from degreewise.engine.linalg import householder_qr, orthonormal_columns, powers


@pytest.mark.parametrize("n, p, seed", [(24, 3, 0), (24, 5, 1), (7, 7, 2), (1000, 11, 3)])
def test_the_qr_is_scipys_economic_qr_bit_for_bit(n, p, seed):
    a = np.random.default_rng(seed).normal(size=(n, p))
    q_ref, r_ref = scipy.linalg.qr(a, mode="economic")
    q, r = householder_qr(np.asfortranarray(a))
    assert np.array_equal(q, q_ref) and np.array_equal(r, r_ref)
    assert np.array_equal(orthonormal_columns(np.asfortranarray(a)), q_ref)


def test_a_polynomial_basis_factorised_in_place_gives_the_same_factors():
    z = np.linspace(-1.0, 1.0, 24)
    q_ref, r_ref = scipy.linalg.qr(np.polynomial.polynomial.polyvander(z, 4), mode="economic")
    q, r = householder_qr(powers(z, 4))
    assert np.array_equal(q, q_ref) and np.array_equal(r, r_ref)
