"""How the worksheet functions are registered with the spreadsheet: xlwings metadata, nothing else.

The decorators only attach what the spreadsheet program needs to list the
functions and explain their arguments; the functions themselves are unchanged.
The command line needs none of it and calls ``headless()`` before it loads the
functions, so that it never imports xlwings (nor pandas, which xlwings imports
when it is installed).
"""

from __future__ import annotations

_registering = True


def headless() -> None:
    """Load the functions without registration metadata (the command line)."""
    global _registering
    _registering = False


def worksheet_function(f):
    """``xlwings.func``: f becomes a worksheet function (under its name in capitals)."""
    if not _registering:
        return f
    import xlwings as xw

    return xw.func(f)


def described(name: str, doc: str):
    """``xlwings.arg``: the description of argument ``name`` that the function wizard shows."""

    def apply(f):
        if not _registering:
            return f
        import xlwings as xw

        return xw.arg(name, doc=doc)(f)

    return apply
