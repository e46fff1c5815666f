"""Reading CALIB_* formulas as the workbook stores them: one call, literal or reference arguments.

Only formulas whose result is certain are computed: a single CALIB_* call whose
arguments are empty (omitted), numbers, texts, TRUE/FALSE, references or
ranges (same or other sheet, absolute or relative, whole columns), defined
names that stand for a reference, array constants ({1;25;60}, {"1/x"}), or nested
CALIB_* calls. Anything else (an operator, another function, a spill reference) is
`Unsupported`.

Not openpyxl's tokenizer: importing it adds 0.14-0.19 s to every refresh (about 15 % of the command's own
imports, measured with -X importtime), and its tokens would still need this scanner's grammar on top.
"""

from __future__ import annotations

import functools
import re
from dataclasses import dataclass

from ..catalogue import FUNCTIONS
from ..xlsx.cells import CELL, MAX_COL, MAX_ROW, column_letters, column_number

NAMES = frozenset(name.upper() for name in FUNCTIONS)  # the family, as the spreadsheet shows it
MENTION = re.compile(r"CALIB_[A-Z]+\s*\(", re.IGNORECASE)
# How a stored formula names a user-defined function (ECMA-376 Part 1, 18.17 and MS-XLSX 2.2.2, formula
# grammar: user-defined-function-call with an optional book-prefix "[n]!"), each form optional:
#   [1]!                an add-in's function, the add-in being external book 1 of the workbook
#   _xludf.             a function the program did not know when it saved (future/unknown functions)
#   _xll.               a function registered by a compiled (XLL) add-in
#   _xldudf_NS_         a custom function of an Office.js add-in (in-workbook Python), namespace NS
#   NS.                 the same as typed, with its namespace
# then the name in any case: CALIB_ORDER, or calib_order as the VBA wrappers declare it.
HEAD = re.compile(r"(?:\[\d+\]!)?(?:_xludf\.|_xll\.|_xldudf_(?:[A-Za-z0-9]+_)*?)?(?:[A-Za-z][A-Za-z0-9]*\.)*"
                  r"(CALIB_[A-Za-z]+)\s*\(", re.IGNORECASE)
_NUMBER = re.compile(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$")
_COL = r"\$?([A-Za-z]{1,3})"
_SHEET = r"(?:'((?:[^']|'')+)'|([A-Za-z_][\w.]*))!"
_REF = re.compile(rf"^(?:{_SHEET})?(?:{CELL}(?::{CELL})?|{_COL}:{_COL})$")
_NAME = re.compile(r"^[A-Za-z_\\][\w.]*$")


class Unsupported(Exception):
    """The formula is not one the refresh can compute with certainty; the message says why."""


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
class Constant:
    """An array constant as stored ({1;25;60}: rows split by ";", columns by ","), rows of values."""

    rows: tuple

    def value(self):
        """As the spreadsheet hands it to a function: one value, or a list of rows."""
        return self.rows[0][0] if len(self.rows) == len(self.rows[0]) == 1 else [list(r) for r in self.rows]


@dataclass(frozen=True)
class Call:
    name: str
    args: tuple  # each: None (omitted), float, str, bool, Constant, Area or Call


def _tokens(text: str):
    """(index, character) of every character outside texts ("..." with "" for a quote) and quoted
    sheet names ('Run (2'!, 'it''s'!): the one scan behind every bracket and comma of a formula."""
    i, n = 0, len(text)
    while i < n:
        ch = text[i]
        if ch == '"' or ch == "'":
            end = i
            while True:
                end = text.find(ch, end + 1)
                if end < 0:
                    raise Unsupported("the formula's quotes or brackets do not balance")
                if text.startswith(ch, end + 1):  # a doubled quote stands for itself
                    end += 1
                    continue
                break
            i = end + 1
            continue
        yield i, ch
        i += 1


def _split_args(text: str, separator: str = ",") -> list[str]:
    """The top-level arguments of an argument list (or the rows of an array constant, with ";")."""
    args, depth, start = [], 0, 0
    for i, ch in _tokens(text):
        if ch in "({":
            depth += 1
        elif ch in ")}":
            depth -= 1
        elif ch == separator and depth == 0:
            args.append(text[start:i])
            start = i + 1
    if depth != 0:
        raise Unsupported("the formula's quotes or brackets do not balance")
    args.append(text[start:])
    return args


def _closing(text: str, open_at: int) -> int:
    """The index of the bracket that closes the one at ``open_at``; -1 if none does."""
    depth = 0
    for i, ch in _tokens(text[open_at:]):
        if ch == "(":
            depth += 1
        elif ch == ")":
            depth -= 1
            if depth == 0:
                return open_at + i
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
    body = text.strip().lstrip("=").strip()
    m = HEAD.match(body)
    if not m or m.group(1).upper() not in NAMES:
        raise Unsupported("the formula mixes CALIB_* with other functions or operators")
    open_at = m.end() - 1
    close = _closing(body, open_at)
    if close < 0:
        raise Unsupported("the formula's quotes or brackets do not balance")
    if close != len(body) - 1:
        raise Unsupported("the formula mixes CALIB_* with other functions or operators")
    inner = body[open_at + 1:close]
    return m.group(1).upper(), tuple(_split_args(inner) if inner.strip() else [])


def _constant(text: str):
    """One element of an array constant or a literal argument: a number, a text or a logical; else None."""
    t = text.strip()
    if _NUMBER.match(t):
        return float(t)
    if len(t) >= 2 and t[0] == '"' and t[-1] == '"' and '"' not in t[1:-1].replace('""', ""):
        return t[1:-1].replace('""', '"')
    if t.upper() in ("TRUE", "FALSE"):
        return t.upper() == "TRUE"
    return None


def _array(text: str) -> Constant:
    """{1;25;60} or {10,80} or {"1/x"}: rows split by ";", elements by "," (the stored form)."""
    rows = tuple(tuple(_constant(e) for e in _split_args(r)) for r in _split_args(text[1:-1], ";"))
    if any(v is None for r in rows for v in r) or len({len(r) for r in rows}) != 1:
        raise Unsupported(f"the array constant {text} holds something other than numbers, texts and "
                          "TRUE/FALSE in rows of one length")
    return Constant(rows)


def _argument(text: str, sheet: str, names: dict):
    t = text.strip()
    if t == "":
        return None
    if t.startswith("{") and t.endswith("}"):
        return _array(t)
    literal = _constant(t)
    if literal is not None:
        return literal
    if HEAD.match(t):
        return parse_call(t, sheet, names)
    area = reference(t, sheet)
    if area is not None:
        if area.right > MAX_COL or (area.top is not None and area.bottom > MAX_ROW):
            raise Unsupported(f"the range {t} reaches beyond the sheet's last row ({MAX_ROW}) or column (XFD)")
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


_PLAIN_SHEET = re.compile(r"[^\W\d][\w.]*")
_LIKE_A_REFERENCE = re.compile(r"[A-Za-z]{1,3}\d+|(?:R\d*)?(?:C\d*)?|TRUE|FALSE", re.IGNORECASE)


def quote_sheet(name: str) -> str:
    """A sheet name as a formula writes it: plain when it is a plain word (letters, digits, _ and .,
    not starting with a digit, not read as a cell or R1C1 reference or a logical), otherwise in
    single quotes with each quote doubled ('Run 2', 'it''s')."""
    if _PLAIN_SHEET.fullmatch(name) and not _LIKE_A_REFERENCE.fullmatch(name):
        return name
    return "'" + name.replace("'", "''") + "'"


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
