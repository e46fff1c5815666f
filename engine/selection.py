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

if TYPE_CHECKING:  # the calibration builds on this module
    from .calibration import Calibration


def stepdown_order(cal: Calibration, alpha: float) -> int:
    """Anderson's top-down procedure (module docstring): the highest k >= 2 whose step test is significant at
    alpha / (K - 1), else 1."""
    big_k = cal.max_order
    if big_k == 1:
        return 1
    per_test = alpha / (big_k - 1)
    steps = cal.step_tests()
    return next((k for k in range(big_k, 1, -1) if steps[k - 1].p_value < per_test), 1)


def forward_steps(cal: Calibration) -> list[FTest]:
    """Step test of x^k against order k-1, for k = 1..max_order."""
    return list(cal.step_tests())


def forward_order(cal: Calibration, alpha: float) -> int:
    """The order reached by adding terms while each step test is significant at alpha."""
    steps = forward_steps(cal)
    order = 1
    while order < cal.max_order and steps[order].p_value < alpha:
        order += 1
    return order


def criterion_values(cal: Calibration, rule: str) -> list[tuple[int, float]]:
    """(order, value) of the criterion ``rule`` (aicc, bic, press) for orders 1..max, where it is usable."""
    return [(k, v) for k, st in cal.all_stats().items()
            if k >= 1 and (v := getattr(st, rule)) == v and not math.isinf(v)]


def criterion_order(cal: Calibration, rule: str) -> int:
    """The order with the smallest usable criterion (the lowest on a tie), or 1 where none is usable."""
    values = criterion_values(cal, rule)
    return min(values, key=lambda kv: kv[1])[0] if values else 1


def choose_order(cal: Calibration, rule: str = DEFAULT_RULE, alpha: float = 0.05) -> OrderChoice:
    """The order ``rule`` picks for ``cal`` (its reason in words: ``words.order_reason``)."""
    return cal.choice(rule, alpha)


def pick(cal: Calibration, rule: str, alpha: float) -> int:
    """The order ``rule`` picks at ``alpha``; where the data fit exactly, that order (at least 1)."""
    if cal.exact_order is not None:
        return max(cal.exact_order, 1)
    if rule == "stepdown":
        return stepdown_order(cal, alpha)
    if rule == "forward":
        return forward_order(cal, alpha)
    return criterion_order(cal, rule)


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
