"""The CALIB_* worksheet functions, one module per kind of table (the catalogue, ``..catalogue``, lists them).

Each takes cell values as the spreadsheet hands them over and returns a 2-D list of cells (rows), a plain
number (CALIB_ORDER) or text; what they share (errors into words, options, the calibration and order to
use, the caches) is in ``frame``.
"""

# re-exported: degreewise.__all__ lists them from the catalogue, the one list of the family
from .about import calib_labels, calib_version
from .acceptance import calib_acceptance
from .compare import calib_compare
from .fit import calib_coefs, calib_order, calib_orders, calib_seqf, calib_stats
from .judgments import calib_checks, calib_limits, calib_weighting
from .points import calib_inverse, calib_predict, calib_residuals, calib_uncertainty
