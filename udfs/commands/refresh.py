"""`degreewise refresh`: recompute every CALIB_* cell of a workbook and store the results in place.

Each CALIB_* formula is evaluated through the same ``degreewise`` functions the
spreadsheet calls, in dependency order. The anchor keeps its formula; a result
of more than one cell is stored as a dynamic-array formula over the range it
covers (with the metadata that marks it dynamic); cells the previous result
covered and the new one does not are cleared; a result that would cover a
non-empty cell, a merged block or a table, or reach beyond the sheet's edge, is not
written (the anchor shows #SPILL!, as the spreadsheet program would); an anchor stored
as a dynamic array keeps that form. Only the changed cells' XML, the workbook's
calculation flag (full recalculation on open) and, when needed, the dynamic-array
metadata change; every other part stays byte for byte. The file is written to a
temporary file beside it, with its permissions, and replaced atomically; a workbook
whose bytes would not change is not written at all.
"""

from __future__ import annotations

import gc
import inspect
import os
import re
import stat
import sys
import tempfile
import time
from collections.abc import MutableMapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import NamedTuple

from .. import FUNCTIONS, functions
from ..catalogue import TEXT_ANSWERS
from ..xlsx.cells import MAX_COL, MAX_ROW, cell_name, column_letters
from ..xlsx.package import (PackageError, Workbook, dynamic_array_metadata, read_package, set_full_calc_on_load,
                            write_package)
from ..xlsx.sheet import Sheet
from . import files
from .dependencies import graph_of
from .formula import (MENTION, Area, Call, Constant, Unsupported, areas_of, parse_call, quote_sheet, reference,
                      shift_references)

SUFFIXES = (".xlsx", ".xlsm")
CALLABLE = {name.upper(): getattr(functions, name) for name in FUNCTIONS}  # every function of the family
TEXT_RESULTS = {name.upper() for name in TEXT_ANSWERS}
BACKUP = re.compile(r"\.before-refresh-\d{8}-\d{6}(?:-\d+)?$")  # the stem of a backup kept by --backup


# Two machines' results agree when they differ by at most this relative amount: numpy's and OpenBLAS's
# kernels (AVX2, AVX-512, SSE) round differently in the last digits. Measured on the demo workbooks
# (1589 numbers, 2026-12-04): AVX-512 against SSE kernels at most 2.8e-11 (a spread p-value under 1/y
# weights, which are settled iteratively), against AVX2 at most 5.4e-12; every other quantity within the
# engine's 4e-12 of exact. A refresh keeps a stored number that agrees with the new one, so a colleague's
# machine neither rewrites nor lists it; any larger difference is written and listed.
AGREE = 1e-10


def _agrees(old, new) -> bool:
    """Both numbers (not logicals), equal within ``AGREE`` relative to the larger."""
    return (isinstance(old, float) and isinstance(new, float) and old != new
            and abs(old - new) <= AGREE * max(abs(old), abs(new)))


def _show(value, digits: int = 6) -> str:
    """A cell value for the report: numbers to ``digits`` significant digits, texts in quotes."""
    kind = type(value)
    if kind is float or kind is int:
        return "%.*g" % (digits, value)
    if value is None:
        return "empty"
    if kind is bool:
        return "TRUE" if value else "FALSE"
    return '"' + str(value).replace('"', '""') + '"'


def _change(old, new) -> str:
    """``old -> new``, to 6 significant digits, or as many more as it takes to tell them apart."""
    a, b, digits = _show(old), _show(new), 6
    while a == b and digits < 17:
        digits += 1
        a, b = _show(old, digits), _show(new, digits)
    return f"{a} -> {b}"


@dataclass
class Report:
    """What a refresh did to one workbook: an audit trail of every cell whose value changed."""

    path: Path
    refreshed: list[str] = field(default_factory=list)
    messages: list[tuple[str, str]] = field(default_factory=list)  # refreshed cells whose result is a message
    changes: list[tuple[str, tuple[int, int], int, str]] = field(default_factory=list)  # anchor, shape, cells, text
    blocked: list[tuple[str, str]] = field(default_factory=list)
    left_alone: list[tuple[str, str]] = field(default_factory=list)
    failed: list[tuple[str, str]] = field(default_factory=list)
    spills: list[tuple[str, Area]] = field(default_factory=list)  # anchors whose results now cover a range
    notes: list[str] = field(default_factory=list)  # how the run went, where the user should know
    changed: bool = False  # some value or stored formula changes
    written: bool = False  # the file was rewritten
    error: str | None = None
    backup: Path | None = None

    @property
    def ok(self) -> bool:
        return self.error is None and not (self.blocked or self.left_alone or self.failed or self.messages)

    def lines(self, check: bool = False) -> list[str]:
        return list(self.each_line(check))

    def each_line(self, check: bool = False):
        """The report's lines one by one (an audit trail of a large workbook is printed without a copy)."""
        if self.error:
            yield f"{self.path}: not refreshed: {self.error}"
            return
        cells = sum(n for _, _, n, _ in self.changes)
        head = (f"{self.path}: {len(self.refreshed)} CALIB_* cells {'computed' if check else 'refreshed'} "
                f"({len(self.messages)} with a message), {len(self.blocked)} blocked, {len(self.left_alone)} left "
                f"alone, {len(self.failed)} failed; ")
        if not self.changed:
            head += "nothing would change" if check else "nothing changed, the file was left as it was"
        elif cells:
            head += f"{cells} cell values would change" if check else f"{cells} cell values changed"
        else:
            head += "only stored formulas would change" if check else "only stored formulas changed"
        yield head
        verb = "would change" if check else "changed"
        for anchor, (height, width), n, listed in self.changes:
            shape = "" if height == width == n == 1 else f" (result {height} x {width}), {n} cells"
            yield f"  {verb} {anchor}{shape}: {listed}"
        yield from (f"  message {c}: {text}" for c, text in self.messages)
        yield from (f"  blocked {c}: {why}" for c, why in self.blocked)
        yield from (f"  left alone {c}: {why}" for c, why in self.left_alone)
        yield from (f"  failed {c}: {why}" for c, why in self.failed)
        if self.backup:
            yield f"  original kept as {self.backup}"
        yield from (f"  note: {n}" for n in self.notes)


@dataclass
class Formula:
    sheet: str
    row: int
    col: int
    text: str
    attrs: dict
    shift: tuple[int, int] | None = None  # for a filled (shared) formula: its offset from the master
    call: Call | None = None
    previous: Area | None = None

    @property
    def where(self) -> str:
        return f"{quote_sheet(self.sheet)}!{cell_name(self.row, self.col)}"


class Kept(NamedTuple):
    """Where a changed part's bytes were put aside: a file of the spool folder, an offset and a size."""

    file: str
    offset: int
    size: int


class Spooled(MutableMapping):
    """A package's parts (name -> bytes), updated in place. With ``spool``, the changed parts that ``keep``
    puts aside are written to a temporary file (one per process) and read back when asked for, so that a
    large workbook's refreshed sheets are not all held in memory and a forked process hands back where
    its parts are, not their bytes; leaving the ``with`` block removes the files."""

    def __init__(self, parts: dict, spool: bool = False, near: Path | None = None):
        """With ``spool``, the parts put aside go to the system's temporary folder or, where that cannot be
        written, to ``near`` (the workbook's folder); ``note`` then says so."""
        self.parts, self.note, self._folder = parts, None, None
        if spool:
            system = Path(tempfile.gettempdir())
            files.sweep(system)  # spool folders of runs that died
            try:
                self._folder = tempfile.TemporaryDirectory(prefix=f"degreewise-{os.getpid()}-")
            except OSError:
                if near is None:
                    raise
                self._folder = tempfile.TemporaryDirectory(prefix=f".~degreewise-{os.getpid()}-", dir=near)
                self.note = f"the temporary folder {system} cannot be written; {near} was used instead"
        self._out, self._pid = None, None

    def __enter__(self) -> Spooled:
        return self

    def __exit__(self, *exc) -> None:
        if self._out is not None:
            self._out.close()
        if self._folder is not None:
            self._folder.cleanup()

    def keep(self, data: bytes):
        """``data`` as it is to be stored: where it was put aside, or the bytes themselves without a spool."""
        if self._folder is None:
            return data
        if self._pid != os.getpid():  # a forked process writes a file of its own
            self._pid = os.getpid()
            self._out = open(os.path.join(self._folder.name, f"parts-{self._pid}"), "ab")  # noqa: SIM115
        kept = Kept(self._out.name, self._out.tell(), len(data))
        self._out.write(data)
        self._out.flush()
        return kept

    def __getitem__(self, name: str) -> bytes:
        value = self.parts[name]
        if isinstance(value, Kept):
            with open(value.file, "rb") as f:
                f.seek(value.offset)
                return f.read(value.size)
        return value

    def __contains__(self, name) -> bool:  # without reading a part put aside
        return name in self.parts

    def __setitem__(self, name: str, value) -> None:
        self.parts[name] = value

    def __delitem__(self, name: str) -> None:
        del self.parts[name]

    def __iter__(self):
        return iter(self.parts)

    def __len__(self) -> int:
        return len(self.parts)


LISTS = ("refreshed", "messages", "changes", "blocked", "left_alone", "failed", "spills")  # a Report's entries
MAX_CHAIN = 50  # formulas without stored values, each reading the next: deeper is refused in words


class NoValue(Exception):
    """An argument reads a formula cell that has no stored value and cannot be computed; the message, naming
    the argument and the cell, becomes the CALIB_* cell's result."""


def parameters(name: str) -> tuple[str, ...]:
    """The argument names of a function of the family, in order."""
    return tuple(inspect.signature(CALLABLE[name]).parameters)


def lock_file(path: Path) -> Path | None:
    """The lock file a spreadsheet program keeps beside an open workbook, if present."""
    for name in (f"~${path.name}", f".~lock.{path.name}#"):
        candidate = path.with_name(name)
        if candidate.exists():
            return candidate
    return None


def _block(sheet: Sheet, area: Area):
    """Cell values of ``area`` as the spreadsheet passes them: a scalar for one cell, else rows (a whole
    column down to the sheet's last row, as the program hands it). Rows past the last stored cell are one
    shared blank row, as xlwings' converter puts them back, so a huge range costs a pointer per row."""
    top, bottom = (1, MAX_ROW) if area.top is None else (area.top, area.bottom)
    rows = sheet.block(top, bottom, area.left, area.right)
    return rows[0][0] if len(rows) == 1 and len(rows[0]) == 1 else rows


class Refresher:
    """One workbook's CALIB_* formulas, computed in dependency order, sheet by sheet: after the last
    formula that reads or writes a sheet, its changed XML replaces its part (``parts`` is updated in
    place) and the sheet is forgotten. Every sheet is read once (``xlsx.sheet.Sheet``: where its rows are
    stored and its formulas, not its cells), and a row's cells only when a formula reads or writes them."""

    def __init__(self, parts: dict[str, bytes] | Spooled):
        self.parts = parts if isinstance(parts, Spooled) else Spooled(parts)
        self.book = Workbook(self.parts)
        self.sheets: dict[str, Sheet] = {}  # the sheets in memory
        self.formulas: list[Formula] = []
        self._unstored_of: dict[str, tuple[Sheet, dict]] = {}  # by sheet name, for the sheet in memory
        for name in self.book.sheet_parts:
            sheet = self.sheets[name] = self.book.read_sheet(name)  # kept until its last formula is done
            masters = {attrs.get("si"): (r, c, text) for (r, c), (text, attrs) in sheet.formulas.items()
                       if attrs.get("t") == "shared" and text}
            for (r, c), (text, attrs) in sheet.formulas.items():
                shared = attrs.get("t") == "shared"
                if shared and not text and attrs.get("si") in masters:
                    r0, c0, master = masters[attrs["si"]]
                    if MENTION.search(master):
                        self.formulas.append(Formula(sheet.name, r, c, master, attrs, shift=(r - r0, c - c0)))
                elif MENTION.search(text or ""):
                    self.formulas.append(Formula(sheet.name, r, c, text, attrs, shift=(0, 0) if shared else None))

    def sheet(self, name: str) -> Sheet:
        """The worksheet ``name`` as it now stands (read from its part if it is not in memory)."""
        sheet = self.sheets.get(name)
        if sheet is None:
            sheet = self.sheets[name] = self.book.read_sheet(name)
        return sheet

    def evaluate(self, call: Call, sheet: str):
        """The result of one CALIB_* call on ``sheet``, its arguments read from the refreshed cells (nested
        calls evaluated first); the report and the demo printout evaluate their tables through it."""
        args = []
        for a in call.args:
            if isinstance(a, Area):
                if a.sheet not in self.book.sheet_parts:
                    raise Unsupported(f"the sheet '{a.sheet}' does not exist in the workbook")
                target = self.sheet(a.sheet)
                try:
                    self._compute_unstored(target, a)
                except NoValue as why:
                    raise NoValue(f"{parameters(call.name)[len(args)]}: {why}") from None
                args.append(_block(target, a))
            elif isinstance(a, Constant):
                args.append(a.value())
            elif isinstance(a, Call):
                inner = self.evaluate(a, sheet)
                args.append(inner[0][0] if isinstance(inner, list) and len(inner) == 1 and len(inner[0]) == 1
                            else inner)
            else:
                args.append(a)
        return CALLABLE[call.name](*args)

    def _unstored(self, sheet: Sheet) -> dict:
        """(row, col) -> formula text of the cells of ``sheet`` that hold a formula other than a CALIB_*
        call and no stored value (a filled formula's text shifted from its master), found once per read."""
        known = self._unstored_of.get(sheet.name)
        if known is None or known[0] is not sheet:
            masters = {a.get("si"): (r, c, t) for (r, c), (t, a) in sheet.formulas.items()
                       if a.get("t") == "shared" and t}
            found = {}
            for (r, c), (text, attrs) in sheet.formulas.items():
                if (r, c) in sheet.stored:
                    continue
                if not text and attrs.get("si") in masters:
                    r0, c0, master = masters[attrs["si"]]
                    try:
                        text = shift_references(master, r - r0, c - c0)
                    except Unsupported:
                        text = master
                if text and not MENTION.search(text):
                    found[(r, c)] = text
            known = self._unstored_of[sheet.name] = (sheet, found)
        return known[1]

    def _compute_unstored(self, sheet: Sheet, area: Area, depth: int = 0) -> None:
        """Give every unstored formula cell of ``area`` its value (plain arithmetic, `evaluate_arithmetic`),
        or raise NoValue naming the cell: such a cell is never read as blank."""
        unstored = self._unstored(sheet)
        for key in [k for k in unstored if area.contains(sheet.name, *k)]:
            text = unstored.pop(key)
            where = f"{quote_sheet(sheet.name)}!{cell_name(*key)}"

            def refused(why: str) -> NoValue:
                return NoValue(f"{where} holds ={text} and no stored value, which the refresh cannot "
                                    f"compute ({why}); open the workbook in the spreadsheet program and save it, "
                                    "or enter the number")

            if depth > MAX_CHAIN:
                raise refused(f"it starts a chain of more than {MAX_CHAIN} such formulas")

            def cell(ref: str):
                target = reference(ref, sheet.name)
                if target is None or target.top is None or (target.top, target.left) != (target.bottom,
                                                                                         target.right):
                    raise refused(f"{ref} is not a single cell")
                if target.sheet not in self.book.sheet_parts:
                    raise refused(f"the sheet '{target.sheet}' does not exist")
                other = self.sheet(target.sheet)
                self._compute_unstored(other, target, depth + 1)
                return other.value(target.top, target.left)

            from .arithmetic import evaluate_arithmetic  # openpyxl's tokenizer, for such workbooks only

            value = evaluate_arithmetic(text, cell, refused)
            if value is not None:
                sheet.write(*key, value)

    def run(self, report: Report, workers: int = 1) -> tuple[dict[str, bytes], list[str]]:
        """Compute every CALIB_* cell; return the changed parts and the names of new parts.

        With ``workers`` > 1 on Linux, a large workbook's sheets are split into groups
        that do not refer to one another and computed in that many forked processes;
        the parts and the report are the same as one process makes.
        """
        by_cell = {}
        for f in self.formulas:
            try:
                text = shift_references(f.text, *f.shift) if f.shift else f.text
                f.call = parse_call(text, f.sheet, self.book.names)
            except Unsupported as why:
                report.left_alone.append((f.where, str(why)))
                continue
            except RecursionError:
                report.left_alone.append((f.where, "the formula nests calls more deeply than the refresh follows"))
                continue
            if f.attrs.get("t") == "array" and f.attrs.get("ref"):
                f.previous = reference(f.attrs["ref"], f.sheet)
            by_cell[(f.sheet, f.row, f.col)] = f
        graph = graph_of(by_cell)
        # the cm index a dynamic array will carry, found on a copy; the parts change only if one is written
        cm = dynamic_array_metadata(dict(self.parts), self.book.workbook_part, self.book.workbook_rels)[0] \
            if by_cell else None
        before, marks = dict(self.parts.parts), {name: len(getattr(report, name)) for name in LISTS}
        while True:
            order, dead = self._order(graph, by_cell, report)
            plan = (by_cell, graph, dead, cm)
            shares = _shares(order, by_cell, workers) if workers > 1 and len(order) >= PARALLEL_FROM else [order]
            if len(shares) > 1 and _can_fork():
                changed, arrays = self._compute_in_processes(shares, plan, report, order)
            else:
                changed, arrays = self._compute(order, plan, report)
            late = _late_reads(order, by_cell, graph, report.spills)
            if not late:
                break
            # a formula read cells that a result computed after it came to cover (a first refresh, where no
            # spill range was stored): order it after that result and compute everything again
            for reader, anchor in late:
                graph[reader].add(anchor)
            self.parts.parts.clear()
            self.parts.parts.update(before)
            self.sheets, self._unstored_of = {}, {}
            for name, n in marks.items():
                del getattr(report, name)[n:]
            report.changed = False
        added: list[str] = []
        if arrays:
            added = dynamic_array_metadata(self.parts, self.book.workbook_part, self.book.workbook_rels)[1]
        if changed:
            part = self.book.workbook_part
            changed[part] = set_full_calc_on_load(part, self.parts[part])
        return changed, added

    def _compute(self, keys, plan, report: Report) -> tuple[dict[str, bytes], bool]:
        """Evaluate and write the formulas ``keys`` in this order, finishing each sheet after the last of
        them that reads or writes it: the sheet parts whose bytes change, and whether a cell now refers
        to the dynamic-array record."""
        by_cell, graph, dead, cm = plan
        last = {}  # part -> the position in ``keys`` of the last formula that reads or writes it
        for i, key in enumerate(keys):
            f = by_cell[key]
            for name in {f.sheet, *(a.sheet for a in areas_of(f.call))}:
                last[self.book.sheet_parts.get(name)] = i
        finished: dict[int, list] = {}
        for part, i in last.items():
            finished.setdefault(i, []).append(part)
        changed, arrays, done = {}, False, 0
        gc.freeze()  # what exists now (the parsed formulas, the modules) outlasts the loop: collections skip it
        try:
            for i, key in enumerate(keys):
                f = by_cell[key]
                if any(dep in dead for dep in graph[key]):
                    report.failed.append((f.where, "it reads a CALIB_* cell that could not be computed"))
                    dead.add(key)
                else:
                    arrays |= self._compute_one(f, cm, report, dead)
                for part in finished.get(i, ()):
                    self._finish(part, changed)
                    done += 1
                    if done % COLLECT_EVERY == 0:
                        gc.collect()
        finally:
            gc.unfreeze()
        return changed, arrays

    def _compute_one(self, f: Formula, cm, report: Report, dead: set) -> bool:
        """Evaluate and write one formula; True when a cell was given the dynamic-array record ``cm``."""
        key = (f.sheet, f.row, f.col)
        try:
            result = self.evaluate(f.call, f.sheet)
        except NoValue as why:  # a message in the cell, as for any input a function cannot use
            result = str(why)
        except Unsupported as why:
            report.left_alone.append((f.where, str(why)))
            dead.add(key)
            return False
        rows = result if isinstance(result, list) else [[result]]
        if f.shift is not None and (len(rows) > 1 or len(rows[0]) > 1):
            report.left_alone.append((f.where, "a filled (shared) formula whose result covers several cells: "
                                               "enter it in its cell alone"))
            dead.add(key)
            return False
        return self._write(f, rows, cm, report)

    def _finish(self, part: str, changed: dict) -> None:
        """Forget the sheets of ``part``; store its XML in ``parts`` (and ``changed``) if its bytes change."""
        for name in [n for n, s in self.sheets.items() if s.part == part]:
            sheet = self.sheets.pop(name)
            self._unstored_of.pop(name, None)
            if sheet.edited:
                data = sheet.render()
                if data != self.parts[part]:
                    self.parts[part] = changed[part] = self.parts.keep(data)

    def _compute_in_processes(self, shares, plan, report: Report, order):
        """``_compute`` of each share, the first here and each other in a forked process (the shares
        touch disjoint sheets); parts and report merged in formula order."""
        import multiprocessing
        from concurrent.futures import ProcessPoolExecutor

        global _FORKED
        _FORKED = self, plan, shares
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
            self.parts.update(parts)
            changed.update(parts)
            arrays |= used
            report.changed |= values_changed
        for name in outcomes[0][2]:
            added = [e for o in outcomes for e in o[2][name]]
            getattr(report, name).extend(sorted(added, key=lambda e: position[e if isinstance(e, str) else e[0]]))
        self.sheets = {n: s for n, s in self.sheets.items() if s.part not in changed}  # read again as refreshed
        return changed, arrays

    def _order(self, graph, by_cell, report):
        """Dependencies first, otherwise sheet by sheet and cell by cell (so a sheet's calibrations
        are computed together while the cache holds them); cells on a cycle are reported and dropped."""
        sheet_index = {name: i for i, name in enumerate(self.book.sheet_parts)}
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

    def _blocked(self, f: Formula, height: int, width: int, old_cells: set) -> str | None:
        """Why the program would not let this result spill (its #SPILL! reasons), or None."""
        size = f"the result ({height} x {width})"
        bottom, right = f.row + height - 1, f.col + width - 1
        if bottom > MAX_ROW or right > MAX_COL:
            edge = f"row {MAX_ROW}" if bottom > MAX_ROW else f"column {column_letters(MAX_COL)}"
            return f"{size} would reach beyond the sheet's last {edge}; nothing was written"
        if height == width == 1:
            return None
        sheet, anchor = self.sheet(f.sheet), (f.row, f.col)
        covered = sheet.block(f.row, bottom, f.col, right)
        in_the_way = next((k for i, row in enumerate(covered) for j, value in enumerate(row)
                           for k in [(f.row + i, f.col + j)] if k != anchor and k not in old_cells
                           and (value is not None or k in sheet.formulas)), None)
        if in_the_way is not None:
            return f"{size} would cover {cell_name(*in_the_way)}, which is not empty; nothing was overwritten"
        boxes = [("the merged cells", box) for box in sheet.merged] + [(f"the table {name}", box)
                                                                      for name, box in sheet.tables]
        for what, (top, left, low, high) in boxes:
            if not (bottom < top or low < f.row or right < left or high < f.col):
                return (f"{size} would spill into {what} {cell_name(top, left)}:{cell_name(low, high)}, "
                        "where the spreadsheet program does not allow a spilled result; nothing was written")
        return None

    def _write(self, f: Formula, rows, cm, report: Report) -> bool:
        """Store one result; True when a cell was given the dynamic-array record ``cm``."""
        sheet = self.sheet(f.sheet)
        height, width = len(rows), max(len(r) for r in rows)
        anchor = (f.row, f.col)
        old_cells = set()
        if f.previous is not None and f.previous.top is not None:
            old_cells = {(r, c) for r in range(f.previous.top, f.previous.bottom + 1)
                         for c in range(f.previous.left, f.previous.right + 1)}
        why = self._blocked(f, height, width, old_cells)
        if why is not None:
            report.blocked.append((f.where, why))
            rows, height, width = [["#SPILL!"]], 1, 1
        else:
            report.refreshed.append(f.where)
            if height == width == 1 and isinstance(rows[0][0], str) and f.call.name not in TEXT_RESULTS:
                report.messages.append((f.where, rows[0][0]))
        # a spill is stored as a dynamic array; an anchor stored as an array keeps that form whatever its result
        array = height > 1 or width > 1 or f.attrs.get("t") == "array"
        own_cm = cm if (height > 1 or width > 1) and anchor not in sheet.dynamic else None
        cell_cm = sheet.dynamic.get(anchor) or own_cm
        new = Area(f.sheet, f.row, f.col, f.row + height - 1, f.col + width - 1)
        changed = f.previous != (new if array else None)
        if height > 1 or width > 1:
            report.spills.append((f.where, new))
        listed, cleared = [], []  # the audit trail, as text
        bottom, right = f.row + height - 1, f.col + width - 1
        sheet.parse_rows(f.row, bottom)
        if f.previous is not None and f.previous.top is not None:
            sheet.parse_rows(f.previous.top, f.previous.bottom)
        for key in sorted(old_cells):
            if f.row <= key[0] <= bottom and f.col <= key[1] <= right:
                continue
            style = sheet.style(*key)
            sheet.set_cells(key[0], {key[1]: sheet.cell_xml(*key, None, style) if style is not None else None})
            old = sheet.value(*key)
            if old is not None:
                sheet.write(*key, None)
                cleared.append(f"{cell_name(*key)} {_change(old, None)}")
        ref = None if not array else (cell_name(f.row, f.col) if height == width == 1 else
                                      f"{cell_name(f.row, f.col)}:{cell_name(new.bottom, new.right)}")
        letters = [column_letters(f.col + j) for j in range(width)]
        for i, row in enumerate(rows):
            r = f.row + i
            if len(row) < width:
                row = list(row) + [None] * (width - len(row))
            cells = {}
            for j, value in enumerate(row):
                c = f.col + j
                key = (r, c)
                style = sheet.style(r, c)
                old = sheet.value(r, c)
                if _agrees(old, value):  # another machine's last digits: the stored value stays
                    value = old
                if i == 0 and j == 0:
                    if f.shift is not None:  # a filled formula keeps its stored <f> element as it is
                        cells[c] = sheet.cell_xml(r, c, value, style, stored_f=sheet.formulas[key])
                    else:
                        cells[c] = sheet.cell_xml(r, c, value, style, f.text, ref, cell_cm)
                elif value is None and style is None:
                    cells[c] = None
                else:
                    cells[c] = sheet.cell_xml(r, c, value, style)
                if old != value or isinstance(old, bool) != isinstance(value, bool):
                    listed.append(f"{letters[j]}{r} {_change(old, value)}")
                    sheet.write(r, c, value)
            sheet.set_cells(r, cells)
        listed += cleared
        if listed:  # one line of text per formula, however large its table (no object per cell is kept)
            trail = listed[0].split(" ", 1)[1] if height == width == len(listed) == 1 else "; ".join(listed)
            report.changes.append((f.where, (height, width), len(listed), trail))
        report.changed |= changed or bool(listed)
        return own_cm is not None


# a calibration left behind is a reference cycle (it keeps its orders' results, which refer back to it):
# collected after every this many finished sheets, not when Python's collector gets round to it (a
# 3000-sheet refresh held 44 MiB of them at its end); with what existed before the loop frozen, these
# collections cost nothing measurable (3000 sheets, two processes: time 0.98 of no collection, peak RSS
# summed 244 against 304 MiB; unfrozen they cost 4 % of the time)
COLLECT_EVERY = 100
# a workbook with at least this many CALIB_* formulas is split over processes when workers > 1
PARALLEL_FROM = 48
_FORKED = None  # (refresher, plan, shares), inherited by forked processes


def _late_reads(order, by_cell, graph, spills) -> list[tuple]:
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


def _can_fork() -> bool:
    """Forked processes share the parsed workbook for free; only on Linux, where fork is safe and the default."""
    return sys.platform.startswith("linux")


def _shares(order, by_cell, workers: int) -> list[list]:
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
    refresher, plan, shares = _FORKED
    report = Report(Path())
    parts, arrays = refresher._compute(shares[index], plan, report)
    lists = {name: getattr(report, name) for name in LISTS}
    return parts, arrays, lists, report.changed


def _target(path: Path, check: bool) -> Path:
    """The file a refresh reads and replaces: a symlink's target. Refused with a message: a backup kept by an
    earlier refresh, an open workbook and, when it would be written, a read-only or hard-linked one."""
    if BACKUP.search(path.stem):
        raise PackageError("this is a backup kept by an earlier refresh; backups are never refreshed")
    real = Path(os.path.realpath(path))
    info = real.stat()
    if not stat.S_ISREG(info.st_mode):
        raise PackageError("not a file")
    lock = lock_file(real) or lock_file(path)
    if check:
        return real
    if lock is not None:
        raise PackageError(f"the workbook is open in a spreadsheet program ({lock.name} is present); "
                           "close it and try again")
    if hasattr(os, "statvfs") and os.statvfs(real.parent).f_flag & os.ST_RDONLY:
        raise PackageError(f"{real.parent} is on a read-only file system; nothing was changed")
    if not info.st_mode & 0o222 or not os.access(real, os.W_OK):
        raise PackageError("the workbook is read-only; make it writable to refresh it")
    if info.st_nlink > 1:
        raise PackageError(f"the workbook has {info.st_nlink} hard links, which a refresh would separate; "
                           "refresh a copy, or remove the other links")
    return real


def _replace(real: Path, infos, parts: dict, added: list[str], backup: bool, report: Report, seen) -> None:
    """Keep the original as a backup if asked, then write the package in place of ``real`` (``files.write``:
    beside it, with its owner, mode and attributes, only if it is still the file that was read)."""
    if backup:
        if not files.unchanged(real, seen):
            raise files.Changed
        stamp, n = time.strftime("%Y%m%d-%H%M%S"), 1
        report.backup = real.with_name(f"{real.stem}.before-refresh-{stamp}{real.suffix}")
        while report.backup.exists():
            n += 1
            report.backup = real.with_name(f"{real.stem}.before-refresh-{stamp}-{n}{real.suffix}")
        files.copy(real, report.backup)
    files.write(real, lambda tmp: write_package(tmp, infos, parts, added), like=real, seen=seen)


def refresh_file(path: Path, check: bool = False, backup: bool = False, workers: int | None = None) -> Report:
    """Refresh one workbook in place; ``workers`` processes for a large one (default: one per CPU core).

    Never raises: whatever stops it is the report's one-line error, and the file is left as it was."""
    path = Path(path)
    report = Report(path)
    try:
        real = _target(path, check)
        data, seen = files.read(real)
        infos, parts = read_package(data)
        del data
        with Spooled(parts, spool=True, near=real.parent) as parts:
            if parts.note:
                report.notes.append(parts.note)
            changed, added = Refresher(parts).run(report, (os.cpu_count() or 1) if workers is None else workers)
            if check or not changed:
                return report
            parts.update(changed)
            _replace(real, infos, parts, added, backup, report, seen)
        report.written = True
    except (PackageError, files.Changed) as err:
        report.error = str(err)
        report.backup = None if report.backup is None or not report.backup.exists() else report.backup
    except OSError as err:
        report.error = files.in_words(err, path)
    except Exception as err:  # a defect of ours: reported on one line, so a folder run goes on  # noqa: BLE001
        report.error = f"unexpected {type(err).__name__} ({err}); the workbook was left as it was"
    return report


def workbooks(paths) -> list[Path]:
    """The workbooks named: files as given, folders searched recursively (lock and temporary files and
    backups kept by earlier refreshes skipped)."""
    found = []
    for p in map(Path, paths):
        if p.is_dir():
            found += sorted(q for q in p.rglob("*") if q.suffix.lower() in SUFFIXES and q.is_file()
                            and not q.name.startswith(("~$", ".~")) and not BACKUP.search(q.stem))
        else:
            found.append(p)
    return found


COLLECT_BOOKS = 50  # workbooks between full garbage collections in a folder run
_refreshed_here = 0  # workbooks this process refreshed for a folder run


def _one(args) -> Report:
    """One workbook of a folder run, in a worker or in the run's own process. Each workbook leaves cycles
    (XML parsers and their handlers) that only a full garbage collection frees: every ``COLLECT_BOOKS``
    workbooks there is one, so that memory stays flat however many workbooks a process refreshes."""
    global _refreshed_here
    path, check, backup, workers = args
    report = refresh_file(path, check, backup, workers=workers)
    _refreshed_here += 1
    if _refreshed_here % COLLECT_BOOKS == 0:
        gc.collect()
    return report


def run(paths, check: bool = False, backup: bool = False, jobs: int | None = None, report_to=None) -> int:
    """Refresh every workbook; each one's report is printed (or appended to the file ``report_to``) as soon as
    it finishes; 0 only when everything succeeded.

    ``jobs`` processes (default: one per CPU core): several workbooks are refreshed that many at a time, with
    at most twice that many handed out, so memory stays flat however many workbooks there are; a single large
    workbook has its sheets split over them. A progress bar counts the workbooks on a terminal (stderr). A run
    stopped part way is resumed by running it again: the workbooks it finished are up to date and are left as
    they are (their reports say "nothing changed").
    """
    jobs = jobs or os.cpu_count() or 1
    books = workbooks(paths)
    if not books:
        print("no workbooks (.xlsx, .xlsm) found in " + ", ".join(map(str, paths)))
        return 2
    tasks = [(f, check, backup, 1 if len(books) > 1 else jobs) for f in books]
    bar = None
    if len(tasks) > 1 and sys.stderr.isatty():
        from tqdm import tqdm

        bar = tqdm(total=len(tasks), unit="workbook", file=sys.stderr)
    try:
        out = sys.stdout if report_to is None else open(report_to, "a", encoding="utf-8")
    except OSError as err:
        print(f"degreewise refresh: --report-to: cannot write {report_to} ({err.strerror}); nothing was refreshed",
              file=sys.stderr)
        return 2
    done, bad, all_ok = 0, [], True

    def say(line: str) -> None:
        if bar is not None and out is sys.stdout:
            bar.write(line, file=out)  # above the bar
        else:
            print(line, file=out)

    def finished(r: Report) -> None:  # written out and dropped: no report is kept
        nonlocal done, all_ok
        for line in r.each_line(check):
            say(line)
        out.flush()
        done += 1
        all_ok = all_ok and r.ok
        if r.error:
            bad.append(str(r.path))
        if bar is not None:
            bar.update()

    try:
        if jobs > 1 and len(tasks) > 1:
            _in_pool(tasks, jobs, finished)
        else:
            for t in tasks:
                finished(_one(t))
        if done > 1:
            summary = (f"{done} workbooks: {done - len(bad)} read and computed, {len(bad)} not refreshed"
                       + (": " + ", ".join(bad) if bad else ""))
            say(summary)
            if out is not sys.stdout:
                print(summary)
    finally:
        if bar is not None:
            bar.close()
        if out is not sys.stdout:
            out.close()
    return 0 if all_ok else 1


def _in_pool(tasks: list, jobs: int, finished) -> None:
    """``_one`` of every task in ``jobs`` processes, at most 2 ``jobs`` tasks handed out at a time; ``finished``
    gets each report as it comes back (a worker that died: a report saying so)."""
    from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
    from concurrent.futures.process import BrokenProcessPool
    from itertools import islice

    waiting = iter(tasks)
    with ProcessPoolExecutor(max_workers=jobs, initializer=files.die_with_parent) as pool:
        running = {}
        while True:
            for task in islice(waiting, 2 * jobs - len(running)):
                try:
                    running[pool.submit(_one, task)] = task[0]
                except BrokenProcessPool as err:
                    finished(Report(task[0], error=f"the process refreshing it stopped ({err!r})"))
            if not running:
                return
            done, _ = wait(running, return_when=FIRST_COMPLETED)
            for future in done:
                path = running.pop(future)
                try:
                    report = future.result()
                except Exception as err:  # a worker that died: the others are still reported  # noqa: BLE001
                    report = Report(path, error=f"the process refreshing it stopped ({err!r})")
                finished(report)
