"""Choosing the order, always keeping the hierarchy x, x^2, ... below the chosen term.

Rules:
- "seqf": fit the max order; keep the highest order whose own term is
  significant in the sequential (Type I) table, with every lower term.
- "forward": add the next term while its extra-sum-of-squares F test against
  the model below is significant (Draper & Smith, Applied Regression Analysis,
  3rd ed., Wiley 1998, sec. 6.1 and 12.1).
- "aicc", "bic", "press": the order 1..max with the smallest AICc, BIC or PRESS.
The lowest order offered is 1: a calibration needs a slope.
"""

from __future__ import annotations

import math

from .calibration import Calibration
from .errors import OptionError, OrderError
from .results import FTest, OrderChoice

RULES = ("seqf", "forward", "aicc", "bic", "press")


def check_alpha(alpha, name: str = "alpha") -> float:
    """alpha must lie strictly between 0 and 0.5."""
    try:
        a = float(alpha)
    except (TypeError, ValueError):
        raise OptionError(f"{name} must be a number between 0 and 0.5, not {alpha!r}", argument=name) from None
    if not 0 < a < 0.5:
        raise OptionError(
            f"{name} must be between 0 and 0.5 (for example 0.05), not {alpha!r}", argument=name
        )
    return a


def check_rule(rule) -> str:
    key = str(rule).strip().lower()
    if key not in RULES:
        raise OptionError(
            f"rule '{rule}' is not known; use one of " + ", ".join(f"'{r}'" for r in RULES),
            argument="rule",
        )
    return key


def term_name(j: int) -> str:
    return "x" if j == 1 else f"x^{j}"


def fmt_p(p: float) -> str:
    """A p-value in two significant digits."""
    if p != p:
        return "n/a"
    return f"{p:.2g}" if p >= 1e-4 else f"{p:.1e}"


def _lack_of_fit_words(cal: Calibration, order: int, alpha: float) -> str:
    lof = cal.stats(order).lack_of_fit
    if lof is None:
        return " Lack of fit cannot be tested (no replicated x or no spare distinct x)."
    verdict = "significant: the curve misses the level means" if lof.test.p_value < alpha else "not significant"
    return f" Lack of fit at order {order}: {verdict} (p = {fmt_p(lof.test.p_value)})."


def _seqf(cal: Calibration, alpha: float):
    table = cal.sequential_table()
    sig = [row.term for row in table.terms if row.test.p_value < alpha]
    order = max(sig) if sig else 1

    def words() -> str:
        above = [row for row in table.terms if row.term > order]
        own = table.terms[order - 1].test.p_value
        if sig:
            text = (f"{term_name(order)} is the highest term significant in the sequential table "
                    f"of order {table.max_order} (p = {fmt_p(own)} < {alpha:g})")
        else:
            text = (f"no term is significant in the sequential table of order {table.max_order} "
                    f"(x: p = {fmt_p(own)}); order 1 is the lowest offered, check the data")
        if above:
            text += "; not significant: " + ", ".join(
                f"{term_name(r.term)} p = {fmt_p(r.test.p_value)}" for r in above)
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


def choose_order(cal: Calibration, rule: str = "seqf", alpha: float = 0.05) -> OrderChoice:
    """The order ``rule`` picks for ``cal``, with the reason in words."""
    rule = check_rule(rule)
    alpha = check_alpha(alpha)
    made = cal.__dict__.setdefault("_choices", {})
    if (rule, alpha) not in made:
        made[(rule, alpha)] = _choose(cal, rule, alpha)
    return made[(rule, alpha)]


def _choose(cal: Calibration, rule: str, alpha: float) -> OrderChoice:
    if rule == "seqf":
        order, words = _seqf(cal, alpha)
    elif rule == "forward":
        order, words = _forward(cal, alpha)
    else:
        order, words = _criterion(cal, rule)
    return OrderChoice(order, rule, alpha, lambda: words() + _lack_of_fit_words(cal, order, alpha))


def mandel_test(cal: Calibration) -> FTest:
    """Mandel's fitting test, linear against quadratic.

    F = (RSS_1 - RSS_2) / s_2^2 with (1, n - 3) degrees of freedom: the
    extra-sum-of-squares test of the quadratic term, as used in analytical
    calibration (J. Mandel, The Statistical Analysis of Experimental Data,
    Wiley 1964; ISO 8466-2 applies the same comparison, cited from memory). A
    significant F means the linear model is not adequate.
    """
    if cal.max_order < 2:
        raise OrderError("Mandel's test needs a calibration fitted to order 2 or more", argument="max_order")
    return cal.step_test(2)
