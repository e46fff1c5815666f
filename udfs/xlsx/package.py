"""A workbook file as a zip package: safe reading with limits, its XML parts as trees, new parts, and the
dynamic-array record of the metadata part.

Every part is read with limits (entry count, unpacked size, compression ratio, enforced while inflating)
and no XML part may declare a DTD or entities (``parse_xml``: defusedxml), so a hostile file cannot expand
or reach outside. Nothing in a workbook is ever executed. Parts other than sheets are edited as lxml trees;
sheets are read and edited row by row by ``sheet.Sheet``.
"""

from __future__ import annotations

import copy
import io
import posixpath
import zipfile
import zlib
from pathlib import Path

from defusedxml import ElementTree as SafeET
from defusedxml.common import DefusedXmlException
from lxml import etree

from . import PackageError
from .cells import box
from .sheet import MAIN, REL, Sheet

STRICT_MAIN = "http://purl.oclc.org/ooxml/spreadsheetml/main"
METADATA_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships/sheetMetadata"
METADATA_TYPE = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheetMetadata+xml"
# the dynamic-array record as the desktop program writes it: a metadata type, its future-metadata block, and
# the cell-metadata block (the `cm` index of a cell) that points at it
METADATA_XML = f"""<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<metadata xmlns="{MAIN}" xmlns:xda="http://schemas.microsoft.com/office/spreadsheetml/2017/dynamicarray">\
<metadataTypes count="1"><metadataType name="XLDAPR" minSupportedVersion="120000" copy="1" pasteAll="1" \
pasteValues="1" merge="1" splitFirst="1" rowColShift="1" clearFormats="1" clearComments="1" assign="1" \
coerce="1" cellMeta="1"/></metadataTypes><futureMetadata name="XLDAPR" count="1"><bk><extLst>\
<ext uri="{{bdbb8cdc-fa1e-496e-a857-3c3f30c029c3}}"><xda:dynamicArrayProperties fDynamic="1" fCollapsed="0"/>\
</ext></extLst></bk></futureMetadata><cellMetadata count="1"><bk><rc t="1" v="0"/></bk></cellMetadata>\
</metadata>"""

MAX_ENTRIES = 10_000
MAX_PART = 256 * 2**20
MAX_TOTAL = 1024 * 2**20
MAX_RATIO = 200


def _q(tag: str) -> str:
    return f"{{{MAIN}}}{tag}"


def parse_xml(name: str, data: bytes):
    """The parsed XML part (defusedxml), or a one-line PackageError: a DTD or an entity is refused."""
    try:
        return SafeET.fromstring(data, forbid_dtd=True)
    except DefusedXmlException as err:
        raise PackageError(f"unsafe XML in {name}: {type(err).__name__} (DTDs and entities are not allowed)") from None
    except SafeET.ParseError as err:
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
    out, size, crc = io.BytesIO(), 0, 0  # its buffer grows in place and becomes the part without a copy
    with z.open(allowed) as stream:
        while size <= info.file_size:
            chunk = stream.read(CHUNK)
            if not chunk:
                break
            out.write(chunk)
            size += len(chunk)
            crc = zlib.crc32(chunk, crc)
    if size != info.file_size:
        raise PackageError(f"part {info.filename} does not unpack to its declared size "
                           f"({'more' if size > info.file_size else 'less'} than {info.file_size} bytes)")
    if crc != info.CRC:
        raise PackageError(f"part {info.filename} is damaged (its CRC-32 does not match)")
    return out.getvalue()


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
        """The worksheet ``name`` as its part now stands (``sheet.Sheet``), with its tables' ranges."""
        part = self.sheet_parts[name]
        sheet = Sheet(name, part, self.parts[part], self.shared)
        rels = _rels(self.parts, part) if sheet.table_ids else {}
        for rid in sheet.table_ids:
            target = rels.get(rid, ("", ""))[1]
            if target in self.parts:
                table = parse_xml(target, self.parts[target])
                sheet.tables.append((table.get("displayName") or table.get("name") or target,
                                     box(target, table.get("ref", ""))))
        return sheet


def set_full_calc_on_load(name: str, data: bytes) -> bytes:
    """The workbook part ``name`` with <calcPr fullCalcOnLoad="1">, edited as an XML tree (lxml)."""
    root = edit_xml(name, data)
    ns = etree.QName(root).namespace
    tag = (lambda local: f"{{{ns}}}{local}" if ns else local)
    calc = root.find(tag("calcPr"))
    if calc is None:
        anchor = next((el for local in ("definedNames", "externalReferences", "functionGroups", "sheets")
                       for el in [root.find(tag(local))] if el is not None), None)
        if anchor is None:
            raise PackageError(f"{name} has no sheets element")
        calc = etree.Element(tag("calcPr"))
        calc.tail, anchor.tail = anchor.tail, None
        anchor.addnext(calc)
    elif calc.get("fullCalcOnLoad") in ("1", "true"):
        return data
    calc.set("fullCalcOnLoad", "1")
    return xml_bytes(root)


def dynamic_array_metadata(parts: dict[str, bytes], workbook_part: str, rels: dict) -> tuple[str, list[str]]:
    """The cm index that marks a dynamic array, written into ``parts``: the workbook's own record when it
    has one, else a record merged into its metadata part (every other record kept byte for byte), else a
    new metadata part. Returns the index and the names of parts added."""
    existing = next((t for kind, t in rels.values() if kind == METADATA_REL), None)
    if existing and existing in parts:
        index = _dynamic_record(existing, parse_xml(existing, parts[existing]))
        if index is None:
            parts[existing], index = _merge_dynamic_record(existing, parts[existing])
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


def _merge_dynamic_record(name: str, data: bytes) -> tuple[bytes, str]:
    """A metadata part with the dynamic-array record of METADATA_XML added (its type, future-metadata block
    and cell-metadata block, each where the schema puts it), edited as an XML tree; and its cm index."""
    root = edit_xml(name, data)
    if root.tag != _q("metadata"):
        raise PackageError(f"part {name} is not a metadata part the refresh can extend")
    if any(t.get("name") == "XLDAPR" for t in root.iter(_q("metadataType"))):
        raise PackageError(f"part {name} has a dynamic-array type without a dynamic-array record")
    record = etree.fromstring(METADATA_XML.encode(), _EDIT)
    types = root.find(_q("metadataTypes"))
    if types is None:
        types = _insert(root, etree.Element(_q("metadataTypes")))
    types.append(record.find(_q("metadataTypes"))[0])
    types.set("count", str(len(types.findall(_q("metadataType")))))
    _insert(root, record.find(_q("futureMetadata")))
    cells = root.find(_q("cellMetadata"))
    if cells is None:
        cells = _insert(root, etree.Element(_q("cellMetadata")))
    block = record.find(_q("cellMetadata"))[0]
    block[0].set("t", types.get("count"))
    cells.append(block)
    cells.set("count", str(len(cells.findall(_q("bk")))))
    return xml_bytes(root), cells.get("count")


METADATA_ORDER = ("metadataTypes", "metadataStrings", "mdxMetadata", "futureMetadata", "cellMetadata",
                  "valueMetadata", "extLst")  # ECMA-376 18.9: the children of <metadata>, in order


def _insert(root, el):
    """``el`` put among the children of <metadata> after the last one the schema puts before or with it."""
    rank, at = METADATA_ORDER.index(etree.QName(el).localname), 0
    for i, child in enumerate(root):
        if isinstance(child.tag, str) and etree.QName(child).localname in METADATA_ORDER[: rank + 1]:
            at = i + 1
    root.insert(at, el)
    return el
