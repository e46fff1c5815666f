"""Plain arithmetic of a stored formula that has no stored value.

A workbook written by a script, or saved without calculation, holds formula cells
with no value. Among the standards such a cell is not blank: the refresh computes
the ones whose value is certain (numbers, texts, TRUE/FALSE, single-cell references
on any sheet, the operators + - * / ^ %, unary signs and brackets, with the
spreadsheet's precedence and its coercions: a blank cell is 0, a logical 1 or 0, a
numeric text its number), and refuses every other (a function, a range, a comparison)
through the caller's ``refused``. The formula is read by openpyxl's tokenizer; the
refresh imports this module only for a workbook that has such cells.
"""

from __future__ import annotations

import math
import operator
from collections.abc import Callable

from openpyxl.formula.tokenizer import Token, Tokenizer

ERRORS = frozenset(("#NULL!", "#DIV/0!", "#VALUE!", "#REF!", "#NAME?", "#NUM!", "#N/A", "#GETTING_DATA",
                    "#SPILL!", "#CALC!", "#FIELD!", "#BLOCKED!", "#CONNECT!", "#BUSY!", "#UNKNOWN!"))


def evaluate_arithmetic(text: str, cell: Callable[[str], object], refused: Callable[[str], Exception]):
    """The value of formula ``text`` (without '='); ``cell(reference)`` gives a referenced cell's value and
    ``refused(why)`` the exception to raise where the formula is not plain arithmetic.

    Precedence, highest first: unary sign, %, ^, * and /, + and - (the spreadsheet's own order, so
    -2^2 is 4). An error operand gives that error, a division by zero #DIV/0!, a result beyond the double
    range #NUM!, as the spreadsheet shows them.
    """
    try:
        items = [t for t in Tokenizer("=" + text).items if t.type != Token.WSPACE]
    except Exception as err:  # the tokenizer's own complaint about unbalanced brackets or quotes  # noqa: BLE001
        raise refused(f"it cannot be read: {err}") from None
    parser = _Parser(items, cell, refused)
    try:
        value = parser.sum()
    except RecursionError:
        raise refused("its brackets are nested too deeply") from None
    if parser.at < len(items):
        raise refused(f"it uses {items[parser.at].value!r}, which is not plain arithmetic")
    return str(value) if isinstance(value, _ErrorValue) else value


class _ErrorValue(str):
    """An error value (#DIV/0! …): an operation with one as an operand gives it."""


def _number(v):
    """An operand as arithmetic sees it (blank 0, logical 1/0, numeric text its number), or an error value."""
    if v is None:
        return 0.0
    if isinstance(v, (bool, int, float)):
        return float(v)
    if isinstance(v, _ErrorValue) or v in ERRORS:
        return _ErrorValue(v)
    try:
        return float(str(v).strip())
    except ValueError:
        return _ErrorValue("#VALUE!")


def _divide(a: float, b: float):
    return a / b if b else _ErrorValue("#DIV/0!")


def _power(a: float, b: float):
    try:
        out = a ** b
    except (OverflowError, ZeroDivisionError):
        return _ErrorValue("#NUM!")
    return out if isinstance(out, float) else _ErrorValue("#NUM!")  # a negative base's fractional power


def _apply(operation, *operands):
    """``operation`` of the operands as numbers; the first error among them instead, and #NUM! past the
    double range."""
    numbers = [_number(v) for v in operands]
    error = next((n for n in numbers if isinstance(n, _ErrorValue)), None)
    if error is not None:
        return error
    out = operation(*numbers)
    return _ErrorValue("#NUM!") if isinstance(out, float) and not math.isfinite(out) else out


class _Parser:
    """Recursive descent over the tokens, one method per precedence level."""

    def __init__(self, items, cell, refused):
        self.items, self.cell, self.refused, self.at = items, cell, refused, 0

    def _peek(self, kind: str, values: str):
        t = self.items[self.at] if self.at < len(self.items) else None
        if t is not None and t.type == kind and t.value in values:
            self.at += 1
            return t.value
        return None

    def sum(self):
        value = self._product()
        while (op := self._peek(Token.OP_IN, "+-")) is not None:
            value = _apply(operator.add if op == "+" else operator.sub, value, self._product())
        return value

    def _product(self):
        value = self._power()
        while (op := self._peek(Token.OP_IN, "*/")) is not None:
            value = _apply(operator.mul if op == "*" else _divide, value, self._power())
        return value

    def _power(self):
        value = self._percent()
        while self._peek(Token.OP_IN, "^") is not None:
            value = _apply(_power, value, self._percent())
        return value

    def _percent(self):
        value = self._signed()
        while self._peek(Token.OP_POST, "%") is not None:
            value = _apply(lambda v: v / 100, value)
        return value

    def _signed(self):
        op = self._peek(Token.OP_PRE, "+-")
        if op is not None:
            return _apply(operator.neg if op == "-" else float, self._signed())
        return self._operand()

    def _operand(self):
        if self.at >= len(self.items):
            raise self.refused("it ends where a value is expected")
        t = self.items[self.at]
        self.at += 1
        if t.type == Token.PAREN and t.subtype == Token.OPEN:
            value = self.sum()
            if self._peek(Token.PAREN, ")") is None:
                raise self.refused("its brackets do not balance")
            return value
        if t.type != Token.OPERAND:
            raise self.refused(f"it uses {t.value!r}, which is not plain arithmetic")
        if t.subtype == Token.NUMBER:
            return float(t.value)
        if t.subtype == Token.TEXT:
            return t.value[1:-1].replace('""', '"')
        if t.subtype == Token.LOGICAL:
            return t.value.upper() == "TRUE"
        if t.subtype == Token.ERROR:
            return _ErrorValue(t.value.upper())
        value = self.cell(t.value)  # a reference; the caller refuses anything but a single cell
        if isinstance(value, str) and value in ERRORS:
            return _ErrorValue(value)
        return 0.0 if value is None else value
