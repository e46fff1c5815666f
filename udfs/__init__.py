"""Degreewise worksheet functions: the CALIB_* family (xlwings user-defined functions).

Importing this package needs no file system, subprocess or compiled code of
its own, so it also serves in-workbook Python; the workbook refresh and the
command line live in their own modules.
"""

VERSION = "0.1.0"

from .functions import (  # noqa: E402
    calib_checks,
    calib_coefs,
    calib_inverse,
    calib_labels,
    calib_order,
    calib_orders,
    calib_predict,
    calib_residuals,
    calib_seqf,
    calib_stats,
    calib_version,
)

__all__ = [
    "VERSION", "calib_checks", "calib_coefs", "calib_inverse", "calib_labels", "calib_order", "calib_orders",
    "calib_predict", "calib_residuals", "calib_seqf", "calib_stats", "calib_version",
]
