"""Raw power-basis coefficients to full double accuracy by iterative refinement.

The least-squares problem in raw powers, min ||y - V b|| with V_ik = x_i^k, is
written as the augmented system

    [ I   V ] [r]   [y]
    [ V'  0 ] [b] = [c]        (c = 0 for the fit itself)

and refined as in A. Bjorck, "Iterative refinement of linear least squares
solutions I", BIT 7 (1967) 257-278: the residuals of both block equations are
formed in double-double arithmetic from exact-to-32-digits powers of x, and each
correction is solved with the QR factorisation Z = QR of the centred, scaled
basis z = (x - c)/h, using V = Z T^-1 where b = T a converts scaled
coefficients a to raw ones. The ill-conditioning of V enters only the residual
computation, which double-double absorbs; the solver works in the well
conditioned z basis. With c = -I and y = 0 the same iteration gives
(V'V)^-1, whose diagonal yields the standard errors.
"""

from __future__ import annotations

import functools
from math import comb

import numpy as np

from . import doubledouble as dd

_MAX_STEPS = 10
_TOLERANCE = 2.0**-100
_ENOUGH = 2.0**-64
_BLOCK = 2**21  # elements per temporary array in the residual computation


def conversion_matrix(centre: float, half_width: float, order: int) -> np.ndarray:
    """T with raw coefficients b = T a for sum_j a_j ((x - centre)/half_width)^j.

    T_kj = C(j, k) (-centre)^(j-k) / half_width^j for k <= j (binomial expansion).
    """
    j = np.arange(order + 1)
    power = j[None, :] - j[:, None]
    return _binomials(order) * np.where(power >= 0, float(-centre) ** np.maximum(power, 0), 0.0) / half_width**j


@functools.lru_cache(maxsize=32)
def _binomials(order: int) -> np.ndarray:
    """C(j, k) at [k, j] for 0 <= k, j <= order (0 for k > j)."""
    b = np.array([[comb(j, k) for j in range(order + 1)] for k in range(order + 1)], dtype=float)
    b.flags.writeable = False
    return b


def _product_terms(a_hi, a_lo, a_split, b_hi, b_lo):
    """a*b as a large part, exact, and the small parts, to be summed accurately."""
    big, err = dd.two_prod(a_hi, b_hi, a_split)
    return big, err + (a_hi * b_lo + a_lo * b_hi)


def refine(v_hi, v_lo, q, r_inv, t, y_hi, y_lo, c, mask=None):
    """Solve the augmented system for each of m right-hand sides.

    v_hi, v_lo: weighted raw design (n, p) in double-double; q (n, p) and r_inv
    (p, p), the inverse of r: QR of the weighted scaled basis; t (p, p): the
    conversion matrix; y (m, n) in double-double and c (m, p) in double: the
    right-hand sides, one per row. ``mask`` (m, p) of ones and zeros, when given,
    keeps each right-hand side to the leading powers it marks: the leading
    blocks of q, r_inv and t are those of the lower order, so one call solves
    nested orders side by side. Returns b (m, p) and the residual e (m, n),
    each as a double-double pair. The first solution is the plain double one;
    each refinement step then forms the residuals in double-double.
    """
    to_raw = (t @ r_inv).T
    from_raw = to_raw.T
    keep = 1.0 if mask is None else mask
    u = ((y_hi + y_lo) @ q - c @ from_raw) * keep
    b_hi, b_lo = u @ to_raw, np.zeros((y_hi.shape[0], v_hi.shape[1]))
    e_hi, e_lo = (y_hi + y_lo) - u @ q.T, np.zeros_like(y_hi)
    n, p = v_hi.shape
    rows = max(1024, _BLOCK // (y_hi.shape[0] * (p + 2)))  # rows per block keep temporaries small
    blocks = [(i, min(i + rows, n)) for i in range(0, n, rows)]
    pieces = []
    for i, j in blocks:
        vt_hi, vt_lo = np.ascontiguousarray(v_hi[i:j].T), np.ascontiguousarray(v_lo[i:j].T)
        pieces.append((v_hi[i:j][None], v_lo[i:j][None], tuple(a[None] for a in dd.split(v_hi[i:j])),
                       vt_hi[None], vt_lo[None], tuple(a[None] for a in dd.split(vt_hi))))
    previous = 1.0
    for _ in range(_MAX_STEPS):
        f_hi, f_lo = np.empty_like(e_hi), np.empty_like(e_hi)
        partial_hi, partial_lo = [c], [np.zeros_like(c)]
        for (i, j), (vh, vl, vs, vth, vtl, vts) in zip(blocks, pieces):
            # f = y - e - V b, a sum over the p terms of each row
            big, small = _product_terms(vh, vl, vs, b_hi[:, None, :], b_lo[:, None, :])
            f_hi[:, i:j], f_lo[:, i:j] = dd.accurate_sum(
                np.concatenate([y_hi[:, i:j, None], -e_hi[:, i:j, None], -big], axis=2),
                np.concatenate([y_lo[:, i:j, None], -e_lo[:, i:j, None], -small], axis=2),
            )
            # V' e, a sum over the rows of the block
            big, small = _product_terms(vth, vtl, vts, e_hi[:, None, i:j], e_lo[:, None, i:j])
            hi, lo = dd.accurate_sum(big, small)
            partial_hi.append(-hi)
            partial_lo.append(-lo)
        # g = c - V' e
        if len(partial_hi) == 2:
            g_hi, g_lo = dd.add(c, partial_lo[0], partial_hi[1], partial_lo[1])
        else:
            g_hi, g_lo = dd.accurate_sum(np.stack(partial_hi, axis=2), np.stack(partial_lo, axis=2))
        f = f_hi + f_lo
        u = (f @ q - ((g_hi + g_lo) * keep) @ from_raw) * keep
        db = u @ to_raw
        b_hi, b_lo = dd.add_double(b_hi, b_lo, db)
        e_hi, e_lo = dd.add_double(e_hi, e_lo, f - u @ q.T)
        scale = np.abs(b_hi).max(axis=1)
        scale[scale == 0] = 1.0
        step = float((np.abs(db).max(axis=1) / scale).max())
        # stop when converged, or when the next step (contraction step/previous) is below rounding
        if step <= _TOLERANCE or step * (step / previous) <= _ENOUGH:
            break
        previous = step
    return (b_hi, b_lo), (e_hi, e_lo)
