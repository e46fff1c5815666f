"""A package's parts with the changed ones, and the audit trail's lines, put aside in a temporary file, so
that a large workbook's refreshed sheets and its trail are not all held in memory."""

from __future__ import annotations

import os
import tempfile
from collections.abc import MutableMapping
from pathlib import Path
from typing import NamedTuple

from . import files


class Kept(NamedTuple):
    """Where a changed part's bytes (or an audit line) were put aside: a file of the spool folder, an offset and a
    size."""

    file: str
    offset: int
    size: int


class Spooled(MutableMapping):
    """A package's parts (name -> bytes), updated in place. With ``spool``, the changed parts and audit lines
    that ``keep`` puts aside are written to a temporary file (one per process) and read back when asked for,
    so that a large workbook's refreshed sheets are not all held in memory and a forked process hands back
    where they are, not their bytes; leaving the ``with`` block removes the files."""

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

    @property
    def folder(self) -> str | None:
        """The spool folder (None without a spool)."""
        return None if self._folder is None else self._folder.name

    @property
    def parent(self) -> str | None:
        """The folder the spool folder is in (None without a spool): what outlives the spool goes there."""
        return None if self._folder is None else str(Path(self._folder.name).parent)

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
        return b"".join(read_each([value])) if isinstance(value, Kept) else value

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


def read_each(kept: list[Kept]):
    """The bytes put aside at each of ``kept``, one by one (by this process or a forked one: the spool folder is
    shared), each spool file opened once."""
    opened: dict = {}
    try:
        for k in kept:
            f = opened.get(k.file) or opened.setdefault(k.file, open(k.file, "rb"))  # noqa: SIM115
            f.seek(k.offset)
            yield f.read(k.size)
    finally:
        for f in opened.values():
            f.close()
