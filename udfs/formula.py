"""Reading CALIB_* formulas as the workbook stores them: one call, literal or reference arguments.

Only formulas whose result is certain are computed: a single CALIB_* call whose
arguments are empty (omitted), numbers, texts, TRUE/FALSE, references or
ranges (same or other sheet, absolute or relative, whole columns), defined
names that stand for a reference, or nested CALIB_* calls. Anything else (an
operator, another function, a spill reference) is `Unsupported`.
"""

from __future__ import annotations

import functools
import re
from dataclasses import dataclass

NAMES = ("CALIB_ORDER", "CALIB_ORDERS", "CALIB_SEQF", "CALIB_COEFS", "CALIB_STATS", "CALIB_PREDICT",
         "CALIB_INVERSE", "CALIB_RESIDUALS", "CALIB_CHECKS", "CALIB_COMPARE", "CALIB_LABELS", "CALIB_VERSION")
MENTION = re.compile(r"CALIB_[A-Z]+\s*\(", re.IGNORECASE)
_PREFIX = re.compile(r"^(?:_xludf\.|_xll\.)", re.IGNORECASE)
_NUMBER = re.compile(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$")
_CELL = r"\$?([A-Za-z]{1,3})\$?(\d{1,7})"
_COL = r"\$?([A-Za-z]{1,3})"
_SHEET = r"(?:'((?:[^']|'')+)'|([A-Za-z_][\w.]*))!"
_REF = re.compile(rf"^(?:{_SHEET})?(?:{_CELL}(?::{_CELL})?|{_COL}:{_COL})$")
_NAME = re.compile(r"^[A-Za-z_\\][\w.]*$")


class Unsupported(Exception):
    """The formula is not one the refresh can compute with certainty; the message says why."""


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
    m = re.fullmatch(_CELL, ref)
    if not m:
        raise ValueError(f"not a cell reference: {ref}")
    return int(m.group(2)), column_number(m.group(1))


@dataclass(frozen=True)
class Area:
    """A rectangle on a sheet; rows or columns None for a whole column."""

    sheet: str
    top: int | None
    left: int
    bottom: int | None
    right: int

    def contains(self, sheet: str, row: int, col: int) -> bool:
        return (sheet == self.sheet and self.left <= col <= self.right
                and (self.top is None or self.top <= row <= self.bottom))

    def overlaps(self, other: "Area") -> bool:
        if self.sheet != other.sheet or self.right < other.left or other.right < self.left:
            return False
        if self.top is None or other.top is None:
            return True
        return not (self.bottom < other.top or other.bottom < self.top)


@dataclass(frozen=True)
class Call:
    name: str
    args: tuple  # each: None (omitted), float, str, bool, Area or Call


def _split_args(text: str) -> list[str]:
    args, depth, quoted, start = [], 0, False, 0
    i = 0
    while i < len(text):
        ch = text[i]
        if quoted:
            if ch == '"':
                if i + 1 < len(text) and text[i + 1] == '"':
                    i += 1
                else:
                    quoted = False
        elif ch == '"':
            quoted = True
        elif ch == "'":
            close = text.find("'!", i + 1)
            i = close if close > i else i
        elif ch in "({":
            depth += 1
        elif ch in ")}":
            depth -= 1
        elif ch == "," and depth == 0:
            args.append(text[start:i])
            start = i + 1
        i += 1
    if quoted or depth != 0:
        raise Unsupported("the formula's quotes or brackets do not balance")
    args.append(text[start:])
    return args


def _closing(text: str, open_at: int) -> int:
    depth, quoted = 0, False
    for i in range(open_at, len(text)):
        ch = text[i]
        if ch == '"':
            quoted = not quoted
        elif not quoted and ch == "(":
            depth += 1
        elif not quoted and ch == ")":
            depth -= 1
            if depth == 0:
                return i
    return -1


def parse_call(text: str, sheet: str, names: dict) -> Call:
    """The CALIB_* call in ``text`` (formula text without '='), evaluated on ``sheet``.

    ``names`` maps defined names (upper case) to their reference text, looked up
    first as (sheet, NAME) for sheet scope, then (None, NAME).
    """
    name, raw = _call_parts(text)
    return Call(name, tuple(_argument(a, sheet, names) for a in raw))


@functools.lru_cache(maxsize=4096)
def _call_parts(text: str) -> tuple[str, tuple[str, ...]]:
    """The function name and the raw argument texts of a CALIB_* call (the same on every sheet)."""
    body = _PREFIX.sub("", text.strip().lstrip("=").strip())
    m = re.match(r"^([A-Za-z_][\w.]*)\s*\(", body)
    if not m or m.group(1).upper() not in NAMES:
        raise Unsupported("the formula mixes CALIB_* with other functions or operators")
    open_at = m.end() - 1
    close = _closing(body, open_at)
    if close != len(body) - 1:
        raise Unsupported("the formula mixes CALIB_* with other functions or operators")
    inner = body[open_at + 1:close]
    return m.group(1).upper(), tuple(_split_args(inner) if inner.strip() else [])


def _argument(text: str, sheet: str, names: dict):
    t = text.strip()
    if t == "":
        return None
    if _NUMBER.match(t):
        return float(t)
    if len(t) >= 2 and t[0] == '"' and t[-1] == '"' and '"' not in t[1:-1].replace('""', ""):
        return t[1:-1].replace('""', '"')
    if t.upper() in ("TRUE", "FALSE"):
        return t.upper() == "TRUE"
    if MENTION.match(_PREFIX.sub("", t)):
        return parse_call(t, sheet, names)
    area = reference(t, sheet)
    if area is not None:
        return area
    if _NAME.match(t):
        target = names.get((sheet, t.upper()), names.get((None, t.upper())))
        if target is None:
            raise Unsupported(f"the name '{t}' is not defined in the workbook")
        area = reference(target.lstrip("="), sheet)
        if area is None:
            raise Unsupported(f"the name '{t}' does not stand for a single reference")
        return area
    raise Unsupported(f"the argument '{t}' is not a number, text, reference or CALIB_* call")


@functools.lru_cache(maxsize=2**16)
def reference(text: str, sheet: str) -> Area | None:
    """The Area of a reference like A1, $A$2:$A$9, 'Run 2'!B2:B9 or Sheet1!A:A; None if it is not one
    (an Area is immutable, so each distinct reference is parsed once)."""
    m = _REF.match(text.strip())
    if not m:
        return None
    quoted, plain, c1, r1, c2, r2, whole1, whole2 = m.groups()
    on = quoted.replace("''", "'") if quoted else (plain or sheet)
    if whole1:
        a, b = sorted((column_number(whole1), column_number(whole2)))
        return Area(on, None, a, None, b)
    top, left = int(r1), column_number(c1)
    bottom, right = (int(r2), column_number(c2)) if c2 else (top, left)
    top, bottom = sorted((top, bottom))
    left, right = sorted((left, right))
    return Area(on, top, left, bottom, right)


_SHIFT = re.compile(r"""("(?:[^"]|"")*")|('(?:[^']|'')+'!)|(?<![\w.$])(\$?)([A-Za-z]{1,3})(\$?)(\d{1,7})(?![\w(!])"""
                    r"""|(?<![\w.$])(\$?)([A-Za-z]{1,3}):(\$?)([A-Za-z]{1,3})(?![\w(!])""")


def shift_references(text: str, rows: int, cols: int) -> str:
    """The formula of a filled (shared) cell: relative references moved by (rows, cols).

    Absolute parts ($A, $1) stay; texts in quotes and quoted sheet names are untouched.
    """

    def move(m):
        if m.group(1) or m.group(2):
            return m.group(0)
        if m.group(4):
            c_abs, col, r_abs, row = m.group(3), m.group(4), m.group(5), int(m.group(6))
            c = column_number(col) if c_abs else column_number(col) + cols
            r = row if r_abs else row + rows
            if c < 1 or r < 1:
                raise Unsupported("a filled formula would refer outside the sheet")
            return f"{c_abs}{column_letters(c)}{r_abs}{r}"
        out = []
        for dollar, col in ((m.group(7), m.group(8)), (m.group(9), m.group(10))):
            c = column_number(col) if dollar else column_number(col) + cols
            if c < 1:
                raise Unsupported("a filled formula would refer outside the sheet")
            out.append(f"{dollar}{column_letters(c)}")
        return ":".join(out)

    return _SHIFT.sub(move, text)


def areas_of(call: Call):
    """Every Area the call reads, nested calls included."""
    for a in call.args:
        if isinstance(a, Area):
            yield a
        elif isinstance(a, Call):
            yield from areas_of(a)
