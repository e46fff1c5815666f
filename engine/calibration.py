"""One calibration: the data, one factorisation up to the max order, every nested fit.

The basis is z^0 .. z^K with z = (u - c)/h, u = x * 2^-ex (an exact power-of-two
scaling that keeps |u| < 1), c the midpoint and h the half-range of u, so that
z runs over [-1, 1]. Rows are scaled by sqrt(w) for weighted least squares.
One Householder QR, Z = QR, gives every order k <= K: the leading k+1 columns of
Q and block of R are the factorisation of order k, and the sequential (Type I)
sum of squares of term j is (Q'y)_j^2 (e.g. Seber & Lee, Linear Regression
Analysis, 2nd ed., Wiley 2003, sec. 4.2 and 11.1). Raw power coefficients b = T R^-1 Q'y, the
covariance diagonal of T R^-1 and the residuals y - QQ'y are refined as described in ``refine`` where
its error estimates miss the accuracy target. y is scaled by an
exact power of two as well, so that huge and tiny magnitudes neither overflow
nor underflow in sums of squares.
"""

from __future__ import annotations

import functools
import itertools
import math
from functools import cached_property

import numpy as np

from . import doubledouble as dd
from . import selection
from .distributions import f_sf
from .errors import DataError, OrderError
from .linalg import householder_qr, orthonormal_columns, powers, triangular_inverse
from .orders import OrderResults, prediction_sum_of_squares
from .refine import TARGET, PlainBounds, conversion_matrix, plain_bounds, refine, rss_bounds
from .results import FTest, LackOfFit, OrderChoice, OrderFit, OrderStats, SequentialRow, SequentialTable
from .validation import check_alpha, check_max_order, check_pair, check_rule, check_standards, check_whole
from .weighting import Weighting, weight_order

# a sum of squares of the (weighted) responses at or below n (ROUNDING * max |sqrt(w) y|)^2 is rounding
# error: about a thousand units in the last place of the largest response per point, far below the noise
# of any instrument
ROUNDING = 2.0**-42
# smallest |R_jj| / max |R_jj| of the scaled basis accepted as full rank (far below any real calibration)
_RANK_TOLERANCE = 1e-12
_LN2, _LN_2PI = math.log(2.0), math.log(2.0 * math.pi)
# what a calibration knows of its standards before any weights: shared by ``Calibration.reweighted``
_STANDARDS = ("x", "y", "by_x", "_level", "n_points", "n_distinct", "max_order", "_ex", "_ey", "_u", "_ys", "centre",
              "half_width", "dx_dz", "z")


def _frozen(a: np.ndarray) -> np.ndarray:
    """``a``, made read-only: the figures a calibration hands out stay as computed."""
    a.flags.writeable = False
    return a


def _own(a: np.ndarray, given) -> np.ndarray:
    """``a``, copied where it shares memory with the caller's ``given`` (which the caller may change later)."""
    return a.copy() if isinstance(given, np.ndarray) and np.may_share_memory(a, given) else a


class Calibration:
    """Points (x, y), optional weights, factorised once up to ``max_order``.

    ``max_order`` defaults to ``default_max_order(n, m)`` with m distinct x values and
    n points. ``weights`` is None, an array of positive numbers, or one of the
    schemes "1/x", "1/x^2", "1/y", "1/y^2".
    """

    def __init__(self, x, y, max_order=None, weights=None):
        checked_x, checked_y = check_pair(x, y)
        x, y = _own(checked_x, x), _own(checked_y, y)
        by_x, self._level, m = check_standards(x, y)  # each point's distinct x, for the pure error
        n = x.size
        weighting = Weighting(weights, x, y)
        k = check_max_order(max_order, n, m)
        self.x, self.y = _frozen(x), _frozen(y)
        self.by_x = by_x  # a stable sort of the points by x
        self.n_points, self.n_distinct, self.max_order = n, m, k
        # exact power-of-two scalings: |x 2^-ex| < 1, |y 2^-ey| < 1
        self._ex = math.frexp(max(-float(x[by_x[0]]), float(x[by_x[-1]])))[1]
        ymax = float(np.abs(y).max())
        self._ey = math.frexp(ymax)[1] if ymax > 0 else 0
        self._u = u = np.ldexp(x, -self._ex)
        self._ys = np.ldexp(y, -self._ey)
        umin, umax = float(u[by_x[0]]), float(u[by_x[-1]])
        self.centre = (umin + umax) / 2
        self.half_width = (umax - umin) / 2
        self.dx_dz = math.ldexp(self.half_width, self._ex)  # x per unit of z
        self.z = (u - self.centre) / self.half_width  # the standards' x in the scaled variable
        self._weigh(weighting)

    def reweighted(self, weights) -> Calibration:
        """The same standards and max order under ``weights`` (as ``Calibration(x, y, max_order, weights)``, with
        the standards checked and scaled once: the weighting schemes compared on one set of standards)."""
        other = object.__new__(Calibration)
        other.__dict__.update({name: self.__dict__[name] for name in _STANDARDS})
        other._weigh(Weighting(weights, self.x, self.y))
        return other

    def _weigh(self, weighting: Weighting) -> None:
        """Fit the placed standards under ``weighting``: the weights settled and the factorisation."""
        self.weighting = weighting
        basis = powers(self.z, self.max_order)
        if weighting.iterative:
            weighting.settle(self.x, self.y,
                             functools.partial(self._fitted_under, basis[:, : weight_order(self.max_order) + 1]))
        self.sqrt_w = np.sqrt(weighting.values) if weighting.weighted else np.ones(self.n_points)
        self._factorise(basis)
        self._stats: dict[int, OrderStats] = {}
        self._orders: dict[int, OrderResults] = {}
        self._choices: dict[tuple[str, float], OrderChoice] = {}
        self._refined_coefficients: dict[int, np.ndarray] = {}

    def _factorise(self, basis: np.ndarray) -> None:
        """Q and R of the weighted basis (refused where R is numerically singular), Q'y and R^-1."""
        weighted = self.weighting.weighted
        if weighted:
            basis *= self.sqrt_w[:, None]  # in place: the basis is not needed again
        self._q, self._r = householder_qr(basis)
        size = np.abs(self._r.diagonal())
        if not size.min() > _RANK_TOLERANCE * size.max():
            k, x = self.max_order, self.x
            raise DataError(
                f"the x values are too close together, compared with their range ({float(x.min())!r} to "
                f"{float(x.max())!r}), for order {k}: in double precision they do not give {k + 1} distinct "
                "positions; remove the outlying x or choose a lower max_order",
                argument="x",
            )
        self._yw = self._ys * self.sqrt_w if weighted else self._ys
        self._qty = self._q.T @ self._yw
        self._r_inv = triangular_inverse(self._r)

    @cached_property
    def _tss(self) -> float:
        """The (weighted) total sum of squares of the scaled y."""
        ys = self._ys
        if not self.weighting.weighted:
            d_mean = ys - ys.sum() / self.n_points
            return float((d_mean * d_mean).sum())
        sw2 = self.sqrt_w**2
        wy = sw2 * ys
        return float((sw2 * (ys - wy.sum() / sw2.sum()) ** 2).sum())

    @cached_property
    def _ss_pure(self) -> float:
        """The (weighted) pure-error sum of squares of the scaled y, about the mean at each distinct x."""
        ys, levels = self._ys, self._level
        if not self.weighting.weighted:
            d_level = ys - (np.bincount(levels, ys) / np.bincount(levels))[levels]
            return float((d_level * d_level).sum())
        sw2 = self.sqrt_w**2
        gmean = np.bincount(levels, sw2 * ys) / np.bincount(levels, sw2)
        return float((sw2 * (ys - gmean[levels]) ** 2).sum())

    @cached_property
    def _ss_rounding(self) -> float:
        """The size of a sum of squares that is rounding error (``ROUNDING``)."""
        return self.n_points * (ROUNDING * float(np.abs(self._yw).max())) ** 2

    @cached_property
    def _t(self) -> np.ndarray:
        """T, raw coefficients from scaled ones (``refine.conversion_matrix``)."""
        return conversion_matrix(self.centre, self.half_width, self.max_order)

    def _fitted_under(self, basis: np.ndarray, w: np.ndarray) -> np.ndarray:
        """Fitted y of the standards on ``basis`` under weights w (one QR; for ``Weighting.settle``)."""
        sw = np.sqrt(w)
        q = orthonormal_columns(basis * sw[:, None])
        return np.ldexp(q @ (q.T @ (self._ys * sw)) / sw, self._ey)

    # -- orders ---------------------------------------------------------------------------

    def resolve_order(self, order, name: str = "order") -> int:
        """Validate an order against this calibration's max order."""
        if type(order) is int and 0 <= order <= self.max_order:  # the usual case
            return order
        k = check_whole(order, name)
        if k < 0 or k > self.max_order:
            raise OrderError(
                f"{name} {k} is outside 0..{self.max_order}, the orders this calibration was fitted to",
                argument=name,
            )
        return k

    def order(self, order) -> OrderResults:
        """The results of ``order`` (0 .. max_order), made once: see ``OrderResults``."""
        k = self.resolve_order(order)
        if k not in self._orders:
            self._orders[k] = OrderResults(self, k)
        return self._orders[k]

    def choice(self, rule: str, alpha: float) -> OrderChoice:
        """The order ``rule`` picks at ``alpha`` (``selection.pick``), made once per rule and alpha; the reason
        in words is ``words.order_reason(cal, choice)``, written only where it is read."""
        key = check_rule(rule), check_alpha(alpha)
        if key not in self._choices:
            self._choices[key] = OrderChoice(selection.pick(self, *key), *key, self.max_order)
        return self._choices[key]

    # -- scaled-basis pieces used by the other modules --------------------------------------

    def scaled_x(self, x) -> np.ndarray:
        """z for raw x."""
        return (np.ldexp(np.asarray(x, dtype=float), -self._ex) - self.centre) / self.half_width

    def raw_x(self, z) -> np.ndarray:
        """raw x for z."""
        return np.ldexp(np.asarray(z, dtype=float) * self.half_width + self.centre, self._ex)

    @property
    def x_exponent(self) -> int:
        """e such that the basis works with x 2^-e (an exact scaling: |x 2^-e| < 1)."""
        return self._ex

    @property
    def y_exponent(self) -> int:
        """e such that the factorisation works with y 2^-e (an exact scaling: |y 2^-e| < 1)."""
        return self._ey

    def scaled_coefficients(self, order: int) -> np.ndarray:
        """a with fitted y = 2^e sum_j a_j z^j (e = ``y_exponent``)."""
        p = order + 1
        return self._r_inv[:p, :p] @ self._qty[:p]

    def scaled_residual_sd(self, order: int) -> float:
        """The residual SD of ``order`` times 2^-e (e = ``y_exponent``): its square neither
        overflows nor underflows, whatever the magnitude of y."""
        return math.sqrt(self._rss(order) / (self.n_points - order - 1))

    def orthonormal_basis(self, order: int) -> np.ndarray:
        """Q of the (weighted) scaled basis up to ``order``: orthonormal columns spanning 1, z, ..., z^order."""
        return self._q[:, : order + 1]

    def r_factor_inverse(self, order: int) -> np.ndarray:
        return self._r_inv[: order + 1, : order + 1]

    def leverage(self, order: int) -> np.ndarray:
        """The leverages of ``order``, made afresh (``OrderResults.leverage`` keeps them)."""
        return _frozen(next(itertools.islice(self._running_leverages(), order, None)).copy())

    def _running_leverages(self):
        """The leverages of orders 0, 1, .., max_order in turn, the running row sums of squares of Q, in one array
        updated in place (so that no order's leverages are kept that are not asked for)."""
        h = np.square(self._q[:, 0])
        yield h
        for k in range(1, self.max_order + 1):
            h += self._q[:, k] ** 2
            yield h

    def scaled_residuals(self, order: int) -> np.ndarray:
        """sqrt(w) (y - fitted) times 2^-e (e fixed per calibration, y scaled into [-1, 1]): for statistics
        that do not depend on the scale of the residuals, whose squares then neither overflow nor underflow."""
        return self._residuals_scaled(order)

    def weighted_residuals(self, order: int) -> np.ndarray:
        """sqrt(w) (y - fitted) in the units of y."""
        return np.ldexp(self._residuals_scaled(order), self._ey)

    # -- raw power solution: plain, refined where the plain one may miss the target ----------

    def _refine_fits(self, orders: list[int]) -> np.ndarray:
        """The refined scaled weighted residuals of ``orders`` (one row each); their refined raw coefficients
        are kept for ``raw_solution``. One call: each order is the right-hand side y with a mask that keeps
        its solution to its own powers; the leading blocks of Q, R^-1 and T are those of the lower order."""
        p, m = max(orders) + 1, len(orders)
        shape = (m, self.n_points)
        if not self.weighting.weighted:
            rhs_hi, rhs_lo = np.broadcast_to(self._ys, shape), None
        else:
            rhs_hi, rhs_lo = (np.broadcast_to(a, shape) for a in dd.two_prod(self._ys, self.sqrt_w))
        (b_hi, b_lo), (e_hi, e_lo) = refine(self._u, self._sqrt_w_or_none, self._q[:, :p], self._r_inv[:p, :p],
                                            self._t[:p, :p], rhs_hi, rhs_lo, np.zeros((m, p)), np.tri(p)[orders])
        for k, b in zip(orders, b_hi + b_lo):
            self._refined_coefficients[k] = _frozen(b[: k + 1])
        return e_hi + e_lo

    @property
    def _sqrt_w_or_none(self):
        """sqrt(w), or None unweighted (the refinement then makes the raw design without it)."""
        return self.sqrt_w if self.weighting.weighted else None

    @cached_property
    def _residuals_and_bounds(self) -> tuple[np.ndarray, np.ndarray]:
        """Row k: the scaled weighted residuals of order k, y - Q_k Q_k'y, refined for the orders whose
        residual sum of squares may miss the target; and the error estimates of the plain sums of squares
        (``refine.rss_bounds``)."""
        rows = np.empty((self.max_order + 1, self.n_points))
        e = self._yw
        for k in range(self.max_order + 1):
            rows[k] = e = e - self._q[:, k] * self._qty[k]
        bounds = rss_bounds(np.einsum("ij,ij->i", rows, rows), math.sqrt(self._yw @ self._yw))
        worse = (~(bounds <= TARGET)).nonzero()[0].tolist()
        if worse:
            rows[worse] = self._refine_fits(worse)
        return _frozen(rows), bounds

    @property
    def _residual_rows(self) -> np.ndarray:
        return self._residuals_and_bounds[0]

    def plain_bounds(self, order: int) -> PlainBounds:
        """Error estimates of ``order``'s plain solution (``refine.plain_bounds``, ``refine.rss_bounds``):
        the figures whose estimate is above ``refine.TARGET`` are refined."""
        p = order + 1
        return PlainBounds(*plain_bounds(self._r[:p, :p], self._r_inv[:p, :p], self._t[:p, :p],
                                         self.scaled_coefficients(order), self._rss(order), self.n_points),
                           float(self._residuals_and_bounds[1][order]))

    def raw_solution(self, order: int) -> tuple[np.ndarray, np.ndarray]:
        """Coefficients of ``order`` in raw powers of x, times 2^(j e_x - e_y) for the power j (``x_exponent``,
        ``y_exponent``): T a; and the diagonal of (V'WV)^-1 in the scaled raw powers (u = x 2^-e_x): the row sums
        of squares of T R^-1. Each is refined where its estimate in ``plain_bounds`` is above the target (the
        covariance on the augmented system with y = 0 and c = -I, ``refine``)."""
        p = order + 1
        bounds = self.plain_bounds(order)
        if order in self._refined_coefficients:
            coefficients = self._refined_coefficients[order]
        elif bounds.coefficients <= TARGET:
            coefficients = _frozen(self._t[:p, :p] @ self.scaled_coefficients(order))
        else:
            self._refine_fits([order])
            coefficients = self._refined_coefficients[order]
        if bounds.variances <= TARGET:
            m = self._t[:p, :p] @ self._r_inv[:p, :p]
            return coefficients, _frozen(np.einsum("ij,ij->i", m, m))
        (b_hi, b_lo), _ = refine(self._u, self._sqrt_w_or_none, self._q[:, :p], self._r_inv[:p, :p],
                                 self._t[:p, :p], None, None, -np.eye(p))
        return coefficients, _frozen(np.maximum(np.diag(b_hi) + np.diag(b_lo), 0.0))

    # -- statistics ---------------------------------------------------------------------------

    def _lack_of_fit_tests(self, tests: dict) -> list[LackOfFit | None]:
        """The lack-of-fit split and F test of every order (None where it cannot be tested)."""
        if "lack of fit" not in tests:
            return [None] * (self.max_order + 1)
        ey2 = 2 * self._ey
        pure, df_pe = dd.ldexp(self._ss_pure, ey2), self.n_points - self.n_distinct
        exact = self.exact_order
        identical = self._ss_pure <= self._ss_rounding
        return [LackOfFit(dd.ldexp(ss, ey2), test.df_num, pure, df_pe, test,
                          exact if exact is not None and k >= exact else None, identical)
                if test.df_num >= 1 else None
                for k, (ss, test) in enumerate(zip(self._ss_lack_of_fit.tolist(), tests["lack of fit"]))]

    @cached_property
    def exact_order(self) -> int | None:
        """The lowest order whose residual sum of squares is rounding error of the responses (at most
        n (2^-42 max |sqrt(w) y|)^2), or None: at and above it the data fit exactly, and no F test with
        that residual (or a pure error that small) in its denominator applies."""
        exact = (self._all_rss <= self._ss_rounding).nonzero()[0]
        return int(exact[0]) if exact.size else None

    def fits_exactly(self, order: int) -> bool:
        """The residuals of ``order`` are rounding error (``exact_order``): no statistic rests on their scatter."""
        return self.exact_order is not None and order >= self.exact_order

    @cached_property
    def _ss_lack_of_fit(self) -> np.ndarray:
        return np.maximum(self._all_rss - self._ss_pure, 0.0)

    @cached_property
    def _f_tests(self) -> dict[str, tuple[FTest, ...]]:
        """Every F test of every order, from one vectorised pass: "overall" (orders 0..K: the regression
        against the mean; order 0 has none), "lack of fit" (orders 0..K; only with replicates), "step"
        (x^k against order k - 1, k = 1..K) and "sequential" (x^k in the Type I table of order K)."""
        n, big_k = self.n_points, self.max_order
        rss, terms = self._all_rss.tolist(), (self._qty[1:] ** 2).tolist()
        df = list(range(n - 1, n - big_k - 2, -1))  # residual df of orders 0..K
        # numerator SS and df, residual SS and df of each test, family after family
        num = [self._tss - r for r in rss] + terms + terms
        dfn = [1, *range(1, big_k + 1)] + [1] * (2 * big_k)
        den = rss + rss[1:] + [rss[big_k]] * big_k
        dfd = df + df[1:] + [df[big_k]] * big_k
        sizes = {"overall": big_k + 1, "step": big_k, "sequential": big_k}
        df_pe = n - self.n_distinct
        if df_pe >= 1:
            num += self._ss_lack_of_fit.tolist()
            dfn += [self.n_distinct - k - 1 for k in range(big_k + 1)]
            den += [self._ss_pure] * (big_k + 1)
            dfd += [df_pe] * (big_k + 1)
            sizes["lack of fit"] = big_k + 1
        num, dfn, den, dfd = (np.array(v) for v in (num, dfn, den, dfd))
        with np.errstate(divide="ignore", invalid="ignore"):  # inf, or nan for 0/0
            f = (num / dfn) / (den / dfd)
        f[den <= self._ss_rounding] = math.nan  # a denominator of rounding error tests nothing
        tests = list(map(FTest._make, zip(f.tolist(), dfn.tolist(), dfd.tolist(),
                                          f_sf(f, np.maximum(dfn, 1), dfd).tolist())))
        out, i = {}, 0
        for name, size in sizes.items():
            out[name] = tuple(tests[i: i + size])
            i += size
        return out

    def _residuals_scaled(self, order: int) -> np.ndarray:
        return self._residual_rows[order]

    def _rss(self, order: int) -> float:
        return float(self._all_rss[order])

    @cached_property
    def _all_rss(self) -> np.ndarray:
        e = self._residual_rows
        return np.einsum("ij,ij->i", e, e)

    def stats(self, order) -> OrderStats:
        """Goodness-of-fit figures of ``order`` (0 .. max_order)."""
        k = self.resolve_order(order)
        if not self._stats:
            self._all_stats()
        return self._stats[k]

    def all_stats(self) -> dict[int, OrderStats]:
        """``stats`` of every order 0 .. max_order, by order (the same objects; do not change the dict)."""
        if not self._stats:
            self._all_stats()
        return self._stats

    def _all_stats(self) -> None:
        """OrderStats of every order at once (formulas in ``results.OrderStats``)."""
        n, big_k = self.n_points, self.max_order
        rss, e = self._all_rss, self._residual_rows
        orders = np.arange(big_k + 1)
        df = n - orders - 1
        press = np.array([prediction_sum_of_squares(ek, hk) for ek, hk in zip(e, self._running_leverages())])
        tests = self._f_tests
        lack = self._lack_of_fit_tests(tests)
        ey2 = 2 * self._ey
        log_w = float(np.log(self.weighting.values).sum()) if self.weighting.weighted else 0.0
        made = {}  # kept only when every order succeeds, so that an overflow leaves no half-filled cache
        for k, (r, d, pr, overall) in enumerate(zip(rss.tolist(), df.tolist(), press.tolist(), tests["overall"])):
            npar = k + 2
            log_rss = (math.log(r) if r > 0 else -math.inf) + ey2 * _LN2
            llf = -0.5 * n * (_LN_2PI + log_rss - math.log(n) + 1) + 0.5 * log_w
            aicc = -2 * llf + 2 * npar + (2 * npar * (npar + 1) / (n - npar - 1) if n - npar - 1 > 0 else math.nan)
            r2 = self.r_squared(k)
            made[k] = OrderStats(
                order=k, n_points=n, df_resid=d, rss=dd.ldexp(r, ey2),
                residual_sd=math.ldexp(self.scaled_residual_sd(k), self._ey),
                r_squared=r2, adj_r_squared=1.0 - (1.0 - r2) * (n - 1) / d,
                press=dd.ldexp(pr, ey2), predicted_r_squared=1.0 - pr / self._tss if self._tss else math.nan,
                aicc=aicc, bic=-2 * llf + npar * math.log(n),
                overall=overall if k >= 1 else None,
                lack_of_fit=lack[k],
            )
        self._stats = made

    def r_squared(self, order) -> float:
        """R^2 = 1 - RSS / TSS of ``order``; nan where the weighted TSS is 0 (weights near 1e-322 underflow)."""
        return 1.0 - self._rss(self.resolve_order(order)) / self._tss if self._tss else math.nan

    def fit(self, order) -> OrderFit:
        """Coefficients of ``order`` in raw powers of x, with standard errors, t and p."""
        return self.order(order).fit

    def sequential_table(self) -> SequentialTable:
        """Type I ANOVA of the max-order model: each term against the max-order residual."""
        return self._sequential

    @cached_property
    def _sequential(self) -> SequentialTable:
        k = self.max_order
        st = self.stats(k)
        ey2 = 2 * self._ey
        rows = tuple(SequentialRow(j, dd.ldexp(ss, ey2), test)
                     for j, (ss, test) in enumerate(zip((self._qty[1:] ** 2).tolist(), self._f_tests["sequential"]), 1))
        return SequentialTable(k, rows, st.rss, st.df_resid, st.lack_of_fit, dd.ldexp(self._tss, ey2),
                               self.n_points - 1)

    def step_test(self, order: int) -> FTest:
        """Extra-sum-of-squares F test of the term x^order against the model of order - 1."""
        k = self.resolve_order(order)
        if k < 1:
            raise OrderError("order must be at least 1 for a step test", argument="order")
        return self._f_tests["step"][k - 1]

    def step_tests(self) -> tuple[FTest, ...]:
        """``step_test`` of every order 1 .. max_order."""
        return self._f_tests["step"]
