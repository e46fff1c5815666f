"""A large workbook computed in forked processes: its formulas split into shares of sheets that do not refer
to one another, each share computed in its own process, the parts and the audit trail merged in formula
order (the same as one process makes)."""

from __future__ import annotations

import sys
from pathlib import Path

from . import files
from .audit import LISTS, Report
from .formula import areas_of

# a workbook with at least this many CALIB_* formulas is split over processes when workers > 1
PARALLEL_FROM = 48
_FORKED = None  # (refresher, plan, shares), inherited by forked processes


def can_fork() -> bool:
    """Forked processes share the parsed workbook for free; only on Linux, where fork is safe and the default."""
    return sys.platform.startswith("linux")


def shares_of(order, by_cell, workers: int) -> list[list]:
    """``order`` split into at most ``workers`` lists, each a union of sheet groups that refer only to
    themselves, balanced by formula count; each list keeps the order of ``order``."""
    parent: dict[str, str] = {}

    def root(s):
        while parent.setdefault(s, s) != s:
            parent[s] = parent[parent[s]]
            s = parent[s]
        return s

    for key in order:
        f = by_cell[key]
        for a in areas_of(f.call):
            parent[root(a.sheet)] = root(f.sheet)
    sizes: dict[str, int] = {}
    for key in order:
        sizes[root(key[0])] = sizes.get(root(key[0]), 0) + 1
    load, home = [0] * min(workers, len(sizes)), {}
    for group, size in sorted(sizes.items(), key=lambda kv: -kv[1]):
        i = load.index(min(load))
        home[group] = i
        load[i] += size
    shares = [[] for _ in load]
    for key in order:
        shares[home[root(key[0])]].append(key)
    return [s for s in shares if s]


def _compute_share(index: int):
    refresher, plan, shares, keep = _FORKED
    report = Report(Path(), keep=keep)  # a forked process puts its audit trail aside in a spool file of its own
    parts, arrays = refresher._compute(shares[index], plan, report)
    lists = {name: getattr(report, name) for name in LISTS}
    return parts, arrays, lists, report.changed


def compute_in_processes(refresher, shares, plan, report: Report, order):
    """``_compute`` of each share, the first here and each other in a forked process (the shares
    touch disjoint sheets); parts and report merged in formula order."""
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    global _FORKED
    _FORKED = refresher, plan, shares, report.keep
    try:
        with ProcessPoolExecutor(len(shares) - 1, mp_context=multiprocessing.get_context("fork"),
                                 initializer=files.die_with_parent) as pool:
            futures = [pool.submit(_compute_share, i) for i in range(1, len(shares))]
            outcomes = [_compute_share(0)] + [f.result() for f in futures]  # this process takes the first
    finally:
        _FORKED = None
    position = {plan[0][k].where: i for i, k in enumerate(order)}
    changed, arrays = {}, False
    for parts, used, _, values_changed in outcomes:
        refresher.parts.update(parts)
        changed.update(parts)
        arrays |= used
        report.changed |= values_changed
    for name in outcomes[0][2]:
        added = [e for o in outcomes for e in o[2][name]]
        getattr(report, name).extend(sorted(added, key=lambda e: position[e if isinstance(e, str) else e[0]]))
    refresher.sheets = {n: s for n, s in refresher.sheets.items() if s.part not in changed}  # read again as refreshed
    return changed, arrays
