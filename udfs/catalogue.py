"""The CALIB_* family in one place: each worksheet function once with its table's header, the description of
each argument, and the words the tables share (term names, cautions).

Registration (argument descriptions), ``import degreewise`` (the names), the refresh (which formulas it
computes), CALIB_LABELS and the README's reference table all read this catalogue: a new worksheet function
is one row of ``FUNCTIONS`` plus its code in ``functions``. This module imports nothing.
"""

# name -> the header row of its table (None: a single cell)
FUNCTIONS = {
    "calib_order": None,
    "calib_orders": ("order", "residual df", "residual SD", "R²", "adjusted R²", "predicted R²", "AICc", "BIC",
                     "term p", "step p", "lack-of-fit p", "picked by"),
    "calib_seqf": ("source", "df", "SS", "MS", "F", "p-value"),
    "calib_coefs": ("term", "coefficient", "std error", "t", "p-value", "lower", "upper"),
    "calib_stats": ("statistic", "value"),
    "calib_predict": ("predicted y", "mean lower", "mean upper", "prediction lower", "prediction upper", "note"),
    "calib_inverse": ("x estimate", "lower", "upper", "note"),
    "calib_residuals": ("fitted", "residual", "studentized residual", "leverage", "Cook's distance",
                        "back-calculated x", "deviation %", "note"),
    "calib_checks": ("check", "statistic", "p-value", "verdict", "detail"),
    "calib_compare": ("item", "reference", "today", "difference", "lower", "upper", "F", "df num", "df den",
                      "p-value", "verdict", "detail"),
    "calib_limits": ("method", "critical response", "decision limit", "detection limit", "quantitation limit",
                     "note"),
    "calib_weighting": ("scheme", "order", "sum abs deviation %", "largest abs deviation %", "spread p-value",
                        "picked", "note"),
    "calib_acceptance": ("item", "x", "back-calculated x", "value", "limit", "result", "detail"),
    "calib_uncertainty": ("x estimate", "standard uncertainty", "df", "coverage factor", "expanded uncertainty",
                          "relative uncertainty %", "note"),
    "calib_labels": None,
    "calib_version": None,
}

# functions whose one-cell text result is an answer, not a message (the refresh reports messages)
TEXT_ANSWERS = ("calib_version",)

# a table's header by the table's name (CALIB_LABELS, the demo layout)
HEADERS = {name[len("calib_"):]: header for name, header in FUNCTIONS.items() if header}

# argument name -> its description, shown by the spreadsheet's function wizard
ARGUMENTS = {
    "x": "known x of the standards (concentrations): a row or column; blank rows are skipped",
    "y": "responses of the standards, same size as x",
    "max_order": "highest order considered (default: up to 4, keeping 4 residual df; see the README)",
    "alpha": "significance level of the tests (default 0.05)",
    "rule": "how to choose the order: stepdown (default), forward, aicc, bic or press",
    "weights": "weights, one per row, or one of 1/x, 1/x^2, 1/y, 1/y^2 (default none)",
    "order": "order of the curve (default: the order the stepdown rule picks)",
    "level": "confidence level of intervals (default 0.95)",
    "new_x": "x values to predict responses at",
    "reading": "sample readings to turn into x (each the mean of `replicates` readings)",
    "replicates": "how many readings each reading averages (default 1)",
    "exclude": "TRUE or a reason in a standard's row takes it out of the fit and keeps it on the record "
               "(default: none excluded)",
    "ref_x": "known x of the reference calibration's standards (an earlier run)",
    "ref_y": "responses of the reference calibration's standards, same size as ref_x",
    "at": "x values at which to compare the two curves' responses (optional)",
    "blank": "responses of blank samples (x = 0) for the blank method (optional)",
    "criteria": "the criteria set: ICH M10 chromatographic, ICH M10 ligand binding, relative standard error or "
                "levels per order; or your own numbers in cells: tolerance %, lowest-level tolerance %, minimum % "
                "passing, minimum levels",
    "name": "which table: predict, inverse, residuals or uncertainty (or orders, seqf, coefs, stats, checks, "
            "compare, limits, weighting, acceptance)",
}

LIMITS_CAUTION = "estimates from one calibration: confirm them with samples near the limit, as the methods require"
# measured by benchmarks/error_rates.py (fixed seeds, 2000 straight lines per design); the README gives the designs
LIMITS_AFTER_CHOICE = ("the order was chosen from these standards, which raises the prediction band's false-positive "
                       "rate: measured 6.3 % at alpha 0.05 with 10 levels x 1 and no blank standard, 5.0 % with 6 "
                       "levels x 2 and a blank standard (simulated straight lines)")
WEIGHTING_AFTER_CHOICE = ("the pick is made from these standards, so intervals under it cover less than their level: "
                          "95 % slope intervals covered 87 to 95 % of true slopes with 7 levels x 3 and 75 % with 6 "
                          "levels x 2 at constant CV (simulated); fix the scheme when the method is validated, not "
                          "per run")
CAUTION = ("Supports, and does not replace, method validation under your quality system and applicable "
           "standards; results must be reviewed by qualified staff.")


def term(k: int) -> str:
    return "intercept" if k == 0 else ("x" if k == 1 else f"x^{k}")
