"""Accuracy report of the engine against the NIST StRD linear regression datasets.

The data and certified values ship in ``udfs/reference`` (public domain, from
NIST's Statistical Reference Datasets, Linear Least Squares Regression). The
log relative error is LRE = -log10(|estimate - certified| / |certified|),
capped at 15 (the certified digits); where the certified value is 0 the check
is |estimate| <= 1e-12 * RMS(y) instead (rounding level).
"""

from __future__ import annotations

import csv
import json
import math
import platform
from dataclasses import dataclass
from importlib import resources

import numpy as np
import scipy

from .. import engine
from ..catalogue import CAUTION_SENTENCE

DATASETS = ("norris", "pontius", "filip", "wampler1", "wampler2", "wampler3")
REQUIRED_LRE = 12.0
CAP = 15.0
ZERO_TOLERANCE = 1e-12


@dataclass(frozen=True)
class Score:
    dataset: str
    quantity: str
    estimate: float
    certified: str
    lre: float  # for a certified zero: CAP when within tolerance, else 0

    @property
    def passed(self) -> bool:
        return self.lre >= REQUIRED_LRE


def load(name: str) -> tuple[np.ndarray, np.ndarray, dict]:
    base = resources.files("degreewise") / "reference"
    with (base / f"{name}.csv").open() as fh:
        rows = list(csv.reader(fh))[1:]
    data = np.array([[float(a), float(b)] for a, b in rows])
    certified = json.loads((base / "certified.json").read_text())[name]
    return data[:, 0], data[:, 1], certified


def lre(estimate: float, certified: str, y_rms: float) -> float:
    c = float(certified)
    if c == 0:
        return CAP if abs(estimate) <= ZERO_TOLERANCE * y_rms else 0.0
    if estimate == c:
        return CAP
    return min(CAP, max(0.0, -math.log10(abs(estimate - c) / abs(c))))


def scores() -> list[Score]:
    out = []
    for name in DATASETS:
        x, y, cert = load(name)
        fit = engine.fit(x, y, cert["degree"])
        rms = float(np.sqrt(np.mean(y**2)))
        pairs = [(f"b{k}", est, c) for k, (est, c) in enumerate(zip(fit.coefficients, cert["coefficients"]))]
        pairs += [(f"se(b{k})", est, c) for k, (est, c) in enumerate(zip(fit.std_errors, cert["std_errors"]))]
        pairs += [("residual SD", fit.residual_sd, cert["residual_sd"]), ("R^2", fit.r_squared, cert["r_squared"])]
        out += [Score(name, q, est, c, lre(est, c, rms)) for q, est, c in pairs]
    return out


def report() -> tuple[str, bool]:
    """The printable report and whether every quantity reached LRE 12."""
    from .. import VERSION

    all_scores = scores()
    lines = [
        "Degreewise accuracy report: NIST StRD linear least squares regression datasets",
        f"degreewise {VERSION}, numpy {np.__version__}, scipy {scipy.__version__}, "
        f"Python {platform.python_version()} on {platform.system()} {platform.machine()}",
        "LRE = -log10(|estimate - certified| / |certified|), capped at 15; "
        "a certified 0 passes at |estimate| <= 1e-12 RMS(y).",
        "",
        f"{'dataset':<10} {'quantity':<12} {'estimate':>24} {'certified':>24} {'LRE':>5}",
    ]
    for s in all_scores:
        lines.append(f"{s.dataset:<10} {s.quantity:<12} {s.estimate:>24.15e} {s.certified:>24} {s.lre:>5.1f}")
    lines.append("")
    for name in DATASETS:
        worst = min(s.lre for s in all_scores if s.dataset == name)
        lines.append(f"{name:<10} minimum LRE {worst:.1f}")
    overall = min(s.lre for s in all_scores)
    ok = all(s.passed for s in all_scores)
    lines += ["", f"minimum LRE over all datasets and quantities: {overall:.1f}",
              f"{'PASS' if ok else 'FAIL'}: every quantity {'reaches' if ok else 'must reach'} LRE {REQUIRED_LRE:g}",
              CAUTION_SENTENCE]
    return "\n".join(lines), ok


def run() -> int:
    """degreewise validate: print the report; exit 1 unless every quantity reached the required LRE."""
    text, ok = report()
    print(text)
    return 0 if ok else 1
