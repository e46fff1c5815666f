"""A workbook's CALIB_* formulas computed without a spreadsheet program: found, ordered by dependency,
evaluated through the same ``degreewise`` functions the spreadsheet calls (their arguments read from the
cells as the refresh has left them so far), and written under the spill rules, sheet by sheet."""

from __future__ import annotations

import gc
import inspect
from dataclasses import dataclass

from .. import FUNCTIONS, functions
from ..xlsx.cells import MAX_ROW, cell_name
from ..xlsx.package import Workbook, dynamic_array_metadata, set_full_calc_on_load
from ..xlsx.sheet import Sheet
from .audit import LISTS, Report
from .dependencies import graph_of, late_reads, order_of
from .formula import (MENTION, Area, Call, Constant, Unsupported, areas_of, parse_call, quote_sheet, reference,
                      shift_references)
from . import processes
from .spill import write
from .spool import Spooled

CALLABLE = {name.upper(): getattr(functions, name) for name in FUNCTIONS}  # every function of the family
MAX_CHAIN = 50  # formulas without stored values, each reading the next: deeper is refused in words


class NoValue(Exception):
    """An argument reads a formula cell that has no stored value and cannot be computed; the message, naming
    the argument and the cell, becomes the CALIB_* cell's result."""


def parameters(name: str) -> tuple[str, ...]:
    """The argument names of a function of the family, in order."""
    return tuple(inspect.signature(CALLABLE[name]).parameters)


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
        self._names_of: dict[str, list[str]] = {}  # part -> the names of the sheets stored in it
        for name, part in self.book.sheet_parts.items():
            self._names_of.setdefault(part, []).append(name)
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
                sheet.write(key[0], {key[1]: value})

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
            order, dead = order_of(graph, by_cell, list(self.book.sheet_parts), report)
            plan = (by_cell, graph, dead, cm)
            shares = (processes.shares_of(order, by_cell, workers) if workers > 1 and len(order) >= processes.PARALLEL_FROM
                      else [order])
            if len(shares) > 1 and processes.can_fork():
                changed, arrays = processes.compute_in_processes(self, shares, plan, report, order)
            else:
                changed, arrays = self._compute(order, plan, report)
            late = late_reads(order, by_cell, graph, report.spills)
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
        return write(self.sheet(f.sheet), f, rows, cm, report)

    def _finish(self, part: str, changed: dict) -> None:
        """Forget the sheets of ``part``; store its XML in ``parts`` (and ``changed``) if its bytes change."""
        for name in self._names_of.get(part, ()):
            sheet = self.sheets.pop(name, None)
            self._unstored_of.pop(name, None)
            if sheet is not None and sheet.edited:
                data = sheet.render()
                if data != self.parts[part]:
                    self.parts[part] = changed[part] = self.parts.keep(data)


# a calibration left behind is a reference cycle (it keeps its orders' results, which refer back to it):
# collected after every this many finished sheets, not when Python's collector gets round to it (a
# 3000-sheet refresh held 44 MiB of them at its end); with what existed before the loop frozen, these
# collections cost nothing measurable (3000 sheets, two processes: time 0.98 of no collection, peak RSS
# summed 244 against 304 MiB; unfrozen they cost 4 % of the time)
COLLECT_EVERY = 100
