"""CALIB_LABELS and CALIB_VERSION: a table's header row, and what is computing."""

from __future__ import annotations

import platform

import numpy as np
import scipy

from .. import VERSION
from ..catalogue import HEADERS
from ..coercion import CellError, text_option
from .frame import guarded, worksheet_function


@worksheet_function
@guarded()
def calib_labels(name):
    """The header row of a table, e.g. CALIB_LABELS("predict") for the headerless CALIB_PREDICT."""
    key = text_option(name, "name", "", tuple(HEADERS))
    if not key:
        raise CellError("name: give the table's name, one of " + ", ".join(f"'{h}'" for h in HEADERS))
    return [list(HEADERS[key])]


@worksheet_function
@guarded(single=True)
def calib_version():
    """Version of the add-in and of its numeric libraries."""
    return (f"degreewise {VERSION}; numpy {np.__version__}; scipy {scipy.__version__}; "
            f"Python {platform.python_version()}")
