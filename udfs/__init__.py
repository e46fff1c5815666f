"""Degreewise worksheet functions: the CALIB_* family (xlwings user-defined functions).

Importing this package needs no file system, subprocess or compiled code of
its own, so it also serves in-workbook Python; the xlsx file format (``xlsx``)
and the command line (``commands``) are subpackages it never loads. The functions load on first use of any
of them (``degreewise.calib_order``, ``from degreewise import *``, or the spreadsheet
listing the package's names), so that the command line can load them without
registration metadata (see ``registration``).

Import names: this folder, ``udfs/``, installs as the package ``degreewise``, and the sibling folder
``engine/`` as ``degreewise.engine`` (pyproject ``package-dir``), so ``from . import engine`` here reads
``engine/``. An editor follows that mapping after ``pip install -e . --config-settings editable_mode=strict``
(a tree of links under build/; run it again after adding a module).
"""

from .catalogue import FUNCTIONS

VERSION = "0.1.0"  # the one source of the version: pyproject reads it (tool.setuptools.dynamic)
__all__ = ["VERSION", *FUNCTIONS]


def __getattr__(name: str):
    """The functions, loaded on first use; also under their names in capitals, which is how the desktop
    add-in's wrappers call them (``dir`` lists each function once, so that it gets one wrapper)."""
    if name.lower() in FUNCTIONS:
        from . import functions

        globals().update({n: getattr(functions, n) for n in FUNCTIONS})
        return globals()[name.lower()]
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(FUNCTIONS))
