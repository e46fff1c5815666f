"""A workbook file as a zip package: safe reading, cell values, and surgical edits of sheet XML.

Every part is read with limits (entry count, unpacked size, compression ratio)
and no XML part may declare a DTD or entities (``parse_xml``: defusedxml), so a
hostile file cannot expand or
reach outside. Nothing in a workbook is ever executed. Sheet XML is edited as
text inside <sheetData>, row by row, so every byte outside the cells that
change stays as it was.
"""

from __future__ import annotations

import copy
import gc
import html
import io
import posixpath
import re
import zipfile
import zlib
from array import array
from bisect import bisect_left
from dataclasses import dataclass, field
from pathlib import Path
from xml.etree import ElementTree as ET
from xml.parsers import expat

from defusedxml import ElementTree as SafeET
from defusedxml.common import DefusedXmlException
from lxml import etree

from .cells import cell_name, column_letters, column_number, parse_cell

MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
STRICT_MAIN = "http://purl.oclc.org/ooxml/spreadsheetml/main"
REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
METADATA_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships/sheetMetadata"
METADATA_TYPE = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheetMetadata+xml"
DYNAMIC_URI = "{bdbb8cdc-fa1e-496e-a857-3c3f30c029c3}"
# the dynamic-array record as the desktop program writes it: a metadata type, its future-metadata block, and
# the cell-metadata block (the `cm` index of a cell) that points at it
DYNAMIC_TYPE = ('<metadataType name="XLDAPR" minSupportedVersion="120000" copy="1" pasteAll="1" pasteValues="1" '
                'merge="1" splitFirst="1" rowColShift="1" clearFormats="1" clearComments="1" assign="1" coerce="1" '
                'cellMeta="1"/>')
DYNAMIC_NS = 'xmlns:xda="http://schemas.microsoft.com/office/spreadsheetml/2017/dynamicarray"'


def _dynamic_future(p: str = "", declare: str = "") -> str:
    """The future-metadata block of the dynamic-array record (elements with prefix ``p``)."""
    return (f'<{p}futureMetadata name="XLDAPR" count="1"><{p}bk><{p}extLst><{p}ext uri="{DYNAMIC_URI}">'
            f'<xda:dynamicArrayProperties{declare} fDynamic="1" fCollapsed="0"/></{p}ext></{p}extLst></{p}bk>'
            f'</{p}futureMetadata>')


METADATA_XML = ('<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
                f'<metadata xmlns="{MAIN}" {DYNAMIC_NS}><metadataTypes count="1">{DYNAMIC_TYPE}</metadataTypes>'
                f'{_dynamic_future()}<cellMetadata count="1"><bk><rc t="1" v="0"/></bk></cellMetadata></metadata>')
MAX_ROW, MAX_COL = 1_048_576, 16_384  # the last row and column of a sheet (XFD)

MAX_ENTRIES = 10_000
MAX_PART = 256 * 2**20
MAX_TOTAL = 1024 * 2**20
MAX_RATIO = 200


class PackageError(Exception):
    """The file cannot be refreshed safely; the message is one line for the user."""


def escape(text: str) -> str:
    """Text as XML character data: &, < and > escaped (quotes need none outside attributes)."""
    return html.escape(text, quote=False)


def _q(tag: str) -> str:
    return f"{{{MAIN}}}{tag}"


def text_of(name: str, data: bytes) -> str:
    """A part that the refresh edits as text: UTF-8, as spreadsheet programs write it, or a PackageError."""
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        raise PackageError(f"part {name} is not UTF-8 text; the refresh edits only UTF-8 parts "
                           "(save the workbook again in a spreadsheet program)") from None


def parse_xml(name: str, data: bytes):
    """The parsed XML part (defusedxml), or a one-line PackageError: a DTD or an entity is refused."""
    try:
        return SafeET.fromstring(data, forbid_dtd=True)
    except DefusedXmlException as err:
        raise PackageError(f"unsafe XML in {name}: {type(err).__name__} (DTDs and entities are not allowed)") from None
    except SafeET.ParseError as err:
        raise PackageError(f"broken XML in {name}: {err}") from None


class _RootReached(Exception):
    pass


def _refuse_dtd(name: str, data: bytes) -> None:
    """Refuse a part with a document type declaration, read by expat up to its root element only (a DTD can
    stand nowhere else, so what follows is parsed without one: no entity can be declared or expanded)."""
    parser = expat.ParserCreate()

    def doctype(*_):
        raise PackageError(f"unsafe XML in {name}: DTDForbidden (DTDs and entities are not allowed)")

    def root(*_):
        raise _RootReached

    parser.StartDoctypeDeclHandler, parser.StartElementHandler = doctype, root
    try:
        for start in range(0, len(data), 1 << 16):
            parser.Parse(data[start:start + (1 << 16)], False)
        parser.Parse(b"", True)
    except _RootReached:
        pass
    except expat.ExpatError as err:
        raise PackageError(f"broken XML in {name}: {err}") from None


CONTENT_TYPES = "http://schemas.openxmlformats.org/package/2006/content-types"
PACKAGE_RELS = "http://schemas.openxmlformats.org/package/2006/relationships"
# lxml for the parts the refresh and freeze edit as trees: prefixes and namespace declarations stay as the
# file has them. A part is first read by parse_xml (defusedxml: no DTD, no entity), then by this parser,
# which resolves no entity and reaches no network either.
_EDIT = etree.XMLParser(resolve_entities=False, no_network=True, load_dtd=False, remove_blank_text=False)


def edit_xml(name: str, data: bytes):
    """A part as an lxml tree to edit (refused like parse_xml refuses it)."""
    parse_xml(name, data)
    return etree.fromstring(data, _EDIT)


def xml_bytes(root) -> bytes:
    """An edited tree as a part, with the declaration spreadsheet programs write."""
    return etree.tostring(root, xml_declaration=True, encoding="UTF-8", standalone=True)


def rels_name(part: str) -> str:
    """The relationships part of ``part`` ("" for the package itself)."""
    folder, base = posixpath.split(part)
    return posixpath.join(folder, "_rels", base + ".rels")


def add_part(parts: dict, name: str, data: bytes, content_type: str, owner: str, rel_type: str) -> None:
    """Put the new part ``name`` into ``parts``, declared in [Content_Types].xml (an Override) and related
    from ``owner`` ("" for the package) under the first free rIdN; both edited as XML trees."""
    parts[name] = data
    types = edit_xml("[Content_Types].xml", parts["[Content_Types].xml"])
    etree.SubElement(types, f"{{{CONTENT_TYPES}}}Override", PartName="/" + name, ContentType=content_type)
    parts["[Content_Types].xml"] = xml_bytes(types)
    rels = rels_name(owner)
    root = edit_xml(rels, parts[rels]) if rels in parts else etree.Element(f"{{{PACKAGE_RELS}}}Relationships",
                                                                          nsmap={None: PACKAGE_RELS})
    ids, n = {r.get("Id") for r in root}, 1
    while f"rId{n}" in ids:
        n += 1
    target = posixpath.relpath(name, posixpath.dirname(owner) or ".")
    etree.SubElement(root, f"{{{PACKAGE_RELS}}}Relationship", Id=f"rId{n}", Type=rel_type, Target=target)
    parts[rels] = xml_bytes(root)


ENCRYPTED = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"  # a compound file: how a password-protected workbook is stored
CHUNK = 2**20  # bytes inflated at a time


def read_package(source) -> tuple[list[zipfile.ZipInfo], dict[str, bytes]]:
    """Every entry of the zip (a path, or the file's bytes) with its unpacked bytes, within the limits.

    The limits are checked on the declared sizes first, then held while inflating: each entry is read
    in chunks and refused as soon as it gives more than it declared, so an entry that lies about its
    size (with a matching CRC of what it declares) never inflates more than the limits."""
    try:
        data = source if isinstance(source, bytes) else Path(source).read_bytes()
        if data.startswith(ENCRYPTED):
            raise PackageError("the workbook is encrypted (password-protected); save it without a password "
                               "and try again")
        with zipfile.ZipFile(io.BytesIO(data)) as z:
            infos = z.infolist()
            names = [i.filename for i in infos]
            if len(set(names)) != len(names):
                twice = next(n for n in names if names.count(n) > 1)
                raise PackageError(f"the package holds two parts named {twice}; refusing an ambiguous file")
            if len(infos) > MAX_ENTRIES:
                raise PackageError(f"the package has {len(infos)} parts; refusing more than {MAX_ENTRIES}")
            total = 0
            for info in infos:
                if info.flag_bits & 0x1:
                    raise PackageError(f"part {info.filename} is encrypted; save the workbook without a password "
                                       "and try again")
                if info.file_size > MAX_PART:
                    raise PackageError(f"part {info.filename} unpacks to {info.file_size} bytes; "
                                       f"refusing parts over {MAX_PART // 2**20} MiB")
                if info.file_size > 2**20 and info.file_size > MAX_RATIO * max(info.compress_size, 1):
                    raise PackageError(f"part {info.filename} is compressed {info.file_size // max(info.compress_size, 1)}"
                                       " to 1; refusing what looks like a zip bomb")
                total += info.file_size
            if total > MAX_TOTAL:
                raise PackageError(f"the package unpacks to {total} bytes; refusing more than {MAX_TOTAL // 2**20} MiB")
            parts = {info.filename: _inflate(z, info) for info in infos}
        parse_xml("[Content_Types].xml", parts.get("[Content_Types].xml", b"<Types/>"))  # no DTD here either
        return infos, parts
    except zipfile.BadZipFile as err:
        raise PackageError(f"not a workbook package (zip): {err}") from None
    except (EOFError, OSError, zipfile.LargeZipFile, NotImplementedError, RuntimeError) as err:
        raise PackageError(f"the package cannot be read: {err}") from None
    except ValueError as err:
        raise PackageError(f"the package cannot be read: {err}") from None


def _inflate(z: zipfile.ZipFile, info: zipfile.ZipInfo) -> bytes:
    """The bytes of one entry, inflated a chunk at a time and at most one byte past its declared size
    (zipfile stops at the size the entry it opens declares, so it is opened as declaring one byte more,
    and the CRC is checked here, over the whole entry)."""
    allowed = copy.copy(info)
    allowed.file_size, allowed.CRC = info.file_size + 1, None
    chunks, size, crc = [], 0, 0
    with z.open(allowed) as stream:
        while size <= info.file_size:
            chunk = stream.read(CHUNK)
            if not chunk:
                break
            chunks.append(chunk)
            size += len(chunk)
            crc = zlib.crc32(chunk, crc)
    if size != info.file_size:
        raise PackageError(f"part {info.filename} does not unpack to its declared size "
                           f"({'more' if size > info.file_size else 'less'} than {info.file_size} bytes)")
    if crc != info.CRC:
        raise PackageError(f"part {info.filename} is damaged (its CRC-32 does not match)")
    return b"".join(chunks)


def write_package(path, infos: list[zipfile.ZipInfo], parts: dict[str, bytes], extra: list[str]) -> None:
    """Write the parts in their original order (then ``extra`` new ones) with their original entry data.

    Deflate at level 1: the fastest level, a few percent larger than the default, the same content.
    """
    with zipfile.ZipFile(path, "w") as z:
        for info in infos:
            z.writestr(info, parts[info.filename], compresslevel=1)
        for name in extra:
            z.writestr(zipfile.ZipInfo(name, date_time=(2026, 1, 1, 0, 0, 0)), parts[name],
                       compress_type=zipfile.ZIP_DEFLATED, compresslevel=1)


@dataclass
class Sheet:
    name: str
    part: str
    values: dict = field(default_factory=dict)  # (row, col) -> value
    formulas: dict = field(default_factory=dict)  # (row, col) -> (text, attributes of <f>)
    styles: dict = field(default_factory=dict)  # (row, col) -> s attribute
    dynamic: dict = field(default_factory=dict)  # (row, col) -> cm attribute of a cell stored as a dynamic array
    merged: list = field(default_factory=list)  # (top, left, bottom, right) of each merged block
    tables: list = field(default_factory=list)  # (name, (top, left, bottom, right)) of each table
    max_row: int = 0


def _rels(parts: dict[str, bytes], part: str) -> dict[str, tuple[str, str]]:
    folder = posixpath.dirname(part)
    name = rels_name(part)
    if name not in parts:
        return {}
    out = {}
    for rel in parse_xml(name, parts[name]):
        target = rel.get("Target", "")
        full = target.lstrip("/") if target.startswith("/") else posixpath.normpath(posixpath.join(folder, target))
        out[rel.get("Id")] = (rel.get("Type", ""), full)
    return out


def _box(part: str, ref: str) -> tuple[int, int, int, int]:
    """(top, left, bottom, right) of a range like B2:D6 stored in ``part``."""
    try:
        (top, left), (bottom, right) = (parse_cell(c.replace("$", "")) for c in (ref.split(":") + [ref])[:2])
    except ValueError:
        raise PackageError(f"part {part} holds the range {ref!r}, which is not a cell range") from None
    return min(top, bottom), min(left, right), max(top, bottom), max(left, right)


def _text(el) -> str:
    return "".join(t.text or "" for t in el.iter(_q("t")))


class Workbook:
    """The parts of one workbook that a refresh reads: sheets, names, shared strings; a sheet's cells when asked."""

    def __init__(self, parts: dict[str, bytes]):
        self.parts = parts
        root = _rels(parts, "")
        office = [t for (kind, t) in root.values() if kind.endswith("/officeDocument")]
        if not office or office[0] not in parts:
            raise PackageError("not a spreadsheet workbook: no workbook part")
        self.workbook_part = office[0]
        book = parse_xml(self.workbook_part, parts[self.workbook_part])
        if book.tag == f"{{{STRICT_MAIN}}}workbook":
            raise PackageError("the workbook is saved as Strict Open XML, which the refresh does not edit; "
                               "save it as an ordinary .xlsx (or .xlsm) workbook and try again")
        rels = _rels(parts, self.workbook_part)
        self.workbook_rels = rels
        strings_part = next((t for kind, t in rels.values() if kind.endswith("/sharedStrings")), None)
        self.shared = ([_text(si) for si in parse_xml(strings_part, parts[strings_part]).iter(_q("si"))]
                       if strings_part in parts else [])
        self.sheet_parts: dict[str, str] = {}  # each worksheet's name -> its part, in the workbook's order
        every = [sh.get("name", "") for sh in book.iter(_q("sheet"))]  # all sheets, chart and dialog sheets too
        for sh in book.iter(_q("sheet")):
            rid = sh.get(f"{{{REL}}}id")
            kind, target = rels.get(rid, ("", ""))
            if kind.endswith("/worksheet") and target in parts:
                self.sheet_parts[sh.get("name")] = target
        self.names = {}
        for dn in book.iter(_q("definedName")):
            scope = dn.get("localSheetId")  # ECMA-376 18.2.5: the index of the sheet among all <sheet> elements
            sheet = None
            if scope is not None:
                if not scope.isdigit() or int(scope) >= len(every):
                    raise PackageError(f"the defined name {dn.get('name')!r} in {self.workbook_part} has the "
                                       f"sheet scope {scope!r}, which is not a sheet of the workbook")
                sheet = every[int(scope)]
            self.names[(sheet, dn.get("name", "").upper())] = (dn.text or "").strip()

    def read_sheet(self, name: str) -> Sheet:
        """The worksheet ``name`` as its part now stands: cells, merged blocks and tables. Read as a stream
        (ElementTree's iterparse, each row dropped once read), so memory holds the cells' values, not the part's
        element tree; a DTD is refused first (``_refuse_dtd``), so no entity can be expanded."""
        sheet = Sheet(name, self.sheet_parts[name])
        part, table_ids, row_no, pending = sheet.part, [], 0, []
        data = self.parts[part]
        _refuse_dtd(part, data)
        events = ET.iterparse(io.BytesIO(data), ("start", "end"))
        collecting = gc.isenabled()
        gc.disable()  # the cells read make no reference cycles; collections over millions of them would be wasted
        try:
            for event, el in events:
                tag = el.tag
                if event == "start":
                    if tag == _SHEET_DATA:
                        rows = el
                    continue
                if tag == _CELL:
                    pending.append(el)
                elif tag == _ROW:
                    r_attr = el.get("r")
                    if r_attr is not None and not r_attr.isdigit():
                        raise PackageError(f"part {part} has a row numbered {r_attr!r}")
                    row_no, col_no = int(r_attr) if r_attr is not None else row_no + 1, 0
                    for c in pending:
                        col_no = self._read_cell(sheet, c, row_no, col_no)
                    pending.clear()
                    rows.clear()  # the rows read so far: gone from the tree
                elif tag == _MERGE:
                    sheet.merged.append(_box(part, el.get("ref", "")))
                elif tag == _TABLE_PART:
                    table_ids.append(el.get(f"{{{REL}}}id"))
        except ET.ParseError as err:
            raise PackageError(f"broken XML in {part}: {err}") from None
        finally:
            if collecting:
                gc.enable()
        rels = _rels(self.parts, part) if table_ids else {}
        for rid in table_ids:
            target = rels.get(rid, ("", ""))[1]
            if target in self.parts:
                table = parse_xml(target, self.parts[target])
                sheet.tables.append((table.get("displayName") or table.get("name") or target,
                                     _box(target, table.get("ref", ""))))
        return sheet

    def _read_cell(self, sheet: Sheet, c, row_no: int, col_no: int) -> int:
        """Store one <c> element's style, formula and value; its column (for the next cell without r)."""
        ref = c.get("r")
        try:
            r, col = parse_cell(ref) if ref else (row_no, col_no + 1)
        except ValueError:
            raise PackageError(f"part {sheet.part} has a cell at {ref!r}, which is not a cell reference") from None
        key = (r, col)
        style = c.get("s")
        if style is not None:
            sheet.styles[key] = style
        f = c.find(_FORMULA)
        if f is not None:
            sheet.formulas[key] = (f.text or "", dict(f.attrib))
            if c.get("cm") is not None and f.get("t") == "array":
                sheet.dynamic[key] = c.get("cm")
        value = self._value(c, sheet.part, ref)
        if value is not None:
            sheet.values[key] = value
            if r > sheet.max_row:
                sheet.max_row = r
        return col

    def _value(self, c, part: str, ref):
        t = c.get("t", "n")
        if t == "inlineStr":
            el = c.find(_INLINE)
            return _text(el) if el is not None else None
        v = c.find(_VALUE)
        if v is None or v.text is None:
            return None
        text = v.text
        if t != "n":
            if t == "s":
                if not text.strip().isdigit() or int(text) >= len(self.shared):
                    raise PackageError(f"part {part} has a cell ({ref}) that refers to shared text {text!r}, "
                                       f"but the workbook has {len(self.shared)}")
                return self.shared[int(text)]
            if t == "b":
                return text.strip() == "1"
            if t in ("e", "str", "d"):
                return text
        try:
            return float(text)
        except ValueError:
            return text


_SHEET_DATA, _ROW, _CELL, _FORMULA, _VALUE, _INLINE, _MERGE, _TABLE_PART = (
    _q(t) for t in ("sheetData", "row", "c", "f", "v", "is", "mergeCell", "tablePart"))
_ROW_NUMBER = re.compile(r'\br\s*=\s*["\']([0-9]+)["\']')
_CELL_REF = re.compile(r'\br\s*=\s*["\']\$?([A-Za-z]{1,3})\$?[0-9]')
_ATTR = re.compile(r'([\w:]+)\s*=\s*("[^"]*"|\'[^\']*\')')


def _attrs(text: str) -> dict[str, str]:
    return {k: v[1:-1] for k, v in _ATTR.findall(text)}


class SheetText:
    """The XML text of one worksheet, edited row by row.

    Rows are located once by a scan of <sheetData> (their numbers and where their text starts and ends, in
    arrays); a row's cells are split out only when the refresh edits or reads that row, so a large sheet
    costs its text and three numbers per row. Untouched rows are written back verbatim. A row stored twice
    is refused (an edit could not tell which to change); a comment, processing instruction or CDATA among the
    cells is refused (row markup inside one would be taken for cells).
    """

    def __init__(self, xml: str, name: str = "the sheet"):
        m = re.search(r"<(\w+:)?worksheet\b", xml)
        self.p = (m.group(1) or "") if m else ""
        p = re.escape(self.p)
        self.xml, self.name = xml, name
        opening = re.compile(rf"<{p}sheetData\b[^>]*?(/?)>").search(xml)
        if opening is None:
            raise PackageError(f"part {name} has no sheetData element")
        self.head = xml[: opening.start()]
        self.open_tag = opening.group(0).removesuffix("/>").removesuffix(">") + ">"
        if opening.group(1):
            self.start = self.end = opening.end()
            self.tail = xml[opening.end():]
        else:
            self.start = opening.end()
            self.end = xml.find(f"</{self.p}sheetData>", self.start)
            if self.end < 0:
                raise PackageError(f"part {name} has no end to its sheetData element")
            self.tail = xml[self.end + len(f"</{self.p}sheetData>"):]
        for mark, what in (("<!--", "a comment"), ("<?", "a processing instruction"), ("<![CDATA[", "a CDATA section")):
            if xml.find(mark, self.start, self.end) >= 0:
                raise PackageError(f"part {name} holds {what} among its cells, which the refresh does not edit; "
                                   "open and save the workbook in the spreadsheet program, then refresh it")
        self._cell = re.compile(rf"<{p}c\b([^>]*?)(?:/>|>(.*?)</{p}c>)", re.S)
        self.numbers, self.starts, self.ends = array("q"), array("q"), array("q")
        row_no = 0
        for rm in re.compile(rf"<{p}row\b([^>]*?)(?:/>|>.*?</{p}row>)", re.S).finditer(xml, self.start, self.end):
            number = _ROW_NUMBER.search(rm.group(1))
            row_no = int(number.group(1)) if number else row_no + 1
            if self.numbers and row_no <= self.numbers[-1]:
                what = "twice" if row_no in self.numbers else "out of order"
                raise PackageError(f"part {name} has row {row_no} {what}; a refresh could lose a row: "
                                   "open and save the workbook in the spreadsheet program, then refresh it")
            self.numbers.append(row_no)
            self.starts.append(rm.start())
            self.ends.append(rm.end())
        self.rows: dict[int, list] = {}  # rows split out: row -> [open tag attrs text, {col: cell xml}, changed]

    def _row(self, row: int) -> list:
        """A row split into its cells (an empty new row if the sheet has none of that number)."""
        entry = self.rows.get(row)
        if entry is not None:
            return entry
        i = bisect_left(self.numbers, row)
        if i == len(self.numbers) or self.numbers[i] != row:
            entry = self.rows[row] = [f' r="{row}"', {}, True]
            return entry
        rm = re.compile(rf"<{re.escape(self.p)}row\b([^>]*?)(?:/>|>(.*?)</{re.escape(self.p)}row>)", re.S).match(
            self.xml, self.starts[i], self.ends[i])
        cells, col_no = {}, 0
        for cm in self._cell.finditer(rm.group(2) or ""):
            ref = _CELL_REF.search(cm.group(1))
            col_no = column_number(ref.group(1)) if ref else col_no + 1
            if col_no in cells:
                raise PackageError(f"part {self.name} has the cell {column_letters(col_no)}{row} twice; a refresh "
                                   "would lose one of them: open and save the workbook in the spreadsheet program, "
                                   "then refresh it")
            cells[col_no] = cm.group(0)
        entry = self.rows[row] = [rm.group(1), cells, False]
        return entry

    def cell(self, row: int, col: int) -> str:
        """The stored XML of one cell."""
        return self._row(row)[1][col]

    def set_cell(self, row: int, col: int, xml: str | None) -> None:
        self.set_cells(row, {col: xml})

    def set_cells(self, row: int, cells: dict) -> None:
        """Replace cells of one row: column -> cell XML, or None to remove the cell."""
        entry = self._row(row)
        for col, xml in cells.items():
            if entry[1].get(col) == xml:  # the cell as it is stored: its row stays verbatim
                continue
            if xml is None:
                entry[1].pop(col)
            else:
                entry[1][col] = xml
            entry[2] = True

    def _dimension(self, head: str, changed: list[int]) -> str:
        """head with the <dimension> widened to cover every cell written and every stored row."""
        m = re.search(r'(<(?:\w+:)?dimension\b[^>]*?\bref=")([^"]*)(")', head)
        cells = [(r, c) for r in changed for c in self.rows[r][1]]
        if m is None or not cells:
            return head
        stored = {column_number(m.group(1)) for m in _CELL_REF.finditer(self.xml, self.start, self.end)}
        cells += [(row, col) for row in (self.numbers[:1] + self.numbers[-1:]) for col in (min(stored), max(stored))] \
            if stored and self.numbers else []
        start, *end = m.group(2).split(":")
        try:
            r0, c0 = parse_cell(start.replace("$", ""))
            r1, c1 = parse_cell((end[0] if end else start).replace("$", ""))
        except ValueError:
            return head
        top, bottom = min(r0, *(r for r, _ in cells)), max(r1, *(r for r, _ in cells))
        left, right = min(c0, *(c for _, c in cells)), max(c1, *(c for _, c in cells))
        ref = f"{cell_name(top, left)}:{cell_name(bottom, right)}"
        return head[: m.start(2)] + ref + head[m.end(2):]

    def render(self) -> str:
        """The sheet's XML: untouched rows as they were stored, changed rows written anew, in row order."""
        changed = sorted(r for r, entry in self.rows.items() if entry[2])
        out, at = [self._dimension(self.head, changed), self.open_tag], self.start
        for r in changed:
            attrs, cells, _ = self.rows[r]
            i = bisect_left(self.numbers, r)
            stored = i < len(self.numbers) and self.numbers[i] == r
            out.append(self.xml[at: self.starts[i] if i < len(self.numbers) else self.end])
            at = self.ends[i] if stored else (self.starts[i] if i < len(self.numbers) else self.end)
            attrs = re.sub(r'\s+spans\s*=\s*"[^"]*"', "", attrs)
            if cells:
                out.append(f"<{self.p}row{attrs}>" + "".join(cells[c] for c in sorted(cells)) + f"</{self.p}row>")
            elif "s=" in attrs or "ht=" in attrs or "hidden=" in attrs:
                out.append(f"<{self.p}row{attrs}/>")
        out.append(self.xml[at: self.end])
        out.append(f"</{self.p}sheetData>")
        return "".join(out) + self.tail

    def formula_xml(self, row: int, col: int) -> str:
        """The stored <f> element of a cell, verbatim."""
        p = re.escape(self.p)
        return re.search(rf"<{p}f\b[^>]*?(?:/>|>.*?</{p}f>)", self.cell(row, col), re.S).group(0)

    def cell_xml(self, row: int, col: int, value, style: str | None, formula: str | None = None,
                 array_ref: str | None = None, cm: str | None = None, f_xml: str | None = None) -> str:
        """XML of one cell holding ``value`` (and a formula for an anchor, or its stored <f> element)."""
        p = self.p
        attrs = f' r="{column_letters(col)}{row}"' if style is None else f' r="{column_letters(col)}{row}" s="{style}"'
        f = f_xml or ""
        if formula is not None:
            if array_ref:
                f = f'<{p}f t="array" ref="{array_ref}">{escape(formula)}</{p}f>'
            else:
                f = f"<{p}f>{escape(formula)}</{p}f>"
            if cm:
                attrs += f' cm="{cm}"'
        if value is None:
            body = f
        elif isinstance(value, bool):
            attrs += ' t="b"'
            body = f + f"<{p}v>{int(value)}</{p}v>"
        elif isinstance(value, (int, float)):
            body = f + f"<{p}v>{value!r}</{p}v>"
        elif isinstance(value, str) and value.startswith("#") and value.upper() in ("#SPILL!",):
            attrs += ' t="e"'
            body = f + f"<{p}v>{escape(value)}</{p}v>"
        else:
            attrs += ' t="str"'
            body = f + f"<{p}v>{escape(str(value))}</{p}v>"
        return f"<{p}c{attrs}>{body}</{p}c>" if body else f"<{p}c{attrs}/>"


def set_full_calc_on_load(xml: str) -> str:
    """workbook.xml with <calcPr fullCalcOnLoad="1">, edited as an XML tree (lxml), the rest kept as it was."""
    root = edit_xml("workbook.xml", xml.encode("utf-8"))
    ns = etree.QName(root).namespace
    tag = (lambda local: f"{{{ns}}}{local}" if ns else local)
    calc = root.find(tag("calcPr"))
    if calc is None:
        anchor = next((el for local in ("definedNames", "externalReferences", "functionGroups", "sheets")
                       for el in [root.find(tag(local))] if el is not None), None)
        if anchor is None:
            raise PackageError("workbook.xml has no sheets element")
        calc = etree.Element(tag("calcPr"))
        calc.tail, anchor.tail = anchor.tail, None
        anchor.addnext(calc)
    elif calc.get("fullCalcOnLoad") in ("1", "true"):
        return xml
    calc.set("fullCalcOnLoad", "1")
    if xml.lstrip().startswith("<?xml"):
        return xml_bytes(root).decode("utf-8")
    return etree.tostring(root, encoding="unicode")


def dynamic_array_metadata(parts: dict[str, bytes], workbook_part: str, rels: dict) -> tuple[str, list[str]]:
    """The cm index that marks a dynamic array, written into ``parts``: the workbook's own record when it
    has one, else a record merged into its metadata part (every other record kept byte for byte), else a
    new metadata part. Returns the index and the names of parts added."""
    existing = next((t for kind, t in rels.values() if kind == METADATA_REL), None)
    if existing and existing in parts:
        index = _dynamic_record(existing, parse_xml(existing, parts[existing]))
        if index is None:
            xml, index = _merge_dynamic_record(existing, text_of(existing, parts[existing]))
            parts[existing] = xml.encode("utf-8")
        return index, []
    name = posixpath.join(posixpath.dirname(workbook_part), "metadata.xml")
    add_part(parts, name, METADATA_XML.encode(), METADATA_TYPE, workbook_part, METADATA_REL)
    return "1", [name]


def _dynamic_record(name: str, root) -> str | None:
    """The cm index (1-based cell-metadata block) whose record says "dynamic array", or None."""
    types = [t.get("name") for t in root.iter(_q("metadataType"))]
    if "XLDAPR" not in types:
        return None
    t_index = types.index("XLDAPR") + 1
    future = next((fm for fm in root.iter(_q("futureMetadata")) if fm.get("name") == "XLDAPR"), None)
    dynamic = set()
    if future is not None:
        for i, bk in enumerate(future.findall(_q("bk"))):
            for el in bk.iter():
                if el.tag.endswith("dynamicArrayProperties") and el.get("fDynamic") == "1" \
                        and el.get("fCollapsed", "0") == "0":
                    dynamic.add(i)
    cell_meta = root.find(_q("cellMetadata"))
    for i, bk in enumerate(cell_meta.findall(_q("bk")) if cell_meta is not None else []):
        rc = bk.find(_q("rc"))
        if rc is not None and rc.get("t", "").isdigit() and int(rc.get("t")) == t_index \
                and rc.get("v", "").isdigit() and int(rc.get("v")) in dynamic:
            return str(i + 1)
    return None


def _merge_dynamic_record(name: str, xml: str) -> tuple[str, str]:
    """Metadata XML with a dynamic-array record added (type, future block, cell block), and its cm index.

    Inserted as text in the schema's order (metadataTypes, metadataStrings, mdxMetadata, futureMetadata,
    cellMetadata, valueMetadata, extLst): every byte of the other records stays as it was."""
    root = re.search(r"<(\w+:)?metadata\b[^>]*>", xml)
    if root is None or root.group(0).endswith("/>"):
        raise PackageError(f"part {name} is not a metadata part the refresh can extend")
    p = root.group(1) or ""
    ep = re.escape(p)
    if re.search(rf"<{ep}metadataType\b[^>]*\bname=\"XLDAPR\"", xml):
        raise PackageError(f"part {name} has a dynamic-array type without a dynamic-array record")
    own = DYNAMIC_TYPE.replace("<metadataType", f"<{p}metadataType")
    types = re.search(rf"<{ep}metadataTypes\b([^>]*?)(/?)>", xml)
    if types is None:
        xml = xml[: root.end()] + f'<{p}metadataTypes count="1">{own}</{p}metadataTypes>' + xml[root.end():]
        t_index = 1
    else:
        t_index = len(re.findall(rf"<{ep}metadataType\b", xml)) + 1
        attrs = _set_count(types.group(1), t_index)
        if types.group(2):  # <metadataTypes count="0"/>
            xml = xml[: types.start()] + f"<{p}metadataTypes{attrs}>{own}</{p}metadataTypes>" + xml[types.end():]
        else:
            end = xml.index(f"</{p}metadataTypes>")
            xml = xml[: types.start()] + f"<{p}metadataTypes{attrs}>" + xml[types.end(): end] + own + xml[end:]
    xml = _insert_after_last(xml, _dynamic_future(p, " " + DYNAMIC_NS),
                             [f"</{p}{tag}>" for tag in ("metadataTypes", "metadataStrings", "mdxMetadata",
                                                         "futureMetadata")])
    block = f'<{p}bk><{p}rc t="{t_index}" v="0"/></{p}bk>'
    cells = re.search(rf"<{ep}cellMetadata\b([^>]*?)(/?)>", xml)
    if cells is None:
        xml = _insert_after_last(xml, f'<{p}cellMetadata count="1">{block}</{p}cellMetadata>',
                                 [f"</{p}futureMetadata>"])
        return xml, "1"
    end = xml.find(f"</{p}cellMetadata>", cells.end())
    index = 1 if cells.group(2) else len(re.findall(rf"<{ep}bk\b", xml[cells.end(): end])) + 1
    attrs = _set_count(cells.group(1), index)
    if cells.group(2):
        return xml[: cells.start()] + f"<{p}cellMetadata{attrs}>{block}</{p}cellMetadata>" + xml[cells.end():], "1"
    return xml[: cells.start()] + f"<{p}cellMetadata{attrs}>" + xml[cells.end(): end] + block + xml[end:], str(index)


def _set_count(attrs: str, count: int) -> str:
    """An element's attribute text with count set."""
    if re.search(r'\bcount\s*=\s*"[^"]*"', attrs):
        return re.sub(r'\bcount\s*=\s*"[^"]*"', f'count="{count}"', attrs)
    return f'{attrs} count="{count}"'


def _insert_after_last(xml: str, text: str, closers: list[str]) -> str:
    """``text`` inserted after the last closing tag of ``closers`` (children of the root element)."""
    at = max(i + len(c) for c, i in ((c, xml.rfind(c)) for c in closers) if i >= 0)
    return xml[:at] + text + xml[at:]
