"""Cell addresses: column letters and numbers, A1 names, (row, column) from an A1 name, ranges, the sheet's limits."""

from __future__ import annotations

import functools
import re

from . import PackageError

MAX_ROW, MAX_COL = 1_048_576, 16_384  # the last row and column of a sheet (XFD)
CELL = r"\$?([A-Za-z]{1,3})\$?(\d{1,7})"  # an A1 address, each part optionally absolute: column, row


@functools.lru_cache(maxsize=4096)
def column_number(letters: str) -> int:
    n = 0
    for ch in letters.upper():
        n = n * 26 + ord(ch) - 64
    return n


@functools.lru_cache(maxsize=4096)
def column_letters(n: int) -> str:
    out = ""
    while n:
        n, rem = divmod(n - 1, 26)
        out = chr(65 + rem) + out
    return out


def cell_name(row: int, col: int) -> str:
    return column_letters(col) + str(row)


@functools.lru_cache(maxsize=2**16)
def parse_cell(ref: str) -> tuple[int, int]:
    m = re.fullmatch(CELL, ref)
    if not m:
        raise ValueError(f"not a cell reference: {ref}")
    return int(m.group(2)), column_number(m.group(1))


def letters_column(ref: str) -> int:
    """The column of a cell reference like "AB12" (its letters; cached by them)."""
    return column_number(ref.rstrip("0123456789"))


def box(part: str, ref: str) -> tuple[int, int, int, int]:
    """(top, left, bottom, right) of a range like B2:D6 stored in ``part``."""
    try:
        (top, left), (bottom, right) = (parse_cell(c.replace("$", "")) for c in (ref.split(":") + [ref])[:2])
    except ValueError:
        raise PackageError(f"part {part} holds the range {ref!r}, which is not a cell range") from None
    return min(top, bottom), min(left, right), max(top, bottom), max(left, right)


def cell_value(t: str, text: str | None, shared: list[str], where: str, row: int, col: int):
    """A stored cell's value from its type ``t`` and text: shared text looked up, booleans, numbers."""
    if text is None:
        return None
    if t == "s":
        if not text.strip().isdigit() or int(text) >= len(shared):
            raise PackageError(f"{where} has a cell ({cell_name(row, col)}) that refers to shared text {text!r}, "
                               f"but the workbook has {len(shared)}")
        return shared[int(text)]
    if t == "b":
        return text.strip() == "1"
    if t in ("inlineStr", "e", "str", "d"):
        return text
    try:
        return float(text)
    except ValueError:
        return text
