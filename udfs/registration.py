"""How the worksheet functions are registered with the spreadsheet: xlwings metadata and conversion options.

``declared(docs)`` gives the one decorator every worksheet function carries. It declares each argument,
by its name, the way both runtimes must hand it over (xlwings' conversion options):

- ``ndim=2``: a range always as a list of rows, so that a row of cells and a column of cells stay apart
  (without it an n x 1 and a 1 x n range both arrive as one flat list);
- ``err_to_str=True``: an error value as its text ("#N/A"); without it xlwings hands over None, which
  would look like a blank cell and silently drop the standard;
- ``convert=``: xlwings' own value conversion with two stages added (``_reader``): the rows after the last
  filled one are cut before xlwings cleans every cell in Python, and put back afterwards as one shared
  blank row, so that a whole-column reference (1,048,576 rows) costs a fraction of a second instead of
  seconds, and the function still sees the range's size.

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
CUT_FROM = 1000  # ranges with more cells than this get the cut; smaller ones are cheap as they are

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
        reader = _reader()
        for name in inspect.signature(f).parameters:
            f = xw.arg(name, reader, doc=docs[name], **CELLS)(f)
        f = xw.func(category=CATEGORY)(f)  # last: xw.arg resets the category
        if xw.func.__module__ == "xlwings.udfs":  # the desktop add-in: the VBA wrapper takes this name
            f.__xlfunc__["name"] = f.__name__.upper()
        return f

    return register


def _reader():
    """xlwings' value conversion, with the rows after the last filled one cut before its per-cell cleaning
    and put back after it (as one shared blank row, or blanks at the end of a row of cells)."""
    from xlwings.conversion import AdjustDimensionsStage, CleanDataFromReadStage, ValueAccessor

    from .coercion import filled_length

    def empty(v) -> bool:  # an empty cell as the runtimes hand it over: None, "", or Pyodide's JsNull
        return v is None or v == "" or type(v).__name__ == "JsNull"

    def cut(ctx):
        rows = ctx.value
        if len(rows) == 1 and len(rows[0]) > CUT_FROM and empty(rows[0][-1]):  # a row of cells
            cells = tuple(rows[0])
            n = max(filled_length(cells, cells[-1]), 1)
            ctx.value, ctx.meta["cut"] = [list(cells[:n])], ("column", len(cells) - n)
        elif len(rows) > CUT_FROM and len(rows[0]) == 1 and empty(rows[-1][0]):  # a column
            try:
                cells = tuple([v for (v,) in rows])
            except (TypeError, ValueError):
                return
            n = max(filled_length(cells, cells[-1]), 1)
            ctx.value, ctx.meta["cut"] = rows[:n], ("row", len(cells) - n)

    def put_back(ctx):
        axis, blank = ctx.meta.get("cut", (None, 0))
        if axis == "row":
            ctx.value = ctx.value + [[None]] * blank
        elif axis == "column":
            ctx.value = [ctx.value[0] + [None] * blank]

    class Reader(ValueAccessor):
        @staticmethod
        def reader(options):
            return (ValueAccessor.reader(options).insert_stage(cut, before=CleanDataFromReadStage)
                    .insert_stage(put_back, after=AdjustDimensionsStage))

    return Reader
