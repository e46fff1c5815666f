"""The engine's words: how results read in sentences (term names, p-values, the reasons for an order).

Numbers are computed elsewhere; this module reads results and writes text, so that every table and every
reason says a term or a p-value the same way.
"""

from __future__ import annotations


def term_name(k: int) -> str:
    """The name of the term of power k: intercept, x, x^2, ..."""
    return "intercept" if k == 0 else ("x" if k == 1 else f"x^{k}")


def fmt_p(p: float | None) -> str:
    """A p-value in two significant digits (scientific below 1e-4); "n/a" where there is none."""
    if p is None or p != p:
        return "n/a"
    return f"{p:.2g}" if p >= 1e-4 else f"{p:.1e}"
