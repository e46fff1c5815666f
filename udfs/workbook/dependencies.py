"""Which CALIB_* formulas a range reads: their anchors and stored spill ranges, indexed by sheet and column.

A formula depends on another when one of its ranges holds that formula's anchor, or
overlaps the range its stored result covers. Anchors are kept per (sheet, column) with
their rows sorted, spill ranges per (sheet, column) sorted by their top row, so that the
formulas a range reads are found by bisection: building the graph grows near-linearly
with the number of formulas, not with its square.
"""

from __future__ import annotations

from bisect import bisect_left, bisect_right
from collections import defaultdict

from .formula import Area, areas_of


class Index:
    """The anchors and stored spills of ``by_cell`` ((sheet, row, col) -> formula with ``previous``)."""

    def __init__(self, by_cell: dict):
        anchors, spills = defaultdict(list), defaultdict(list)
        for key, g in by_cell.items():
            anchors[(g.sheet, g.col)].append((g.row, key))
            p = g.previous
            if p is not None:
                for c in range(p.left, p.right + 1):
                    spills[(p.sheet, c)].append((p.top or 1, p.bottom or 2**31, key))
        self.anchors = {k: (sorted(v), [r for r, _ in sorted(v)]) for k, v in anchors.items()}
        self.spills = {k: (sorted(v), [t for t, _, _ in sorted(v)]) for k, v in spills.items()}
        self.columns: dict[str, list[int]] = defaultdict(list)  # each sheet's columns holding either
        for sheet, col in {*self.anchors, *self.spills}:
            self.columns[sheet].append(col)

    def read_by(self, area: Area) -> set:
        """The keys of the formulas whose anchor lies in ``area`` or whose stored spill overlaps it."""
        top, bottom = (1, 2**31) if area.top is None else (area.top, area.bottom)
        cols = [c for c in self.columns.get(area.sheet, ()) if area.left <= c <= area.right]
        found = set()
        for c in cols:
            entry = self.anchors.get((area.sheet, c))
            if entry is not None:
                items, rows = entry
                found.update(k for _, k in items[bisect_left(rows, top):bisect_right(rows, bottom)])
            entry = self.spills.get((area.sheet, c))
            if entry is not None:
                items, tops = entry
                found.update(k for _, low, k in items[:bisect_right(tops, bottom)] if low >= top)
        return found


def graph_of(by_cell: dict) -> dict:
    """(sheet, row, col) -> the keys of the formulas it reads."""
    index = Index(by_cell)
    return {key: {k for a in areas_of(f.call) for k in index.read_by(a) if k != key} for key, f in by_cell.items()}


def order_of(graph, by_cell, sheet_names, report):
    """Dependencies first, otherwise sheet by sheet and cell by cell (so a sheet's calibrations
    are computed together while the cache holds them); cells on a cycle are reported and dropped."""
    sheet_index = {name: i for i, name in enumerate(sheet_names)}
    keys = sorted(graph, key=lambda k: (sheet_index.get(k[0], 0), k[1], k[2]))
    state, order, dead = {}, [], set()
    for start in keys:
        if start in state:
            continue
        stack = [(start, iter(sorted(graph[start], key=lambda k: (sheet_index.get(k[0], 0), k[1], k[2]))))]
        state[start] = "open"
        path = [start]
        while stack:
            node, deps = stack[-1]
            dep = next(deps, None)
            if dep is None:
                stack.pop()
                path.pop()
                state[node] = "done"
                order.append(node)
            elif state.get(dep) == "open":
                cycle = path[path.index(dep):] + [dep]
                names = " -> ".join(by_cell[k].where for k in cycle)
                for k in dict.fromkeys(cycle):  # in path order, each once
                    if k not in dead:
                        report.failed.append((by_cell[k].where, f"circular reference: {names}"))
                        dead.add(k)
            elif dep not in state:
                state[dep] = "open"
                path.append(dep)
                stack.append((dep, iter(sorted(graph[dep], key=lambda k: (sheet_index.get(k[0], 0), k[1], k[2])))))
    return [k for k in order if k not in dead], dead


def late_reads(order, by_cell, graph, spills) -> list[tuple]:
    """(reader, anchor) for each formula that read cells of a spilled result computed after it, where the
    dependency graph had no edge (the spill range was not stored). Reads are indexed by sheet and column,
    so the work grows with the reads of a spill's own columns, not with every formula."""
    position = {k: i for i, k in enumerate(order)}
    key_of = {f.where: k for k, f in by_cell.items()}
    reads: dict[tuple[str, int], list] = {}
    wide: list = []  # reads of more than 64 columns, checked against every spill
    for k in order:
        for a in areas_of(by_cell[k].call):
            if a.right - a.left >= 64:
                wide.append((a, k))
            for c in range(a.left, a.right + 1) if a.right - a.left < 64 else ():
                reads.setdefault((a.sheet, c), []).append((a, k))
    late = set()
    for where, spill in spills:
        anchor = key_of[where]
        near = [r for c in range(spill.left, spill.right + 1) for r in reads.get((spill.sheet, c), ())]
        for a, k in near + wide:
            if k != anchor and anchor not in graph[k] and position[k] < position[anchor] and a.overlaps(spill):
                late.add((k, anchor))
    return sorted(late)
