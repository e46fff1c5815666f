"""Choosing the order, always keeping the hierarchy x, x^2, ... below the chosen term.

Rules:
- "stepdown" (default): T. W. Anderson's top-down procedure (The choice of the degree of a polynomial
  regression as a multiple decision problem, Ann. Math. Statist. 33 (1962) 255-265; cited from memory).
  Starting at the max order K, test the highest term x^k of the order-k fit (its extra-sum-of-squares F
  against order k - 1, with order k's own residual); if it is not significant, drop it and test x^(k-1);
  stop at the first significant term. Each of the K - 1 tests (x^K .. x^2) is made at alpha / (K - 1):
  the procedure stops above the true order only if one of the tests of a zero term rejects, so by
  Bonferroni's inequality the probability of choosing too high an order is at most alpha (for a true
  polynomial of order <= K with independent normal errors: each test of a zero term is then an exact
  F(1, n - k - 1) test).
- "forward": add the next term while its extra-sum-of-squares F test against
  the model below is significant at alpha (Draper & Smith, Applied Regression Analysis,
  3rd ed., Wiley 1998, sec. 6.1 and 12.1). It too chooses too high an order with probability at most
  alpha (the exact test of the term just above the true order must reject), but it stops below a needed
  term that follows a non-significant one (a cubic behind a small quadratic term).
- "aicc", "bic", "press": the order 1..max with the smallest AICc, BIC or PRESS.
The lowest order offered is 1: a calibration needs a slope. When the data fit exactly at some order
(``Calibration.exact_order``), every rule picks it: the residual is rounding error and tests nothing.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

from .errors import OrderError
from .results import FTest, OrderChoice
from .validation import DEFAULT_RULE
from .words import fmt_p, term_name

if TYPE_CHECKING:  # the calibration builds on this module
    from .calibration import Calibration


def lack_of_fit_words(cal: Calibration, order: int, alpha: float = 0.05) -> str:
    """The lack-of-fit verdict of ``order`` in words; when it is significant, the lowest order up to the
    max order whose lack of fit is not, or else that no polynomial of order <= max order describes the data."""
    return _lack_of_fit(cal, order, alpha)[0]


def _lack_of_fit(cal: Calibration, order: int, alpha: float) -> tuple[str, bool]:
    """``lack_of_fit_words`` and whether they say that no order up to the max order describes the data."""
    lof = cal.stats(order).lack_of_fit
    if lof is None:
        return f"Lack of fit at order {order} cannot be tested (no replicated x or no spare distinct x).", False
    if lof.note:
        return f"Lack of fit at order {order}: {lof.note}.", False
    p = lof.test.p_value
    if p >= alpha:
        return f"Lack of fit at order {order}: not significant (p = {fmt_p(p)}).", False
    text = f"Lack of fit at order {order}: significant (p = {fmt_p(p)})"
    for k in range(order + 1, cal.max_order + 1):
        higher = cal.stats(k).lack_of_fit
        if higher is not None and not higher.test.p_value < alpha:  # nan (exact fit) counts as adequate
            found = f"p = {fmt_p(higher.test.p_value)}" if not higher.note else higher.note
            return (text + f": the curve misses the level means; order {k} is the lowest whose lack of fit is "
                    f"not significant ({found})."), False
    return (text + f": a polynomial of order <= {cal.max_order} does not describe these data; consider a "
            "narrower range or another model."), True


_ONLY_LINE = "only order 1 is considered, so no term was tested (give max_order to test a curve)."


def _p_values(p_values) -> str:
    return ", ".join(f"{term_name(k)} p = {fmt_p(p)}" for k, p in p_values)


def _stepdown(cal: Calibration, alpha: float):
    big_k = cal.max_order
    if big_k == 1:
        return 1, lambda: _ONLY_LINE
    per_test = alpha / (big_k - 1)
    steps = cal.step_tests()
    order = next((k for k in range(big_k, 1, -1) if steps[k - 1].p_value < per_test), 1)

    def words() -> str:
        dropped = [(k, steps[k - 1].p_value) for k in range(big_k, order, -1)]
        text = (f"the highest term is tested first, in its own fit, each at {alpha:g}/{big_k - 1} = {per_test:.3g}"
                if big_k > 2 else f"x^2 is tested in the quadratic fit at {alpha:g}")
        text += " (Anderson's top-down procedure)"
        if dropped:
            text += "; not significant: " + _p_values(dropped)
        if order > 1:
            text += f"; significant: {term_name(order)} p = {fmt_p(steps[order - 1].p_value)}"
        return text + "."

    return order, words


def forward_steps(cal: Calibration) -> list[FTest]:
    """Step test of x^k against order k-1, for k = 1..max_order."""
    return list(cal.step_tests())


def _forward(cal: Calibration, alpha: float):
    steps = forward_steps(cal)
    order = 1
    while order < cal.max_order and steps[order].p_value < alpha:
        order += 1

    def words() -> str:
        if cal.max_order == 1:
            return _ONLY_LINE
        if order < cal.max_order:
            stop = steps[order]
            text = (f"adding {term_name(order + 1)} to order {order} is not significant "
                    f"(F = {stop.statistic:.3g}, p = {fmt_p(stop.p_value)} >= {alpha:g})")
        else:
            text = f"every step up to the max order {cal.max_order} is significant"
        if order > 1:
            text = f"{term_name(order)} added significantly (p = {fmt_p(steps[order - 1].p_value)}); " + text
        return text + "."

    return order, words


_CRITERION_NAMES = {"aicc": "AICc", "bic": "BIC", "press": "PRESS"}


def _criterion(cal: Calibration, rule: str):
    name = _CRITERION_NAMES[rule]
    values = [(k, getattr(st, rule)) for k, st in cal.all_stats().items() if k >= 1]
    order, best = 1, None
    for k, v in values:  # the smallest usable value; the lowest order on a tie
        if v == v and not math.isinf(v) and (best is None or v < best):
            order, best = k, v
    if best is None:
        return 1, lambda: f"{name} is not available for any order; order 1 is the lowest offered."

    def words() -> str:
        others = ", ".join(f"order {k}: {v:.6g}" for k, v in values if k != order and v == v and not math.isinf(v))
        return f"smallest {name} at order {order} ({best:.6g}; {others})."

    return order, words


def choose_order(cal: Calibration, rule: str = DEFAULT_RULE, alpha: float = 0.05) -> OrderChoice:
    """The order ``rule`` picks for ``cal``, with the reason in words."""
    return cal.choice(rule, alpha)


def choose(cal: Calibration, rule: str, alpha: float) -> OrderChoice:
    exact = cal.exact_order
    if exact is not None:
        order = max(exact, 1)

        def words() -> str:
            return (f"the data fit exactly at order {exact} (the residual is at the rounding level of the "
                    "responses), so no F test applies" + ("; order 1 is the lowest offered." if exact < 1 else "."))
    elif rule == "stepdown":
        order, words = _stepdown(cal, alpha)
    elif rule == "forward":
        order, words = _forward(cal, alpha)
    else:
        order, words = _criterion(cal, rule)

    def reason() -> str:
        text = f"rule {rule}, alpha {alpha:g}, max order {cal.max_order}: {words()}"
        if exact is not None:
            return text
        lack, inadequate = _lack_of_fit(cal, order, alpha)
        if order == cal.max_order > 1 and not inadequate:
            lack += (f" The rule stopped at the max order {order}, so no higher order was tried; if a "
                     f"polynomial of order <= {order} does not describe these data, consider a narrower range "
                     "or another model.")
        return text + " " + lack

    return OrderChoice(order, rule, alpha, cal.max_order, reason())


def mandel_test(cal: Calibration) -> FTest:
    """Mandel's fitting test, linear against quadratic.

    F = (RSS_1 - RSS_2) / s_2^2 with (1, n - 3) degrees of freedom: the
    extra-sum-of-squares test of the quadratic term, as used in analytical
    calibration (J. Mandel, The Statistical Analysis of Experimental Data,
    Wiley 1964; ISO 8466-2 applies the same comparison, cited from memory). A
    significant F means the linear model is not adequate. F and p are nan when the quadratic fits
    exactly (``Calibration.exact_order`` <= 2): its residual is rounding error.
    """
    if cal.max_order < 2:
        raise OrderError("Mandel's test needs a calibration fitted to order 2 or more", argument="max_order")
    return cal.step_test(2)
