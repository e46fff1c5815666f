"""Acceptance of a calibration run under a stated set of criteria, and which standards the set would let
the analyst exclude (never excluded here: exclusion stays the analyst's decision).

Every standard is read back through the curve (``OrderResults.back_calculation``: the x solving
f(x) = y nearest its own x) and judged by its deviation 100 (x' - x) / |x| against the set's limit.

- ICH M10 (Bioanalytical Method Validation and Study Sample Analysis, 2022), chromatographic methods:
  within ±15 %, ±20 % at the lowest level; at least 75 % of the standards and at least six levels pass;
  blank and zero samples are not part of the regression. From memory, to be checked against the
  guideline: with replicates at least 50 % pass at each level; the run fails when every standard of the
  lowest or of the highest level fails; excluded standards count as not passing.
- ICH M10, ligand-binding methods: within ±20 %, ±25 % at the lowest and the highest level; at least
  75 % pass; at least six levels (from memory: check).
- Relative standard error: RSE = 100 sqrt(sum ((x'_i - x_i) / x_i)^2 / (n - p)), p the number of
  coefficients, at most 20 % (an environmental-method practice).
- Levels per order: at least 5 levels for a straight line, 6 for a quadratic, 7 for a cubic (common
  practice in environmental methods; from memory).
- Custom: the analyst's tolerance %, tolerance at the lowest level %, minimum % passing, minimum levels.

A level passes when at least the set's share per level of its standards pass (one standard at least
where the set has no such rule). Standards at x = 0 have no deviation % and are not judged.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from .calibration import Calibration
from .diagnostics import deviation_percent
from .errors import CalibrationError
from .results import CriterionResult, ExclusionStep, StandardVerdict, Verdict
from .validation import check_criteria_numbers

NAN = math.nan


class Criteria(NamedTuple):
    """A criteria set: its name, its source in words, and its numbers (nan or 0 where it has no such rule)."""

    name: str
    source: str
    tolerance: float = NAN  # % for every standard
    lowest: float = NAN  # % at the lowest level
    highest: float = NAN  # % at the highest level
    min_passing: float = NAN  # % of the standards
    min_levels: int = 0  # levels that pass
    per_level: float = NAN  # % passing at each level with replicates
    ends: bool = False  # the run fails when every standard of the lowest or the highest level fails
    no_zero: bool = False  # blank and zero samples are not part of the regression
    max_rse: float = NAN  # %
    levels_by_order: tuple[int, ...] = ()  # minimum levels for orders 1, 2, 3 ...
    rejects: bool = False  # the set lets failing standards be rejected

    def numbers(self) -> str:
        """The set's numbers in words."""
        parts = []
        if self.tolerance == self.tolerance:
            ends = [f"±{self.lowest:g} % at the lowest level" if self.lowest != self.tolerance else "",
                    f"±{self.highest:g} % at the highest" if self.highest != self.tolerance else ""]
            ends = " and ".join(e for e in ends if e)
            parts.append(f"each standard within ±{self.tolerance:g} %" + (f" ({ends})" if ends else ""))
        if self.min_passing == self.min_passing:
            parts.append(f"at least {self.min_passing:g} % of the standards pass")
        if self.min_levels:
            parts.append(f"at least {self.min_levels} levels pass")
        if self.per_level == self.per_level:
            parts.append(f"with replicates at least {self.per_level:g} % pass at each level")
        if self.ends:
            parts.append("not every standard of the lowest or of the highest level fails")
        if self.no_zero:
            parts.append("no blank or zero sample in the regression")
        if self.max_rse == self.max_rse:
            parts.append(f"RSE at most {self.max_rse:g} %")
        if self.levels_by_order:
            parts.append("at least " + ", ".join(f"{m} levels for order {k}"
                                                  for k, m in enumerate(self.levels_by_order, start=1)))
        return "; ".join(parts)


M10_CHROMATOGRAPHIC = Criteria(
    "ICH M10 chromatographic",
    "ICH M10 (2022), chromatographic methods; the 50 % per level, lowest/highest level and excluded-standard "
    "rules are from memory: check them against the guideline",
    15.0, 20.0, 15.0, 75.0, 6, 50.0, True, True, rejects=True)
M10_LIGAND_BINDING = Criteria(
    "ICH M10 ligand binding",
    "ICH M10 (2022), ligand-binding methods; the six levels and excluded-standard rules are from memory: check "
    "them against the guideline",
    20.0, 25.0, 25.0, 75.0, 6, rejects=True)
RSE = Criteria(
    "relative standard error",
    "an environmental-method practice (relative standard error of the back-calculated standards); from memory",
    max_rse=20.0)
LEVELS_PER_ORDER = Criteria(
    "levels per order",
    "common practice in environmental methods; from memory",
    levels_by_order=(5, 6, 7))
SETS = {c.name.lower(): c for c in (M10_CHROMATOGRAPHIC, M10_LIGAND_BINDING, RSE, LEVELS_PER_ORDER)}


def custom(values) -> Criteria:
    """The analyst's own set from up to four numbers: tolerance %, tolerance at the lowest level % (nan: the
    tolerance), minimum % passing (nan: none), minimum levels (nan: none)."""
    tolerance, lowest, passing, levels = check_criteria_numbers(values)
    return Criteria("custom", "the analyst's own numbers", tolerance, lowest, tolerance, passing, levels,
                    rejects=True)


def relative_standard_error(x, back, coefficients: int) -> float:
    """RSE % = 100 sqrt(sum ((x'_i - x_i) / x_i)^2 / (n - p)) over standards with x != 0 (module docstring)."""
    x, back = np.asarray(x, dtype=float), np.asarray(back, dtype=float)
    keep = x != 0
    r = (back[keep] - x[keep]) / x[keep]
    df = r.size - coefficients
    return 100.0 * math.sqrt(float(r @ r) / df) if df > 0 else NAN


def _g(v: float) -> str:
    return f"{v:.6g}"


def _standards(cal: Calibration, order: int, criteria: Criteria) -> tuple[StandardVerdict, ...]:
    """Each standard read back through the curve and judged by its level's limit (module docstring)."""
    x = cal.x
    back = cal.order(order).back_calculation[0]  # the back-calculation alone, not every point diagnostic
    dev = deviation_percent(back, x)
    levels = np.unique(x[x != 0])
    ends = {levels[0]: (criteria.lowest, " (lowest level)")} if levels.size else {}
    if levels.size:
        ends.setdefault(levels[-1], (criteria.highest, " (highest level)"))
    per_standard = criteria.tolerance == criteria.tolerance
    words: dict[tuple, str] = {}  # one text for each verdict and limit, shared by the standards it describes
    out = []
    for i, (xi, bi, di) in enumerate(zip(x.tolist(), back.tolist(), dev.tolist())):
        limit, where = ends.get(xi, (criteria.tolerance, ""))
        if xi == 0:
            ok, limit = None, NAN
            reason = ("x = 0: a blank or zero sample, which the set leaves out of the regression; mark it in "
                      "exclude" if criteria.no_zero else "x = 0: no deviation % (not judged)")
        elif not per_standard:
            ok, reason = None, "the set has no limit for single standards"
        elif not math.isfinite(bi):
            ok, reason = False, "no x near the calibrated range gives this response"
        else:
            ok = abs(di) <= limit
            reason = words.get((ok, limit, where))
            if reason is None:
                reason = words[ok, limit, where] = f"{'within' if ok else 'outside'} ±{limit:g} %{where}"
        out.append(StandardVerdict(i, xi, bi, di, limit, ok, reason))
    return tuple(out)


def judge(cal: Calibration, order: int, criteria: Criteria, excluded: int = 0) -> Verdict:
    """The criteria applied to order ``order`` of ``cal``; ``excluded`` standards taken out before (by the
    analyst, or as candidates) count as not passing where the set counts standards."""
    standards = _standards(cal, order, criteria)
    x = cal.x
    passed = np.array([s.passed is True for s in standards])
    judged = np.array([s.passed is not None for s in standards])
    levels = np.unique(x[x != 0])
    level_of = {v: np.flatnonzero((x == v) & judged) for v in levels.tolist()}
    per_level = criteria.per_level

    def level_passes(idx) -> bool:
        if per_level == per_level:
            return bool(idx.size) and 100.0 * passed[idx].sum() / idx.size >= per_level
        return bool(passed[idx].any())

    rows: list[CriterionResult] = []
    if criteria.no_zero:
        zeros = int((x == 0).sum())
        rows.append(CriterionResult("no blank or zero sample in the regression", zeros, 0, zeros == 0,
                                    f"{zeros} standard{'s' if zeros != 1 else ''} at x = 0 in the fit; the set "
                                    "leaves blank and zero samples out of the regression" if zeros else
                                    "no standard at x = 0 in the fit"))
    if criteria.min_passing == criteria.min_passing:
        good, counted = int(passed.sum()), int(judged.sum()) + excluded
        share = 100.0 * good / counted if counted else NAN
        extra = f", {excluded} excluded counted as not passing" if excluded else ""
        rows.append(CriterionResult("standards passing %", share, criteria.min_passing,
                                    share >= criteria.min_passing,
                                    f"{good} of {counted} standards pass{extra}; at least "
                                    f"{criteria.min_passing:g} % needed"))
    if criteria.min_levels:
        good = sum(map(level_passes, level_of.values()))
        rows.append(CriterionResult("levels passing", good, criteria.min_levels, good >= criteria.min_levels,
                                    f"{good} of {levels.size} levels pass; at least {criteria.min_levels} "
                                    "needed"))
    if per_level == per_level:
        replicated = {v: idx for v, idx in level_of.items() if idx.size > 1}
        short = [v for v, idx in replicated.items() if not level_passes(idx)]
        words = (f"below {per_level:g} % at x = " + ", ".join(_g(v) for v in short) if short else
                 f"{len(replicated)} level{'s' if len(replicated) != 1 else ''} with replicates, each met"
                 if replicated else "no level has replicates")
        rows.append(CriterionResult(f"each level: at least {per_level:g} % pass", len(short), 0, not short, words))
    if criteria.ends and levels.size:
        for name, v in (("lowest", levels[0]), ("highest", levels[-1])):
            idx = level_of[float(v)]
            good = int(passed[idx].sum())
            rows.append(CriterionResult(f"{name} level passes", good, 1, good > 0,
                                        f"x = {_g(v)}: {good} of {idx.size} standard{'s' if idx.size != 1 else ''} "
                                        "pass" + ("" if good else f"; every standard of the {name} level fails")))
    if criteria.max_rse == criteria.max_rse:
        rse = relative_standard_error(x, [s.back_calculated for s in standards], order + 1)
        ok = bool(rse <= criteria.max_rse)
        zeros = int((x == 0).sum())
        note = f"; {zeros} standard{'s' if zeros != 1 else ''} at x = 0 left out" if zeros else ""
        rows.append(CriterionResult("relative standard error %", rse, criteria.max_rse, ok,
                                    f"p = {order + 1} coefficients, n = {int((x != 0).sum())}{note}"
                                    if rse == rse else "too few standards for the RSE (n - p < 1)"))
    if criteria.levels_by_order:
        count = int(np.unique(x).size)
        if order <= len(criteria.levels_by_order):
            need = criteria.levels_by_order[order - 1]
            rows.append(CriterionResult(f"levels for order {order}", count, need, count >= need,
                                        f"{count} levels in the fit, at least {need} for order {order}"))
        else:
            rows.append(CriterionResult(f"levels for order {order}", count, NAN, False,
                                        f"the set gives minimums for orders 1 to {len(criteria.levels_by_order)} "
                                        f"only; a curve of order {order} is outside it"))
    reasons = tuple(f"{r.name}: not met ({r.detail})" for r in rows if not r.met)
    return Verdict(standards, tuple(rows), not reasons, reasons or ("every criterion of the set is met",))


def _subset(cal: Calibration, keep: np.ndarray, order: int) -> Calibration:
    """``cal`` refitted on the points ``keep``, with the same weighting, up to ``order``."""
    w = cal.weighting
    weights = w.scheme if w.scheme is not None else (w.values[keep] if w.weighted else None)
    return Calibration(cal.x[keep], cal.y[keep], max_order=order, weights=weights)


def exclusions(cal: Calibration, order: int, criteria: Criteria, excluded: int = 0) -> tuple[ExclusionStep, ...]:
    """While a standard fails: the failing standard furthest outside its limit (|deviation| / limit; one
    with no back-calculated x first), and the verdict of the curve of the same order refitted without it;
    then the next, one at a time. Empty when the set has no rule for rejecting standards."""
    if not criteria.rejects:
        return ()
    keep = np.arange(cal.n_points)
    current, steps = cal, []
    verdict = judge(current, order, criteria, excluded)
    while True:
        failing = [s for s in verdict.standards if s.passed is False]
        if not failing:
            return tuple(steps)
        worst = max(failing, key=lambda s: (not math.isfinite(s.deviation), abs(s.deviation) / s.limit
                                            if math.isfinite(s.deviation) else 0.0))
        point = int(keep[worst.point])
        rest = np.delete(keep, worst.point)
        xs = cal.x[rest]
        shrinks = ""
        if not (xs == worst.x).any() and (worst.x < xs.min() or worst.x > xs.max()):
            shrinks = f"the calibrated range shrinks to [{_g(xs.min())}, {_g(xs.max())}]"
        excluded += 1
        try:
            current = _subset(cal, rest, order)
            then, problem = judge(current, order, criteria, excluded), ""
        except CalibrationError as err:
            then, problem = None, f"the curve of order {order} cannot be refitted without it: {err.message}"
        steps.append(ExclusionStep(point, worst.x, worst.back_calculated, worst.deviation, worst.limit, shrinks,
                                   then, problem))
        if then is None:
            return tuple(steps)
        keep, verdict = rest, then
