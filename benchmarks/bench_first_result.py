"""The first result of a spreadsheet Python session: fresh interpreters in which xlwings is already loaded
(the runtime imports it, and with it numpy and pandas), then ``import degreewise``, the first CALIB_ORDER
and the first CALIB_CHECKS on a typical calibration (24 points, 8 levels x 3, ranges in the desktop shape:
a list of one-cell rows of floats). Side by side in the same rounds, alternating which goes first: a fresh
interpreter that imports xlwings, then scipy.special and scipy.stats (the floor: the first CALIB_ORDER needs
scipy.special's distributions, the first CALIB_CHECKS scipy.stats' Shapiro-Wilk), then the rest of
``statsmodels.api`` (the anchor: the floor plus the rest). A third interpreter loads scipy.special and
scipy.stats with xlwings before the same three steps: what is left is our own share.

Each part is the median over the rounds, with its quartiles; the ratios are ours over the floor and over the
anchor, per round.
The interpreters may write bytecode (an installed package has it: pip compiles on install; an editable
checkout gets its ``__pycache__`` in the warm-up round, which is not counted), whatever
PYTHONDONTWRITEBYTECODE says in the calling environment.

Run: python benchmarks/bench_first_result.py [ROUNDS]   (needs the test extra: statsmodels, xlwings)
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

import numpy as np

X = [float(v) for v in np.repeat(np.linspace(1.0, 50.0, 8), 3)]
Y = [float(v) for v in 2.0 + 3.0 * np.asarray(X) + 0.01 * np.asarray(X) ** 2
     + np.random.default_rng(1).normal(0.0, 1.0, len(X))]  # as workloads.typical()

OURS = f"""
import json, time
x, y = {[[v] for v in X]!r}, {[[v] for v in Y]!r}
t = [time.perf_counter()]
import xlwings
t.append(time.perf_counter())
import degreewise
t.append(time.perf_counter())
order = degreewise.CALIB_ORDER(x, y)
t.append(time.perf_counter())
checks = degreewise.CALIB_CHECKS(x, y)
t.append(time.perf_counter())
assert order == 2 and len(checks) > 2, (order, checks)
print(json.dumps([b - a for a, b in zip(t, t[1:])]))
"""

ANCHOR = """
import json, time
t = [time.perf_counter()]
import xlwings
t.append(time.perf_counter())
import scipy.special
t.append(time.perf_counter())
import scipy.stats
t.append(time.perf_counter())
import statsmodels.api
t.append(time.perf_counter())
print(json.dumps([b - a for a, b in zip(t, t[1:])]))
"""

OWN = OURS.replace("import xlwings\n", "import xlwings, scipy.special, scipy.stats\n")

PARTS = ("import degreewise", "first CALIB_ORDER", "first CALIB_CHECKS")


ENV = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}


def run(code: str) -> list[float]:
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True, env=ENV).stdout
    return json.loads(out.splitlines()[-1])


def spread(values) -> str:
    q1, q2, q3 = np.percentile(values, [25, 50, 75])
    return f"{q2 * 1000:7.0f} ms  (quartiles {q1 * 1000:.0f}-{q3 * 1000:.0f})"


def main(rounds: int = 12) -> None:
    run(OURS), run(ANCHOR)  # warm-up: bytecode written, files in the page cache
    ours, anchor, own = [], [], []
    for i in range(rounds):  # alternating: anchor first in even rounds, ours first in odd ones
        if i % 2 == 0:
            anchor.append(run(ANCHOR))
            ours.append(run(OURS))
        else:
            ours.append(run(OURS))
            anchor.append(run(ANCHOR))
        own.append(run(OWN))
    ours, anchor, own = np.array(ours), np.array(anchor), np.array(own)
    total, floor, statsmodels = ours[:, 1:].sum(axis=1), anchor[:, 1:3].sum(axis=1), anchor[:, 1:].sum(axis=1)
    print(f"first result of a session, {rounds} alternating rounds of fresh interpreters (median, quartiles)")
    print(f"  import xlwings (the runtime's)      {spread(ours[:, 0])}")
    for j, part in enumerate(PARTS, start=1):
        print(f"  {part:<35} {spread(ours[:, j])}")
    print(f"  total after xlwings                 {spread(total)}")
    print(f"  floor: import scipy.special         {spread(anchor[:, 1])}  (after xlwings, in the anchor's")
    print(f"         then scipy.stats             {spread(anchor[:, 2])}   interpreter)")
    print(f"  anchor: import statsmodels.api      {spread(statsmodels)}  (the same interpreter, in all)")
    parts = ", ".join(f"{np.median(own[:, j]) * 1000:.0f}" for j in range(1, 4))
    print(f"  our own share (scipy preloaded)     {spread(own[:, 1:].sum(axis=1))}  (the three parts: {parts} ms)")
    for name, reference in (("floor", floor), ("anchor", statsmodels)):
        q1, q2, q3 = np.percentile(total / reference, [25, 50, 75])
        print(f"  ours / {name:<6} per round: median {q2:.2f} (quartiles {q1:.2f}-{q3:.2f})")
    print(f"  rounds under one second: ours {int((total < 1.0).sum())}, floor {int((floor < 1.0).sum())} "
          f"of {rounds}")


if __name__ == "__main__":
    main(*(int(a) for a in sys.argv[1:]))
