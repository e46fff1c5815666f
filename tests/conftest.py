"""Shared test helpers: the NIST StRD reference data copied into tests/data/strd."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

STRD = Path(__file__).parent / "data" / "strd"


def load_strd(name: str):
    data = np.loadtxt(STRD / f"{name}.csv", delimiter=",", skiprows=1)
    certified = json.loads((STRD / "certified.json").read_text())[name]
    return data[:, 0], data[:, 1], certified


@pytest.fixture
def replicated():
    """Invented replicated calibration: 8 levels x 3, mildly curved, seeded."""
    rng = np.random.default_rng(4242)
    x = np.repeat(np.linspace(1.0, 50.0, 8), 3)
    y = 2.0 + 3.0 * x + 0.01 * x**2 + rng.normal(0.0, 1.0, x.size)
    return x, y
