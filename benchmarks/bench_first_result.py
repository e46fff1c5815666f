"""The first result of a spreadsheet Python session: fresh interpreters in which xlwings is already loaded
(the runtime imports it, and with it numpy and pandas), then ``import degreewise``, the first CALIB_ORDER
and the first CALIB_CHECKS on a typical calibration (24 points, 8 levels x 3, ranges in the desktop shape:
a list of one-cell rows of floats). Side by side in the same rounds, alternating which goes first: a fresh
interpreter that imports xlwings and then ``statsmodels.api`` (the anchor).

Each part is the median over the rounds, with its quartiles; the ratio is ours over the anchor, per round.
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
import statsmodels.api
t.append(time.perf_counter())
print(json.dumps([b - a for a, b in zip(t, t[1:])]))
"""

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
    ours, anchor = [], []
    for i in range(rounds):  # alternating: anchor first in even rounds, ours first in odd ones
        if i % 2 == 0:
            anchor.append(run(ANCHOR))
            ours.append(run(OURS))
        else:
            ours.append(run(OURS))
            anchor.append(run(ANCHOR))
    ours, anchor = np.array(ours), np.array(anchor)
    total = ours[:, 1:].sum(axis=1)
    print(f"first result of a session, {rounds} alternating rounds of fresh interpreters (medians)")
    print(f"  import xlwings (the runtime's)    {spread(ours[:, 0])}")
    for j, part in enumerate(PARTS, start=1):
        print(f"  {part:<33} {spread(ours[:, j])}")
    print(f"  total after xlwings               {spread(total)}")
    print(f"  anchor: import statsmodels.api   {spread(anchor[:, 1])}  (after xlwings, in its own interpreter)")
    ratios = total / anchor[:, 1]
    q1, q2, q3 = np.percentile(ratios, [25, 50, 75])
    print(f"  ours / anchor per round: median {q2:.2f} (quartiles {q1:.2f}-{q3:.2f}); "
          f"rounds under one second: {int((total < 1.0).sum())} of {rounds}")


if __name__ == "__main__":
    main(*(int(a) for a in sys.argv[1:]))
