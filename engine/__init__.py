"""Degreewise numeric engine: polynomial calibration curves on numpy and scipy only.

``Calibration(x, y, max_order=None, weights=None)`` factorises the data once;
its methods and the functions below hand out per-order results (named
tuples, and ``OrderChoice``, from ``degreewise.engine.results``). ``fit(x, y, order, weights=None)`` is the
shortest way to one order's coefficients.

Import name: this folder, ``engine/``, installs as ``degreewise.engine`` (pyproject ``package-dir``); the
worksheet layer in ``udfs/`` (the package ``degreewise``) imports it as ``from . import engine``. It imports
numpy and scipy only, never the worksheet layer.
"""

from .calibration import Calibration
from .compare import compare, shared_order
from .diagnostics import curve_checks, point_diagnostics
from .errors import CalibrationError, DataError, OptionError, OrderError, WeightError
from .limits import detection_limits
from .prediction import inverse, predict, uncertainty, why_no_estimate
from .selection import choose_order, forward_steps, mandel_test
from .validation import DEFAULT_RULE, RULES, default_max_order
from .weight_choice import compare_weightings, spread_exponent
from .words import lack_of_fit_words, order_reason

__all__ = [
    "Calibration", "CalibrationError", "DataError", "DEFAULT_RULE", "OptionError", "OrderError", "RULES",
    "WeightError", "choose_order", "compare", "compare_weightings", "curve_checks", "default_max_order",
    "detection_limits", "fit", "forward_steps", "inverse", "lack_of_fit_words", "mandel_test", "order_reason",
    "point_diagnostics", "predict", "shared_order", "spread_exponent", "uncertainty", "why_no_estimate",
]


def fit(x, y, order, weights=None):
    """Least-squares polynomial of ``order``: an ``OrderFit`` with ``coefficients`` and
    ``std_errors`` in raw powers of x (intercept first), ``residual_sd`` and ``r_squared``."""
    return Calibration(x, y, max_order=order, weights=weights).fit(order)
