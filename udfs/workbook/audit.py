"""The audit trail of a refresh: what it did to one workbook, cell by cell, and when two machines' numbers
count as the same."""

from __future__ import annotations

import tempfile
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

from .formula import Area
from .spool import Kept, read_each

# Two machines' results agree when they differ by at most this relative amount: numpy's and OpenBLAS's
# kernels (AVX2, AVX-512, SSE) round differently in the last digits. Measured on the demo workbooks
# (1589 numbers, 2026-12-04): AVX-512 against SSE kernels at most 2.8e-11 (a spread p-value under 1/y
# weights, which are settled iteratively), against AVX2 at most 5.4e-12; every other quantity within the
# engine's 4e-12 of exact. A refresh keeps a stored number that agrees with the new one, so a colleague's
# machine neither rewrites nor lists it; any larger difference is written and listed.
AGREE = 1e-10
LOST = "(this line could not be read back)"


def agrees(old, new) -> bool:
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


def change(old, new) -> str:
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
    changes: list[tuple] = field(default_factory=list)  # anchor, shape, cells, text or where it is kept (``trail``)
    blocked: list[tuple[str, str]] = field(default_factory=list)
    left_alone: list[tuple[str, str]] = field(default_factory=list)
    failed: list[tuple[str, str]] = field(default_factory=list)
    spills: list[tuple[str, Area]] = field(default_factory=list)  # anchors whose results now cover a range
    notes: list[str] = field(default_factory=list)  # how the run went, where the user should know
    changed: bool = False  # some value or stored formula changes
    written: bool = False  # the file was rewritten
    error: str | None = None
    backup: Path | None = None
    # puts a formula's line of the audit trail aside while the sheets are computed (``Spooled.keep``): a first
    # refresh of 3000 sheets writes 25 MB of it; ``settle`` moves the lines to the report's own file
    keep: Callable[[bytes], Kept] | None = field(default=None, repr=False, compare=False)
    _trail: object = field(default=None, repr=False, compare=False)  # the lines' file, read as they are printed

    def add_change(self, anchor: str, shape: tuple[int, int], cells: int, text: str) -> None:
        """One formula's changed cells in the audit trail, as text (put aside if ``keep`` is set)."""
        self.changes.append((anchor, shape, cells, text if self.keep is None else self.keep(text.encode())))

    def settle(self, folder: str | None = None) -> None:
        """The lines put aside moved one by one, before the spool goes, to a temporary file of the report's own
        in ``folder`` (beside the spool folder, not in it; closed by ``close``); nothing more is put aside. Lines
        that cannot be read back are replaced by a word saying so, and a note: the cells were written."""
        self.keep = None
        kept = [t for *_, t in self.changes if isinstance(t, Kept)]
        if not kept:
            return
        trail, spans = tempfile.TemporaryFile(dir=folder), []
        try:
            for data in read_each(kept):
                spans.append((trail.tell(), len(data)))
                trail.write(data)
            trail.flush()
        except OSError as err:
            trail.close()
            self.notes.append(f"the audit trail's lines could not be read back ({err.strerror or err}); "
                              "the refreshed cells are as the head line says")
            spans, trail = [LOST] * len(kept), None
        self._trail, where = trail, iter(spans)
        self.changes = [(a, shape, n, next(where) if isinstance(t, Kept) else t) for a, shape, n, t in self.changes]

    def close(self) -> None:
        """The report's file of lines closed (the report is printed)."""
        if self._trail is not None:
            self._trail.close()
            self._trail = None

    def _text(self, line) -> str:
        """A line of the audit trail: its text, or where it is in the report's file."""
        if isinstance(line, str):
            return line
        self._trail.seek(line[0])
        return self._trail.read(line[1]).decode()

    def trail(self):
        """(anchor, shape, cells changed, their changes as text) of each formula whose cells changed, in order."""
        for anchor, shape, n, line in self.changes:
            yield anchor, shape, n, self._text(line)

    def __getstate__(self) -> dict:  # a report sent from a worker process carries its lines as text
        state = dict(self.__dict__)
        state["changes"] = list(self.trail())
        state["_trail"] = None
        return state

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
        for anchor, (height, width), n, listed in self.trail():
            shape = "" if height == width == n == 1 else f" (result {height} x {width}), {n} cells"
            yield f"  {verb} {anchor}{shape}: {listed}"
        yield from (f"  message {c}: {text}" for c, text in self.messages)
        yield from (f"  blocked {c}: {why}" for c, why in self.blocked)
        yield from (f"  left alone {c}: {why}" for c, why in self.left_alone)
        yield from (f"  failed {c}: {why}" for c, why in self.failed)
        if self.backup:
            yield f"  original kept as {self.backup}"
        yield from (f"  note: {n}" for n in self.notes)


LISTS = ("refreshed", "messages", "changes", "blocked", "left_alone", "failed", "spills")  # a Report's entries
