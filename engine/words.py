"""The engine's words: how results read in sentences (term names, p-values, the reasons for an order).

Numbers are computed elsewhere; this module reads results and writes text, so that every table and every
reason says a term or a p-value the same way.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from .selection import criterion_values

if TYPE_CHECKING:  # the calibration builds on this module
    from .calibration import Calibration
    from .results import LackOfFit, OrderChoice

_CRITERION_NAMES = {"aicc": "AICc", "bic": "BIC", "press": "PRESS"}
_ONLY_LINE = "only order 1 is considered, so no term was tested (give max_order to test a curve)."


def term_name(k: int) -> str:
    """The name of the term of power k: intercept, x, x^2, ..."""
    return "intercept" if k == 0 else ("x" if k == 1 else f"x^{k}")


def fmt_value(v: float) -> str:
    """A number in a sentence: six significant digits."""
    return f"{v:.6g}"


def fmt_p(p: float | None) -> str:
    """A p-value in two significant digits (scientific below 1e-4); "n/a" where there is none."""
    if p is None or p != p:
        return "n/a"
    return f"{p:.2g}" if p >= 1e-4 else f"{p:.1e}"


def inadequate_words(max_order: int) -> str:
    """That no polynomial up to ``max_order`` describes the data, and what to do."""
    return (f"a polynomial of order <= {max_order} does not describe these data; consider a narrower range or "
            "another model")


def lack_of_fit_note(lof: LackOfFit) -> str:
    """Why the lack-of-fit test does not apply, or "" where it does."""
    if lof.exact_order is not None:
        return f"the data fit exactly at order {lof.exact_order}"
    return "not testable: replicates are identical" if lof.identical_replicates else ""


def lack_of_fit_words(cal: Calibration, order: int, alpha: float = 0.05) -> str:
    """The lack-of-fit verdict of ``order`` in words; when it is significant, the lowest order up to the
    max order whose lack of fit is not, or else that no polynomial of order <= max order describes the data."""
    return _lack_of_fit(cal, order, alpha)[0]


def _lack_of_fit(cal: Calibration, order: int, alpha: float) -> tuple[str, bool]:
    """``lack_of_fit_words`` and whether they say that no order up to the max order describes the data."""
    lof = cal.stats(order).lack_of_fit
    if lof is None:
        return f"Lack of fit at order {order} cannot be tested (no replicated x or no spare distinct x).", False
    if note := lack_of_fit_note(lof):
        return f"Lack of fit at order {order}: {note}.", False
    p = lof.test.p_value
    if p >= alpha:
        return f"Lack of fit at order {order}: not significant (p = {fmt_p(p)}).", False
    text = f"Lack of fit at order {order}: significant (p = {fmt_p(p)})"
    for k in range(order + 1, cal.max_order + 1):
        higher = cal.stats(k).lack_of_fit
        if higher is not None and not higher.test.p_value < alpha:  # nan (exact fit) counts as adequate
            found = lack_of_fit_note(higher) or f"p = {fmt_p(higher.test.p_value)}"
            return (text + f": the curve misses the level means; order {k} is the lowest whose lack of fit is "
                    f"not significant ({found})."), False
    return f"{text}: {inadequate_words(cal.max_order)}.", True


def order_reason(cal: Calibration, choice: OrderChoice) -> str:
    """Why ``choice`` (``cal.choice(rule, alpha)``): the settings, the tests or criteria that decided, and the
    lack of fit of the order picked."""
    order, rule, alpha = choice.order, choice.rule, choice.alpha
    exact = cal.exact_order
    if exact is not None:
        return (f"rule {rule}, alpha {alpha:g}, max order {cal.max_order}: the data fit exactly at order {exact} "
                "(the residual is at the rounding level of the responses), so no F test applies"
                + ("; order 1 is the lowest offered." if exact < 1 else "."))
    why = {"stepdown": _stepdown_words, "forward": _forward_words}.get(rule, _criterion_words)
    text = f"rule {rule}, alpha {alpha:g}, max order {cal.max_order}: {why(cal, order, rule, alpha)}"
    lack, inadequate = _lack_of_fit(cal, order, alpha)
    if order == cal.max_order > 1 and not inadequate:
        lack += (f" The rule stopped at the max order {order}, so no higher order was tried; if a "
                 f"polynomial of order <= {order} does not describe these data, consider a narrower range "
                 "or another model.")
    return text + " " + lack


def _p_values(p_values) -> str:
    return ", ".join(f"{term_name(k)} p = {fmt_p(p)}" for k, p in p_values)


def _stepdown_words(cal: Calibration, order: int, rule: str, alpha: float) -> str:
    big_k = cal.max_order
    if big_k == 1:
        return _ONLY_LINE
    steps = cal.step_tests()
    dropped = [(k, steps[k - 1].p_value) for k in range(big_k, order, -1)]
    text = (f"the highest term is tested first, in its own fit, each at {alpha:g}/{big_k - 1} = "
            f"{alpha / (big_k - 1):.3g}" if big_k > 2 else f"x^2 is tested in the quadratic fit at {alpha:g}")
    text += " (Anderson's top-down procedure)"
    if dropped:
        text += "; not significant: " + _p_values(dropped)
    if order > 1:
        text += f"; significant: {term_name(order)} p = {fmt_p(steps[order - 1].p_value)}"
    return text + "."


def _forward_words(cal: Calibration, order: int, rule: str, alpha: float) -> str:
    if cal.max_order == 1:
        return _ONLY_LINE
    steps = cal.step_tests()
    if order < cal.max_order:
        stop = steps[order]
        text = (f"adding {term_name(order + 1)} to order {order} is not significant "
                f"(F = {stop.statistic:.3g}, p = {fmt_p(stop.p_value)} >= {alpha:g})")
    else:
        text = f"every step up to the max order {cal.max_order} is significant"
    if order > 1:
        text = f"{term_name(order)} added significantly (p = {fmt_p(steps[order - 1].p_value)}); " + text
    return text + "."


def _criterion_words(cal: Calibration, order: int, rule: str, alpha: float) -> str:
    name = _CRITERION_NAMES[rule]
    values = dict(criterion_values(cal, rule))
    if not values:
        return f"{name} is not available for any order; order 1 is the lowest offered."
    others = ", ".join(f"order {k}: {v:.6g}" for k, v in values.items() if k != order)
    return f"smallest {name} at order {order} ({values[order]:.6g}; {others})."
