"""Degreewise worksheet functions: the CALIB_* family (xlwings user-defined functions).

Importing this package needs no file system, subprocess or compiled code of
its own, so it also serves in-workbook Python; the workbook refresh and the
command line live in their own modules. The functions load on first use of any
of them (``degreewise.calib_order``, ``from degreewise import *``, or the spreadsheet
listing the package's names), so that the command line can load them without
registration metadata (see ``registration``).
"""

VERSION = "0.1.0"

FUNCTIONS = (
    "calib_checks", "calib_coefs", "calib_compare", "calib_inverse", "calib_labels", "calib_limits", "calib_order",
    "calib_orders", "calib_predict", "calib_residuals", "calib_seqf", "calib_stats", "calib_version",
    "calib_weighting",
)
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
