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

The refinement runs only where ``plain_bounds`` says that the plain double solution (b = T a with
a = R^-1 Q'y, residuals y - QQ'y, (V'V)^-1 = (T R^-1)(T R^-1)') may miss ``TARGET``.

The corrections are exact only for the raw basis the solver sees, Q (T R^-1)^-1, which differs from V by
rounding in z, in T and in the QR factorisation, and far from zero the raw problem magnifies that difference:
the iteration matrix I - (solver) (augmented matrix), measured in exact rational arithmetic relative to b, has
norm 1.5e-3 for a cubic 1e4 half-ranges from zero, 2.8 at 1e5 and 1.9e7 for a quartic in [1e6, 1e6 + 10],
where the first correction added 6e-7 relative error to coefficients that were within 1e-14. Refinement
converges only when that norm is below 1, and then the ratio of successive corrections estimates it (N. J.
Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., SIAM 2002, ch. 12, recalled from memory; the
ratio test with threshold 1/2 is that of J. Demmel et al., "Error bounds from extra-precise iterative
refinement", ACM TOMS 32 (2006) 325-351, recalled from memory). So ``refine`` keeps a right-hand side's
refined solution only where its corrections contract (ratio at most ``_CONTRACTION``), and otherwise returns
the plain solution, whose own estimate still holds.
"""

from __future__ import annotations

from math import comb, sqrt
from typing import NamedTuple

import numpy as np

from . import doubledouble as dd

# relative error every reported figure keeps: the project's requirement of LRE >= 12 (log relative
# error against the NIST StRD certified values, ``degreewise validate``)
TARGET = 1e-12
_UNIT = 2.0**-53  # unit roundoff of double
_MAX_STEPS = 10
_TOLERANCE = 2.0**-100
_ENOUGH = 2.0**-64
_CONTRACTION = 0.5  # the largest ratio of successive steps taken as contracting (``refine``)
_BLOCK = 2**15  # elements per temporary array (m, p, rows) in the residual computation: a block stays in cache


def conversion_matrix(centre: float, half_width: float, order: int) -> np.ndarray:
    """T with raw coefficients b = T a for sum_j a_j ((x - centre)/half_width)^j.

    T_kj = C(j, k) (-centre)^(j-k) / half_width^j for k <= j (binomial expansion).
    """
    j = np.arange(order + 1)
    binomials = np.array([[comb(jj, k) for jj in j.tolist()] for k in j.tolist()], dtype=float)  # 0 for k > j
    return binomials * float(-centre) ** np.maximum(j[None, :] - j[:, None], 0) / half_width**j


class PlainBounds(NamedTuple):
    """First-order estimates of the largest relative error of the plain solution of one order."""

    coefficients: float  # over the raw coefficients b_j (``plain_bounds``)
    variances: float  # over the diagonal of (V'WV)^-1 (``plain_bounds``)
    rss: float  # of the residual sum of squares (``rss_bounds``)


def plain_bounds(r: np.ndarray, r_inv: np.ndarray, t: np.ndarray, a: np.ndarray, rss: float,
                 n: int) -> tuple[float, float]:
    """Error estimates of the plain coefficients and covariance diagonal of one order from its R (p, p) of
    the scaled basis Z (n, p), R^-1, the conversion T, a = R^-1 Q'y and the residual sum of squares.

    With u = 2^-53, eps = u sqrt(n) and kappa = ||Z||_2 ||Z^+||_2 = sigma_max / sigma_min of R (the singular
    values of a p x p matrix, p <= 11):

    - scaled coefficients, normwise: ||da|| <= eta ||a||, eta = eps kappa (2 + (kappa + 1) ||r|| /
      (||Z||_2 ||a||)) (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., SIAM 2002,
      Thm 20.1, Wedin's bound, with Householder QR's backward error of Thm 20.3);
    - raw coefficients b = T a: |db_j| <= eta ||a|| (|T| 1)_j + p u (|T| |a|)_j (the second term: rounding
      of the product, Higham sec. 3.5), relative to |b_j|: this is where the cancellation of centring
      (|T| |a| against |T a|) shows;
    - (V'WV)^-1 = M M', M = T R^-1: ||dR^-1|| <= (eps + p u) kappa ||R^-1||: eps kappa from the
      perturbation of R, p u kappa from back substitution of the p x p triangle on the identity, whose error
      does not grow with n (Higham Thm 8.5, with ch. 14), so |dM| <= (eps + p u) kappa ||R^-1||_2 (|T| 1) 1'
      + p u |T| |R^-1| and |d(MM')_jj| <= 2 (|M| |dM|')_jj.

    Higham's constants, gamma_cmn for n rows, are replaced by sqrt(n) (Wilkinson's rule of thumb that
    rounding errors add up like the square root of their worst case, Higham sec. 2.8); section and theorem
    numbers are recalled from memory. Against exact or refined solutions (tests/test_refine_bound.py, the
    NIST StRD data, a million points, 578 random calibrations) the errors stayed below these estimates by
    factors of 3.6 (covariance diagonals, where both are near 1e-15) to over 1000.
    A zero coefficient gives an infinite or nan estimate, so that the refinement runs.
    """
    p = a.size
    eps = _UNIT * sqrt(n)
    sv = np.linalg.svd(r, compute_uv=False)
    r_norm, inv_norm, a_norm = float(sv[0]), float(1 / sv[-1]), np.linalg.norm(a)
    kappa = r_norm * inv_norm
    abs_t = np.abs(t)
    t_rows = abs_t.sum(axis=1)
    m = t @ r_inv
    dm = ((eps + p * _UNIT) * kappa * inv_norm) * t_rows[:, None] + p * _UNIT * (abs_t @ np.abs(r_inv))
    with np.errstate(divide="ignore", invalid="ignore"):
        eta = eps * kappa * (2 + (kappa + 1) * sqrt(rss) / (r_norm * a_norm))
        coefficients = (eta * a_norm * t_rows + p * _UNIT * (abs_t @ np.abs(a))) / np.abs(t @ a)
        variances = 2 * (np.abs(m) * dm).sum(axis=1) / (m * m).sum(axis=1)
    return float(coefficients.max()), float(variances.max())


def rss_bounds(rss: np.ndarray, y_norm: float) -> np.ndarray:
    """Estimates of the relative errors of residual sums of squares ||y - QQ'y||^2 in double, one per order:
    4 u ||y|| / ||r||. To first order the sum of squares changes by 2 r'(dy - dZ a) under perturbations of y
    and Z, with ||dy|| <= u ||y|| and ||dZ a|| <= u ||Z a|| <= u ||y|| (r is orthogonal to the columns of Z,
    so errors of the solution itself enter only to second order; Golub and Van Loan, Matrix Computations,
    3rd ed., sec. 5.3.7, recalled from memory). No dimension constant: measured errors at a million points
    stay below this estimate."""
    with np.errstate(divide="ignore", invalid="ignore"):  # a nan estimate (inf / inf) counts as missing the target
        return 4 * _UNIT * y_norm / np.sqrt(rss)


def _pieces(hi: np.ndarray, lo):
    """A double-double array (hi, lo) and the Dekker split of hi, for ``_products``; lo None stands for
    zeros."""
    return (hi, lo, *dd.split(hi))


def _products(a, b):
    """Terms a * b of two double-double arrays given as ``_pieces``: the rounded products and the
    small parts (their exact rounding errors, Dekker's TwoProduct, plus hi*lo + lo*hi), to be summed
    accurately."""
    a_hi, a_lo, a_big, a_small = a
    b_hi, b_lo, b_big, b_small = b
    big = a_hi * b_hi
    small = a_big * b_big
    small -= big
    small += a_big * b_small
    small += a_small * b_big
    small += a_small * b_small
    if b_lo is not None:
        small += a_hi * b_lo
    small += a_lo * b_hi
    return big, small


def _high_parts(big, sigma):
    """The error-free extraction of ExtractVector (S. M. Rump, T. Ogita and S. Oishi, "Accurate
    floating-point summation part I: faithful rounding", SIAM J. Sci. Comput. 31 (2008) 189-224):
    q = (sigma + big) - sigma, returned, and big - q left in ``big``, both exact.

    With sigma from ``_sigma`` for a sum of n terms, the q of those terms sum exactly in any order;
    what is left, at most 2^(M - 53) of the largest term each, is summed in plain double, so the
    error of the sum is about n^2 2^(M - 106) of the largest term."""
    q = sigma + big
    q -= sigma
    big -= q
    return q


def _sigma(top: np.ndarray, count: int) -> np.ndarray:
    """2^(M + ceil(log2 top)) with 2^M >= count + 2: ExtractVector's constant for a sum of ``count``
    terms of magnitude at most ``top`` (an upper bound will do)."""
    return np.ldexp(1.0, np.frexp(top)[1] + (count + 1).bit_length())


def _design(u: np.ndarray, sqrt_w, p: int):
    """Rows of the weighted raw design V, transposed: (p, rows) double-double powers u^0 .. u^(p-1)
    (``dd.powers``), times sqrt(w) when ``sqrt_w`` is given, as ``_pieces``."""
    hi, lo = dd.powers(u, p - 1)
    hi, lo = hi.T, lo.T  # (p, rows), each power a contiguous row
    if sqrt_w is not None:
        hi, lo = dd.mul_double(hi, lo, sqrt_w)
    return _pieces(hi, lo)


def _blocks(n: int, m: int, p: int) -> list[slice]:
    """Slices of the n rows that keep each temporary (m, p, rows) array near ``_BLOCK`` elements."""
    rows = max(1024, _BLOCK // (m * p))
    return [slice(i, min(i + rows, n)) for i in range(0, n, rows)]


def _residuals(u, sqrt_w, q, y_hi, y_lo, c, b, e):
    """The residuals f = y - e - V b and g = c - V'e of the augmented system, each rounded once to double
    (``refine``), and Q'f (m, p); b and e as (hi, lo) with lo None for zeros (the first step), y_hi and y_lo
    None for zeros. Row block by row block, V's rows made afresh in each (``_design``)."""
    (b_hi, b_lo), (e_hi, e_lo) = b, e
    m, p = b_hi.shape
    blocks = _blocks(u.size, m, p)
    ones_p, ones_n = np.ones(p), np.ones(blocks[0].stop)  # the first block is the largest
    y_top = np.zeros(m) if y_hi is None else np.abs(y_hi).max(axis=1)
    e_top = np.abs(e_hi).max(axis=1)
    f = np.empty_like(e_hi)
    qf = np.zeros((m, p))
    nb = _pieces(-b_hi[:, :, None], None if b_lo is None else -b_lo[:, :, None])
    g_sum = None  # -V'e, summed over the blocks
    for s in blocks:
        v = _design(u[s], None if sqrt_w is None else sqrt_w[s], p)
        v_max = np.abs(v[0]).max(axis=1)
        # f = y - e - V b: the p terms of each row plus y and -e; sigma bounds every term
        big, small = _products(v, nb)
        sigma = _sigma(np.maximum(np.maximum(y_top, e_top), np.abs(b_hi) @ v_max), p + 2)[:, None]
        high = _high_parts(big, sigma[:, :, None])
        big += small
        e_part = e_hi[:, s]
        q_e = (sigma - e_part) - sigma
        rest = ones_p @ big - (e_part + q_e)
        if y_hi is not None:
            y_part = y_hi[:, s]
            q_y = (sigma + y_part) - sigma
            rest += y_part - q_y
            q_e += q_y
        if y_lo is not None:
            rest += y_lo[:, s]
        if e_lo is not None:
            rest -= e_lo[:, s]
        # the high parts sum exactly; adding the small rest rounds once (the correction needs f in double)
        f[:, s] = f_part = (ones_p @ high + q_e) + rest
        qf += f_part @ q[s]
        # -V'e over the rows of the block
        ones = ones_n[: s.stop - s.start]
        big, small = _products(v, _pieces(-e_part[:, None], None if e_lo is None else -e_lo[:, None, s]))
        high = _high_parts(big, _sigma(e_top * float(v_max.max()), ones.size)[:, None, None])
        big += small
        part = (high @ ones, big @ ones)  # the exact sum of the high parts, the rest
        g_sum = part if g_sum is None else dd.add(*dd.two_sum(*g_sum), *dd.two_sum(*part))
    # g = c - V'e in double: c and the high part of -V'e cancel exactly where they nearly cancel
    return f, (g_sum[0] + c) + g_sum[1], qf


def _correct(e_hi, e_lo, f, step, q, low_only: bool):
    """e += f - Q step (the residuals' correction; ``step`` (m, p) in the scaled basis) in place, in double-double,
    block by block; ``low_only``: the correction is far below e and goes to its low parts (the last step)."""
    for s in _blocks(f.shape[1], *step.shape):
        de = f[:, s] - step @ q[s].T
        if low_only:
            e_lo[:, s] += de
        else:
            e_hi[:, s], e_lo[:, s] = dd.add_double(e_hi[:, s], e_lo[:, s], de)


def refine(u, sqrt_w, q, r_inv, t, y_hi, y_lo, c, mask=None):
    """Solve the augmented system for each of m right-hand sides.

    u (n,): the scaled x (the raw design is V_ik = sqrt(w_i) u_i^k, made in double-double a block of rows at a
    time, ``_design``); sqrt_w (n,) or None for unweighted; q (n, p) and r_inv (p, p), the inverse of r: QR of
    the weighted scaled basis; t (p, p): the conversion matrix; y (m, n) in double-double (y_lo None for
    zeros; y_hi None: y = 0) and c (m, p) in double: the right-hand sides, one per row. ``mask`` (m, p) of
    ones and zeros, when given, keeps each right-hand side to the leading powers it marks: the leading
    blocks of q, r_inv and t are those of the lower order, so one call solves
    nested orders side by side. Returns b (m, p) and the residual e (m, n),
    each as an unevaluated sum hi + lo (the last, tiny correction is added to
    the low parts only: callers round hi + lo). The first solution is the plain
    double one; each refinement step then forms the residuals f = y - e - V b
    and g = c - V'e from the exact products V_ik b_k and V_ik e_i (as (m, p, rows)
    arrays, in blocks of rows) by one extraction pass (``_high_parts``): the
    high parts sum exactly in any order, so sums are taken as matrix products
    with vectors of ones, and each residual is rounded once to double (all the
    correction needs), while b and e accumulate in double-double.

    Each step's size is max |db| / max |b| per right-hand side, and the ratio of successive sizes measures the
    contraction. A right-hand side has converged when a step is below 2^-100 or, with a measured ratio of at
    most ``_CONTRACTION``, the next step (ratio times this one) is below 2^-64; the iteration stops when every
    one has, or after ``_MAX_STEPS``. A right-hand side that has not converged keeps its refined solution only
    if every step after the first stayed within ``_CONTRACTION`` of the first (the corrections shrank and never
    grew back: the iteration reached its own limiting accuracy, below the plain solution's error, which the
    first step measures); otherwise its corrections did not contract, and the plain solution is returned.
    """
    to_raw = (t @ r_inv).T
    from_raw = to_raw.T
    keep = 1.0 if mask is None else mask
    m, p = c.shape
    y = np.zeros((m, q.shape[0])) if y_hi is None else y_hi if y_lo is None else y_hi + y_lo
    start = (y @ q - c @ from_raw) * keep  # the plain solution in the scaled basis
    plain = start @ to_raw
    b_hi, b_lo = plain.copy(), np.zeros((m, p))
    e_hi, e_lo = y - start @ q.T, None
    previous = None  # each right-hand side's last step, once one is taken
    for _ in range(_MAX_STEPS):
        f, g, qf = _residuals(u, sqrt_w, q, y_hi, y_lo, c, (b_hi, None if previous is None else b_lo), (e_hi, e_lo))
        step_u = (qf - (g * keep) @ from_raw) * keep
        db = step_u @ to_raw
        scale = np.abs(b_hi).max(axis=1)
        scale[scale == 0] = 1.0
        step = np.abs(db).max(axis=1) / scale
        if previous is None:
            first_step, largest, converged = step, np.zeros_like(step), step <= _TOLERANCE
        else:
            largest = np.maximum(largest, step)
            with np.errstate(divide="ignore", invalid="ignore"):
                ratio = step / previous  # the measured contraction
            converged |= (step <= _TOLERANCE) | ((ratio <= _CONTRACTION) & (step * ratio <= _ENOUGH))
        if e_lo is None:
            e_lo = np.zeros_like(e_hi)
        if converged.all():
            # the last correction, far below b and e, only needs adding to their low parts
            b_lo += db
            _correct(e_hi, e_lo, f, step_u, q, low_only=True)
            break
        b_hi, b_lo = dd.add_double(b_hi, b_lo, db)
        _correct(e_hi, e_lo, f, step_u, q, low_only=False)
        previous = step
    # where the corrections did not contract they were no better than the plain solution's error
    astray = ~(converged | (largest <= _CONTRACTION * first_step))
    if astray.any():
        b_hi[astray], b_lo[astray] = plain[astray], 0.0
        e_hi[astray], e_lo[astray] = y[astray] - start[astray] @ q.T, 0.0
    return (b_hi, b_lo), (e_hi, e_lo)
