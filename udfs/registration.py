"""How the worksheet functions are registered with the spreadsheet: xlwings metadata, nothing else.

``declared(docs)`` gives the one decorator every worksheet function carries. It declares each argument,
by its name, the way both runtimes must hand it over (xlwings' conversion options):

- ``ndim=2``: a range always as a list of rows, so that a row of cells and a column of cells stay apart
  (without it an n x 1 and a 1 x n range both arrive as one flat list);
- ``err_to_str=True``: an error value as its text ("#N/A"); without it xlwings hands over None, which
  would look like a blank cell and silently drop the standard.

Numbers need no option: the desktop hands over floats (Decimal for currency, datetime for dates), the
browser floats and ints; ``coercion`` takes them all. The description of each argument comes from
``docs``; the function's own description is its docstring on one line; the category is "Degreewise".
The desktop add-in names its VBA wrapper after the function, so there the name is set in capitals
(the browser runtime shows names in capitals by itself).

The command line needs none of this and calls ``headless()`` before it loads the functions, so that it
never imports xlwings (nor pandas, which xlwings imports when it is installed).
"""

from __future__ import annotations

import inspect

CATEGORY = "Degreewise"
CELLS = {"ndim": 2, "err_to_str": True}

_registering = True


def headless() -> None:
    """Load the functions without registration metadata (the command line)."""
    global _registering
    _registering = False


def declared(docs: dict):
    """The decorator that makes f the worksheet function F (in capitals), each argument described by
    ``docs[name]`` and declared with ``CELLS``."""

    def register(f):
        if not _registering:
            return f
        import xlwings as xw

        f.__doc__ = " ".join(inspect.getdoc(f).split())
        for name in inspect.signature(f).parameters:
            f = xw.arg(name, doc=docs[name], **CELLS)(f)
        f = xw.func(category=CATEGORY)(f)  # last: xw.arg resets the category
        if xw.func.__module__ == "xlwings.udfs":  # the desktop add-in: the VBA wrapper takes this name
            f.__xlfunc__["name"] = f.__name__.upper()
        return f

    return register
