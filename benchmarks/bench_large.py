"""One million points: order choice and coefficients against statsmodels OLS, side by side.

Ours: ``Calibration(x, y)`` (default max order K), the default rule's order and that order's fit
(coefficients and standard errors: what CALIB_ORDER and CALIB_COEFS need). Reference: statsmodels OLS
of every order 0..K on the raw power design ``np.vander(x, k + 1, increasing=True)``, params and bse
(what an analyst fits to make the same choice and read the same coefficients).

Each measurement runs in a fresh subprocess, reference and ours alternating round by round. In the
subprocess both libraries are imported and warmed up on 100 points first; then the time of one call
(perf_counter) and its peak memory, the growth of the process's peak resident set
(``resource.getrusage(RUSAGE_SELF).ru_maxrss``, KiB on Linux) over its value just before the call,
are taken. The ratios are reference / ours per round (above 1: ours faster or smaller).

Run: python benchmarks/bench_large.py [rounds]   (needs the test extra: statsmodels)
"""

from __future__ import annotations

import json
import statistics
import subprocess
import sys

N = 1_000_000


def data(n: int):
    import numpy as np

    x = np.tile(np.linspace(0.0, 100.0, 10), n // 10)
    y = 1.0 + 0.5 * x + np.random.default_rng(0).normal(0.0, 0.1, x.size)
    return x, y


def ours(x, y):
    from degreewise import engine

    cal = engine.Calibration(x, y)
    fit = cal.fit(engine.choose_order(cal).order)
    return fit.coefficients, fit.std_errors


def reference(x, y, max_order=4):
    import numpy as np
    import statsmodels.api as sm

    fits = [sm.OLS(y, np.vander(x, k + 1, increasing=True)).fit() for k in range(max_order + 1)]
    return [(f.params, f.bse) for f in fits]


def measure(which: str) -> dict:
    """One call of ``which`` on a million points, in this (fresh) process."""
    import resource
    import time

    import statsmodels.api  # noqa: F401  both libraries loaded before the baseline

    from degreewise import engine  # noqa: F401

    func = {"ours": ours, "reference": reference}[which]
    func(*data(100))
    x, y = data(N)
    before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    t0 = time.perf_counter()
    func(x, y)
    seconds = time.perf_counter() - t0
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss - before
    return {"seconds": seconds, "mib": peak / 1024}


def run(which: str) -> dict:
    out = subprocess.run([sys.executable, __file__, "--measure", which], check=True, capture_output=True, text=True)
    return json.loads(out.stdout)


def main(rounds: int = 7):
    rows = []
    for _ in range(rounds):
        ref, mine = run("reference"), run("ours")
        rows.append((ref, mine))
        print(f"  round {len(rows)}: statsmodels {ref['seconds']:.3f} s {ref['mib']:6.1f} MiB | ours "
              f"{mine['seconds']:.3f} s {mine['mib']:6.1f} MiB | time ratio {ref['seconds'] / mine['seconds']:.2f}"
              f", memory ratio {ref['mib'] / mine['mib']:.2f}", flush=True)
    med = statistics.median
    print(f"one million points, default max order: order choice + coefficients against statsmodels OLS of orders 0..K")
    print(f"  median time    statsmodels {med(r['seconds'] for r, _ in rows):.3f} s, ours {med(m['seconds'] for _, m in rows):.3f} s;"
          f" median per-round ratio {med(r['seconds'] / m['seconds'] for r, m in rows):.2f}")
    print(f"  median peak    statsmodels {med(r['mib'] for r, _ in rows):.1f} MiB, ours {med(m['mib'] for _, m in rows):.1f} MiB"
          f" (growth of ru_maxrss); median per-round ratio {med(r['mib'] / m['mib'] for r, m in rows):.2f}")


if __name__ == "__main__":
    if sys.argv[1:2] == ["--measure"]:
        print(json.dumps(measure(sys.argv[2])))
    else:
        main(*map(int, sys.argv[1:]))
