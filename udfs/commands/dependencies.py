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
