"""Invented demo calibrations (seeded, in scenarios of our own; no real instrument or data set).

Each scenario returns standards (x, y), the weighting and, where it has them,
unknown sample readings to turn back into concentrations.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Scenario:
    name: str
    title: str
    x_label: str
    y_label: str
    x: tuple[float, ...]
    y: tuple[float, ...]
    weights: str | None
    expected_order: int
    story: str
    samples: tuple[float, ...] = ()
    blanks: tuple[float, ...] = ()  # readings of blank samples, for the blank method of CALIB_LIMITS
    excluded: tuple[tuple[int, str], ...] = ()  # (position in x, reason): standards kept on the record only
    reference_y: tuple[float, ...] = ()  # the same standards' responses in an earlier calibration
    compare_at: tuple[float, ...] = ()  # x where today's curve is compared with the earlier one
    criteria: tuple[float, ...] = ()  # the method's own acceptance numbers (tolerance %, at the lowest level %,
    # minimum % passing, minimum levels), for CALIB_ACCEPTANCE on a sheet of their own


def _round(values, digits):
    return tuple(float(round(v, digits)) for v in values)


def curved_detector() -> Scenario:
    """A detector that saturates: 7 levels x 3 replicates, a quadratic term is justified."""
    rng = np.random.default_rng(20261201)
    levels = np.array([0.5, 2.0, 5.0, 10.0, 20.0, 30.0, 40.0])
    x = np.repeat(levels, 3)
    y = 35.0 + 910.0 * x - 7.4 * x**2 + rng.normal(0.0, 45.0, x.size)
    return Scenario(
        "curved", "Saturating detector, tracer Q in buffer", "tracer Q (ug/L)", "detector counts",
        _round(x, 3), _round(y, 1), None, 2,
        "Response bends over at high concentration; replicates at every level let lack of fit be tested.",
        samples=_round([3100.0, 12150.0, 24000.0, 29800.0], 1),
    )


def straight_probe() -> Scenario:
    """A nearly linear probe: 6 levels x 2 replicates; higher terms are not justified. A third injection at
    25 mg/L had an air bubble: it stays on the sheet, excluded with its reason. Last month's calibration of
    the same probe, at the same levels, is the reference for today's."""
    rng = np.random.default_rng(7351)
    levels = np.array([0.0, 10.0, 25.0, 50.0, 75.0, 100.0])
    x = np.repeat(levels, 2)
    y = 0.0042 + 0.019830 * x + rng.normal(0.0, 0.0035, x.size)
    earlier = 0.0051 + 0.019720 * x + np.random.default_rng(7353).normal(0.0, 0.0035, x.size)
    return Scenario(
        "straight", "Probe reading against ion standard M", "ion M (mg/L)", "probe signal (V)",
        _round(x, 3) + (25.0,), _round(y, 5) + (0.40210,), None, 1,
        "R-squared creeps up with every added term, but no term beyond x is significant. One injection is "
        "excluded with its reason, today's curve is compared with last month's, and the run is judged by the "
        "method's own acceptance criteria (one standard at the lowest level fails them).",
        samples=_round([0.25, 0.9, 1.65], 4),
        blanks=_round(0.0042 + np.random.default_rng(7352).normal(0.0, 0.0035, 6), 5),
        excluded=((12, "air bubble, inj. 3"),),
        reference_y=_round(earlier, 5), compare_at=(10.0, 50.0, 90.0), criteria=(2.0, 3.0, 75.0, 5.0),
    )


def weighted_assay() -> Scenario:
    """A wide-range assay whose spread grows with concentration: 1/x^2 weights, unknowns read back."""
    rng = np.random.default_rng(99017)
    levels = np.array([1.0, 2.5, 5.0, 10.0, 25.0, 50.0, 100.0, 250.0, 500.0])
    x = np.repeat(levels, 2)
    true = 0.0021 + 0.01525 * x
    y = true * (1.0 + rng.normal(0.0, 0.04, x.size))
    return Scenario(
        "weighted", "Plasma assay for marker K, peak-area ratio", "marker K (ng/mL)", "area ratio",
        _round(x, 3), _round(y, 6), "1/x^2", 1,
        "Spread grows with concentration, so standards are weighted 1/x^2; unknowns are read back.",
        samples=_round([0.031, 0.094, 0.41, 1.37, 3.9, 6.2, 8.1], 4),
        blanks=_round(0.0021 + np.random.default_rng(99018).normal(0.0, 0.0006, 6), 6),
    )


def all_scenarios() -> tuple[Scenario, ...]:
    return curved_detector(), straight_probe(), weighted_assay()
