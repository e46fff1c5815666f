"""Reference data for the benchmarks (the NIST StRD copy in tests/data/strd)."""

from pathlib import Path

import numpy as np

STRD = Path(__file__).resolve().parent.parent / "tests" / "data" / "strd"


def load_filip():
    data = np.loadtxt(STRD / "filip.csv", delimiter=",", skiprows=1)
    return data[:, 0], data[:, 1]
