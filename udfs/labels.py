"""Column headers of every CALIB_* table (and of the headerless aligned outputs)."""

from __future__ import annotations

HEADERS = {
    "orders": ("order", "residual df", "residual SD", "R²", "adjusted R²", "predicted R²", "AICc", "BIC",
               "term p", "step p", "lack-of-fit p", "picked by"),
    "seqf": ("source", "df", "SS", "MS", "F", "p-value"),
    "coefs": ("term", "coefficient", "std error", "t", "p-value", "lower", "upper"),
    "stats": ("statistic", "value"),
    "predict": ("predicted y", "mean lower", "mean upper", "prediction lower", "prediction upper", "note"),
    "inverse": ("x estimate", "lower", "upper", "note"),
    "residuals": ("fitted", "residual", "studentized residual", "leverage", "Cook's distance",
                  "back-calculated x", "deviation %", "note"),
    "checks": ("check", "statistic", "p-value", "verdict", "detail"),
    "compare": ("item", "reference", "today", "difference", "lower", "upper", "p-value", "verdict", "detail"),
    "limits": ("method", "critical response", "decision limit", "detection limit", "quantitation limit", "note"),
    "weighting": ("scheme", "order", "sum abs deviation %", "largest abs deviation %", "spread p-value", "picked",
                  "note"),
}

LIMITS_CAUTION = "estimates from one calibration: confirm them with samples near the limit, as the methods require"
CAUTION = ("Supports, and does not replace, method validation under your quality system and applicable "
           "standards; results must be reviewed by qualified staff.")


def term(k: int) -> str:
    return "intercept" if k == 0 else ("x" if k == 1 else f"x^{k}")
