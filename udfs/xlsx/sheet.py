"""One worksheet part, read once and edited row by row, every byte outside the edited rows kept.

The part is read by expat without namespace processing, so a name is matched as the sheet's own prefix
plus the local name (``x:row`` where the root is ``x:worksheet``); the parser reports where each element
starts, and that is how rows and cells are located: nothing is found by pattern matching. The first
reading keeps where each row is stored (three numbers per row), the formulas, merged blocks and tables; a
row's cells are parsed again only when a value of that row is asked for or the row is edited, so a large
sheet costs its bytes, not an object per cell. New cells and row tags are written with the standard
library's XML escaping (``xml.sax.saxutils``).
"""

from __future__ import annotations

from array import array
from bisect import bisect_left, bisect_right
from xml.parsers import expat
from xml.sax.saxutils import escape, quoteattr

from . import PackageError
from .cells import MAX_COL, box, cell_name, cell_value, column_letters, letters_column, parse_cell

MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"


# a block of at most this many rows keeps its rows parsed (8,000 formulas reading the same standards: 6.8 s
# -> 3.7 s); longer blocks are read in one pass and not kept, so a whole column costs no row objects
CACHED_ROWS = 1000
NOT_UTF8 = ("part {} is not UTF-8 text; the refresh edits only UTF-8 parts (save the workbook again in a "
            "spreadsheet program)")
AGAIN = "open and save the workbook in the spreadsheet program, then refresh it"


def _release(parser) -> None:
    """The parser's handlers dropped: they are closures that refer back to it, a cycle that only a full
    collection would free (about 64 KB a workbook in a folder run)."""
    for kind in ("StartElement", "EndElement", "CharacterData", "Comment", "ProcessingInstruction",
                 "StartCdataSection", "StartDoctypeDecl", "XmlDecl"):
        setattr(parser, kind + "Handler", None)


def tag(name: str, attrs: dict, empty: bool = False) -> str:
    """A start tag (or an empty element) with its attributes escaped."""
    inner = "".join(f" {k}={quoteattr(v)}" for k, v in attrs.items())
    return f"<{name}{inner}{'/' if empty else ''}>"


class Sheet:
    """A worksheet part: where each row is stored, formulas, merged blocks, tables; values asked for by cell
    or by block; rows edited and the part written back (``render``)."""

    def __init__(self, name: str, part: str, data: bytes, shared: list[str]):
        self.name, self.part, self.data, self.shared = name, part, data, shared
        self.formulas: dict = {}  # (row, col) -> (text, attributes of <f>)
        self.stored: set = set()  # formula cells that hold a stored value
        self.dynamic: dict = {}  # (row, col) -> cm attribute of a cell stored as a dynamic array
        self.merged: list = []  # (top, left, bottom, right) of each merged block
        self.tables: list = []  # (name, (top, left, bottom, right)) of each table, set by the workbook
        self.table_ids: list = []  # relationship ids of the sheet's table parts
        self.numbers, self.starts, self.ends = array("q"), array("q"), array("q")  # each stored row
        self.columns = None  # (first, last) column of the stored cells
        self._parsed: dict = {}  # row -> (row attributes, {col: (value, style, start, end)}), asked for one by one
        self._edits: dict = {}  # row -> [row attributes, {col: cell XML}, changed]
        self._written: dict = {}  # row -> {col: value the refresh wrote (None: emptied)}
        self._twice: dict = {}  # row -> a column stored twice in it (such a row is read, never edited)
        self._read()

    # --- the first reading -------------------------------------------------------------------------------

    def _read(self) -> None:
        """The first reading: one expat pass that keeps rows' places, formulas, merged blocks and tables.
        The handlers are closures over local variables: they run for every element of a large sheet."""
        data, part = self.data, self.part
        parser = expat.ParserCreate()
        parser.buffer_text = True
        row = since = 0
        ref = first = cell = f = value = None
        formula = ""
        text: list = []
        inside, lo, hi = False, MAX_COL + 1, 0
        C = V = F = ROW = ""
        other: dict = {}

        def root(name, attrs):
            nonlocal C, V, F, ROW
            prefix = name[: -len("worksheet")] if name.endswith("worksheet") else None
            if prefix is None or attrs.get("xmlns" + (":" + prefix[:-1] if prefix else "")) != MAIN:
                raise PackageError(f"part {part} is not a worksheet of the transitional spreadsheet namespace")
            self.prefix = prefix
            rel = next((k.split(":", 1)[1] for k, v in attrs.items() if k.startswith("xmlns:") and v == REL), "r")
            self._rel_id = rel + ":id"
            C, V, F, ROW = (prefix + t for t in ("c", "v", "f", "row"))
            other.update({prefix + t: t for t in ("sheetData", "mergeCell", "tablePart", "dimension")})
            self._row_end, self._cell_end, self._data_end = (("</" + prefix + t).encode()
                                                             for t in ("row", "c", "sheetData"))
            parser.StartElementHandler = start

        def collect(piece):
            text.append(piece)

        def start(name, attrs):
            nonlocal row, ref, first, since, cell, f, text, inside
            if name == C:
                r = attrs.get("r")
                if r is None:
                    since += 1
                else:
                    if ref is None:
                        first = r
                    ref, since = r, 0
                cell = attrs
            elif name == V:
                if f is not None:
                    text = []
                    parser.CharacterDataHandler = collect
            elif name == ROW:
                r = attrs.get("r")
                if r is not None and not r.isdigit():
                    raise PackageError(f"part {part} has a row numbered {r!r}")
                number = int(r) if r is not None else row + 1
                if number <= row and self.numbers:
                    what = "twice" if number in self.numbers else "out of order"
                    raise PackageError(f"part {part} has row {number} {what}; a refresh could lose a row: {AGAIN}")
                row, ref, since = number, None, 0
                self.numbers.append(number)
                self.starts.append(parser.CurrentByteIndex)
            elif name == F:
                f, text = attrs, []
                parser.CharacterDataHandler = collect
            else:
                t = other.get(name)
                if t == "sheetData":
                    inside, self._data_start = True, parser.CurrentByteIndex
                elif t == "mergeCell":
                    self.merged.append(box(part, attrs.get("ref", "")))
                elif t == "tablePart":
                    self.table_ids.append(attrs.get(self._rel_id))
                elif t == "dimension":
                    self._dimension = [parser.CurrentByteIndex, None, attrs]

        def end(name):
            nonlocal f, value, formula, lo, hi, inside
            if name == ROW:
                self.ends.append(self._end(parser.CurrentByteIndex, self._row_end))
                if ref is not None:  # cells stand in column order: the row's first and last give its extent
                    lo, hi = min(lo, letters_column(first)), max(hi, letters_column(ref) + since)
            elif f is not None:
                if name == C:
                    key = (row, self._column(ref, since))
                    self.formulas[key] = (formula, dict(f))
                    if cell.get("cm") is not None and f.get("t") == "array":
                        self.dynamic[key] = cell["cm"]
                    if value:
                        self.stored.add(key)
                    f = value = None
                elif name == V:
                    parser.CharacterDataHandler = None
                    value = "".join(text)
                elif name == F:
                    parser.CharacterDataHandler = None
                    formula = "".join(text)
            else:
                t = other.get(name)
                if t == "sheetData":
                    inside, self._data_end_at = False, parser.CurrentByteIndex
                elif t == "dimension":
                    self._dimension[1] = self._end(parser.CurrentByteIndex, ("</" + self.prefix + "dimension").encode())

        def refuse(what):
            def handler(*_):
                if inside:
                    raise PackageError(f"part {part} holds {what} among its cells, which the refresh does not edit; "
                                       f"{AGAIN}")
            return handler

        def doctype(*_):
            raise PackageError(f"unsafe XML in {part}: DTDForbidden (DTDs and entities are not allowed)")

        def declaration(version, encoding, standalone):
            if encoding is not None and encoding.upper().replace("-", "") != "UTF8":
                raise PackageError(NOT_UTF8.format(part))

        self.prefix, self._dimension, self._data_start, self._data_end_at = "", None, None, None
        parser.StartElementHandler, parser.EndElementHandler = root, end
        parser.StartDoctypeDeclHandler, parser.XmlDeclHandler = doctype, declaration
        parser.CommentHandler = refuse("a comment")
        parser.ProcessingInstructionHandler = refuse("a processing instruction")
        parser.StartCdataSectionHandler = refuse("a CDATA section")
        if data.startswith((b"\xff\xfe", b"\xfe\xff")):  # a UTF-16 byte order mark
            raise PackageError(NOT_UTF8.format(part))
        try:
            parser.Parse(data, True)
        except expat.ExpatError as err:
            raise PackageError(f"broken XML in {part}: {err}") from None
        finally:
            _release(parser)
        if self._data_start is None:
            raise PackageError(f"part {part} has no sheetData element")
        self._empty_data = self._data_end_at == self._end(self._data_end_at, self._data_end)  # <sheetData/>
        self.columns = (lo, hi) if hi else None
        # the last row that may hold something: stored, a formula's, or written (``write`` keeps it)
        self._last = max(self.numbers[-1] if self.numbers else 0, max((r for r, _ in self.formulas), default=0))

    def _end(self, at: int, closing: bytes) -> int:
        """Where an element ends, given where expat reports its end: at its closing tag (``closing`` plus
        ">") or, for an empty element, just past it."""
        data = self.data
        if data.startswith(closing, at) and data[at + len(closing): at + len(closing) + 1] in (b">", b" ", b"\t",
                                                                                               b"\n", b"\r"):
            return data.index(b">", at) + 1
        return at

    def _column(self, ref: str | None, since: int) -> int:
        """The column of a cell: its reference, or so many cells after the last one that had one."""
        return since if ref is None else self._cell_at(ref, since)[1]

    def _cell_at(self, ref: str, since: int = 0) -> tuple[int, int]:
        """(row, column) of a cell ``since`` cells after the reference ``ref``."""
        try:
            row, col = parse_cell(ref)
        except ValueError:
            raise PackageError(f"part {self.part} has a cell at {ref!r}, which is not a cell reference") from None
        return row, col + since

    # --- cells, parsed when asked for ----------------------------------------------------------------------

    def _cells(self, first: int, last: int):
        """(row, col, value, style, start, end) of each cell of stored rows ``first`` to ``last`` (indices),
        parsed in one pass over their bytes, and each of those rows' attributes."""
        data, p = self.data, self.prefix
        base = self.starts[first] - len(b"<w>")
        parser = expat.ParserCreate()
        parser.buffer_text = True
        out, rows, state = [], {}, {"i": first - 1, "ref": None, "since": 0, "text": [], "kind": None}
        c_tag, v_tag, is_tag, t_tag, row_tag = p + "c", p + "v", p + "is", p + "t", p + "row"

        def collect(text):
            state["text"].append(text)

        def start(name, attrs):
            if name == c_tag:
                ref = attrs.get("r")
                if ref is None:
                    state["since"] += 1
                else:
                    state["ref"], state["since"] = ref, 0
                state["cell"], state["at"], state["text"], state["kind"] = attrs, parser.CurrentByteIndex + base, [], None
            elif name == v_tag or (name == t_tag and state["kind"] == "is"):
                parser.CharacterDataHandler = collect
            elif name == is_tag:
                state["kind"] = "is"
            elif name == row_tag:
                state["i"] += 1
                state["ref"], state["since"] = None, 0
                rows[self.numbers[state["i"]]] = attrs

        def end(name):
            if name == c_tag:
                attrs = state["cell"]
                text = "".join(state["text"]) if state["text"] or state["kind"] else None
                row = self.numbers[state["i"]]
                ref = state["ref"]
                if ref is not None:
                    r, col = self._cell_at(ref, state["since"])
                    if r != row:
                        raise PackageError(f"part {self.part} has the cell {ref} in row {row}")
                else:
                    col = state["since"]
                value = cell_value(attrs.get("t", "n"), text, self.shared, f"part {self.part}", row, col)
                out.append((row, col, value, attrs.get("s"), state["at"],
                            self._end(parser.CurrentByteIndex + base, self._cell_end)))
            elif name == v_tag or name == t_tag:
                parser.CharacterDataHandler = None

        parser.StartElementHandler, parser.EndElementHandler = start, end
        stop = self.ends[last]
        try:
            parser.Parse(b"<w>", False)
            for at in range(self.starts[first], stop, 1 << 20):
                parser.Parse(data[at: min(at + (1 << 20), stop)], False)
            parser.Parse(b"</w>", True)
        except expat.ExpatError as err:
            raise PackageError(f"broken XML in {self.part}: {err}") from None
        finally:
            _release(parser)
        return out, rows

    @property
    def edited(self) -> bool:
        return any(edit[2] for edit in self._edits.values())

    def parse_rows(self, top: int, bottom: int) -> None:
        """Parse the stored rows ``top`` to ``bottom`` in one pass, for the cell questions that follow."""
        numbers, parsed = self.numbers, self._parsed
        i, j = bisect_left(numbers, top), bisect_right(numbers, bottom) - 1
        while i <= j and numbers[i] in parsed:  # only the stretch not parsed yet: each row is parsed once
            i += 1
        while j >= i and numbers[j] in parsed:
            j -= 1
        if i > j:
            return
        found, rows = self._cells(i, j)
        cells: dict = {row: {} for row in rows}
        for row, col, value, style, start, end in found:
            if col in cells[row]:
                self._twice.setdefault(row, col)
            cells[row][col] = (value, style, start, end)
        for row, attrs in rows.items():
            self._parsed.setdefault(row, (attrs, cells[row]))

    def _row(self, row: int) -> dict:
        """{col: (value, style, start, end)} of one stored row (empty if none), parsed once."""
        return self._stored_row(row)[1]

    def _stored_row(self, row: int) -> tuple[dict, dict]:
        """(row attributes, {col: (value, style, start, end)}) of one row; ({}, {}) if it is not stored."""
        found = self._parsed.get(row)
        if found is None:
            self.parse_rows(row, row)
            found = self._parsed.setdefault(row, ({}, {}))
        return found

    def value(self, row: int, col: int):
        """The cell's value as the refresh has left it so far."""
        written = self._written.get(row)
        if written is not None and col in written:
            return written[col]
        cell = self._row(row).get(col)
        return None if cell is None else cell[0]

    def row_state(self, row: int) -> tuple[dict, dict]:
        """A row as left so far: {col: (value, style, start, end)} as stored, {col: value} as written since."""
        return self._row(row), self._written.get(row, {})

    def style(self, row: int, col: int) -> str | None:
        cell = self._row(row).get(col)
        return None if cell is None else cell[1]

    def last_row(self) -> int:
        """The last row that holds a value (0 for an empty sheet)."""
        written = max((r for r, cells in self._written.items() if any(v is not None for v in cells.values())),
                      default=0)
        for i in range(len(self.numbers) - 1, -1, -1):
            if self.numbers[i] <= written:
                break
            if any(self.value(row, col) is not None for row, col, *_ in self._cells(i, i)[0]):
                return self.numbers[i]
        return written

    def block(self, top: int, bottom: int, left: int, right: int) -> list[list]:
        """The values of rows ``top`` to ``bottom``, columns ``left`` to ``right``, row by row. Rows past the
        last one stored or written are one shared blank row, so a whole column costs a pointer per row."""
        width = right - left + 1
        filled = min(bottom, max(self._last, top - 1))
        rows = [[None] * width for _ in range(filled - top + 1)]
        i, j = bisect_left(self.numbers, top), bisect_right(self.numbers, filled) - 1
        if j - i >= CACHED_ROWS:  # a long range: parsed in one pass and not kept
            for row, col, value, *_ in self._cells(i, j)[0]:
                if left <= col <= right:
                    rows[row - top][col - left] = value
        elif i <= j:  # a short range, such as standards that many formulas read: its rows parsed once
            self.parse_rows(top, filled)
            for row in self.numbers[i: j + 1]:
                for col, cell in self._parsed[row][1].items():
                    if left <= col <= right:
                        rows[row - top][col - left] = cell[0]
        written = self._written
        for row in (range(top, filled + 1) if filled - top < len(written) else list(written)):
            if top <= row <= filled and row in written:
                for col, value in written[row].items():
                    if left <= col <= right:
                        rows[row - top][col - left] = value
        rows += [[None] * width] * (bottom - filled)
        return rows

    # --- edits ---------------------------------------------------------------------------------------------

    def cell_markup(self, row: int, col: int) -> str:
        """The stored XML of one cell (as edited so far)."""
        edit = self._edits.get(row)
        if edit is not None:
            return edit[1][col]
        _, _, start, end = self._row(row)[col]
        return self.data[start:end].decode("utf-8")

    def write(self, row: int, values: dict) -> None:
        """Record the values the refresh gives cells of one row ({col: value}; None: the cell is emptied), for
        later readers."""
        if values:
            self._written.setdefault(row, {}).update(values)
            self._last = max(self._last, row)

    def set_cells(self, row: int, cells: dict) -> None:
        """Replace cells of one row: column -> cell XML, or None to remove the cell. A row whose cells come
        out as they were stored stays byte for byte."""
        edit = self._edits.get(row)
        if edit is None:
            attrs, stored = self._stored_row(row)
            if row in self._twice:
                raise PackageError(f"part {self.part} has the cell {cell_name(row, self._twice[row])} twice; a "
                                   f"refresh would lose one of them: {AGAIN}")
            if self._is_stored(row):
                edit = [dict(attrs), {c: self.data[s:e].decode("utf-8") for c, (_, _, s, e) in stored.items()}, False]
            else:
                edit = [{"r": str(row)}, {}, True]
            self._edits[row] = edit
        for col, xml in cells.items():
            if edit[1].get(col) == xml:
                continue
            if xml is None:
                edit[1].pop(col, None)
            else:
                edit[1][col] = xml
            edit[2] = True

    def _is_stored(self, row: int) -> bool:
        i = bisect_left(self.numbers, row)
        return i < len(self.numbers) and self.numbers[i] == row

    def cell_xml(self, row: int, col: int, value, style: str | None, formula: str | None = None,
                 array_ref: str | None = None, cm: str | None = None, stored_f: tuple | None = None) -> str:
        """XML of one cell holding ``value``, with a formula for an anchor (or ``stored_f``, the (text,
        attributes) of its stored <f> element). Texts and the file's own attribute values are escaped; a
        number's repr needs no escaping."""
        p = self.prefix
        head = f'<{p}c r="{column_letters(col)}{row}"' + ("" if style is None else f" s={quoteattr(style)}")
        f = ""
        if stored_f is not None:
            text, f_attrs = stored_f
            f = tag(p + "f", f_attrs, empty=not text) + (f"{escape(text)}</{p}f>" if text else "")
        elif formula is not None:
            f = tag(p + "f", {"t": "array", "ref": array_ref} if array_ref else {}) + f"{escape(formula)}</{p}f>"
            if cm:
                head += f" cm={quoteattr(cm)}"
        if value is None:
            return f"{head}>{f}</{p}c>" if f else head + "/>"
        if isinstance(value, bool):
            head, text = head + ' t="b"', "1" if value else "0"
        elif isinstance(value, (int, float)):
            text = repr(value)
        elif isinstance(value, str) and value.upper() == "#SPILL!":
            head, text = head + ' t="e"', value
        else:
            head, text = head + ' t="str"', escape(str(value))
        return f"{head}>{f}<{p}v>{text}</{p}v></{p}c>"

    def render(self) -> bytes:
        """The part: untouched rows as they were stored, edited rows written anew, in row order; the
        <dimension> widened to cover every cell written."""
        data, p = memoryview(self.data), self.prefix  # slices of a view: the kept bytes are copied once, by join
        changed = sorted(r for r, edit in self._edits.items() if edit[2])
        out = [data[: self._dimension[0]], self._dimension_tag(changed).encode(),
               data[self._dimension[1]: self._data_start]] if self._dimension else [data[: self._data_start]]
        if self._empty_data:
            out.append(tag(p + "sheetData", {}).encode())
            at = self._data_end_at
        else:
            at = self._data_start
        for r in changed:
            attrs, cells, _ = self._edits[r]
            i = bisect_left(self.numbers, r)
            stored = i < len(self.numbers) and self.numbers[i] == r
            out.append(data[at: self.starts[i] if i < len(self.numbers) else self._data_end_at])
            at = self.ends[i] if stored else (self.starts[i] if i < len(self.numbers) else self._data_end_at)
            attrs = {k: v for k, v in attrs.items() if k != "spans"}
            if cells:
                out.append((tag(p + "row", attrs) + "".join(cells[c] for c in sorted(cells)) + f"</{p}row>").encode())
            elif set(attrs) - {"r"}:  # a formatted or hidden row stays, without cells
                out.append(tag(p + "row", attrs, empty=True).encode())
        if self._empty_data:
            out += [data[at: self._data_end_at] if at < self._data_end_at else b"",
                    f"</{p}sheetData>".encode(), data[self._data_end_at:]]
        else:
            out.append(data[at:])
        return b"".join(out)

    def _dimension_tag(self, changed: list[int]) -> str:
        start, end, attrs = self._dimension
        old = self.data[start:end].decode("utf-8")
        filled = [r for r in changed if self._edits[r][1]]  # in row order
        if not filled:
            return old
        try:
            first, *rest = attrs.get("ref", "").replace("$", "").split(":")
            (r0, c0), (r1, c1) = parse_cell(first), parse_cell(rest[0] if rest else first)
        except (ValueError, IndexError):
            return old
        top, bottom = min(r0, filled[0]), max(r1, filled[-1])
        left = min(c0, *(min(self._edits[r][1]) for r in filled))
        right = max(c1, *(max(self._edits[r][1]) for r in filled))
        if self.numbers and self.columns:
            top, bottom = min(top, self.numbers[0]), max(bottom, self.numbers[-1])
            left, right = min(left, self.columns[0]), max(right, self.columns[1])
        ref = f"{cell_name(top, left)}:{cell_name(bottom, right)}"
        return old if ref == attrs.get("ref") else tag(self.prefix + "dimension", {**attrs, "ref": ref}, empty=True)
