"""`degreewise freeze BOOK OUT`: a copy whose CALIB_* formulas are replaced by their values.

The workbook is refreshed in memory first (``refresh.Refresher``, the same
computation as `degreewise refresh`); then each CALIB_* anchor loses its
formula and keeps its value, and text results become inline strings, which
need no formula. The document properties' description says that the copy was
frozen, when, and by which version. Only the sheets that held CALIB_* formulas
and docProps/core.xml change; every other part stays byte for byte. A copy is
written only when every CALIB_* cell was computed: a frozen value must be one
the functions returned.
"""

from __future__ import annotations

import hashlib
import os
import time
from pathlib import Path

from lxml import etree

from .. import VERSION
from ..xlsx.package import (MAIN, PackageError, Workbook, add_part, edit_xml, read_package, write_package,
                            xml_bytes)
from ..workbook import files
from ..workbook.audit import Report
from ..workbook.compute import Refresher

CORE = "docProps/core.xml"
CORE_TYPE = "application/vnd.openxmlformats-package.core-properties+xml"
CORE_REL = "http://schemas.openxmlformats.org/package/2006/relationships/metadata/core-properties"
CP, DC = "http://schemas.openxmlformats.org/package/2006/metadata/core-properties", "http://purl.org/dc/elements/1.1/"


def frozen_cell(xml: str, p: str) -> str:
    """One cell's XML (``p`` its namespace prefix, e.g. "x:" or "") without its formula and without the
    dynamic-array mark; a text value inline. Edited as an lxml tree inside a wrapper that declares ``p``."""
    prefix = p.rstrip(":")
    start = f'<w xmlns:{prefix}="{MAIN}">' if prefix else "<w>"
    wrapper = edit_xml("a sheet cell", (start + xml + "</w>").encode("utf-8"))
    (cell,) = wrapper
    q = (lambda local: f"{{{MAIN}}}{local}" if prefix else local)
    for f in cell.findall(q("f")):
        cell.remove(f)
    cell.attrib.pop("cm", None)
    if cell.get("t") == "str" and [child.tag for child in cell] == [q("v")]:
        value = cell[0]
        cell.set("t", "inlineStr")
        inline = etree.SubElement(cell, q("is"))
        t = etree.SubElement(inline, q("t"))
        t.set("{http://www.w3.org/XML/1998/namespace}space", "preserve")
        t.text = value.text
        cell.remove(value)
    text = etree.tostring(wrapper, encoding="unicode")
    return text[len(start): -len("</w>")]


def note(book: Path, digest: str, when: str) -> str:
    """The record a frozen copy carries: what it was made from (name and SHA-256), by what, and when."""
    import numpy
    import scipy

    return (f"Frozen by Degreewise {VERSION} (numpy {numpy.__version__}, scipy {scipy.__version__}) on {when} "
            f"from {book.name}, SHA-256 {digest}: every CALIB_* formula was replaced by the value it returned; "
            f"the copy no longer recomputes. To check that a workbook is the one it was made from, compare its "
            f"SHA-256 (sha256sum {book.name}; on Windows certutil -hashfile {book.name} SHA256).")


def _describe(parts: dict[str, bytes], text: str) -> list[str]:
    """docProps/core.xml (added if missing) with ``text`` put before any existing description, edited as an
    XML tree; the names of the parts added."""
    added = []
    if CORE not in parts:
        empty = etree.Element(f"{{{CP}}}coreProperties", nsmap={"cp": CP, "dc": DC})
        add_part(parts, CORE, xml_bytes(empty), CORE_TYPE, "", CORE_REL)
        added.append(CORE)
    root = edit_xml(CORE, parts[CORE])
    description = root.find(f"{{{DC}}}description")
    if description is None:  # lxml declares the dc prefix where the file does not
        description = etree.SubElement(root, f"{{{DC}}}description", nsmap={"dc": DC})
    description.text = text + ("\n" + description.text if description.text else "")
    parts[CORE] = xml_bytes(root)
    return added


def freeze(book: Path, out: Path) -> Report:
    """Write the frozen copy of ``book`` to ``out``; the report says what was computed, or why not."""
    report = Report(book)
    try:
        if out.exists() and book.exists() and os.path.samefile(book, out):
            raise PackageError(f"{out} is the workbook itself; give another name for the frozen copy")
        data, _ = files.read(book)
        digest = hashlib.sha256(data).hexdigest()
        infos, parts = read_package(data)
        del data
        refresher = Refresher(parts)
        changed, added = refresher.run(report)
        if report.blocked or report.left_alone or report.failed:
            raise PackageError("not every CALIB_* cell could be computed (listed below); nothing was written")
        parts.update(changed)
        book_now, sheets = Workbook(parts), {}
        for f in refresher.formulas:
            sheet = sheets.get(f.sheet) or sheets.setdefault(f.sheet, book_now.read_sheet(f.sheet))
            sheet.set_cells(f.row, {f.col: frozen_cell(sheet.cell_markup(f.row, f.col), sheet.prefix)})
        for sheet in sheets.values():
            parts[sheet.part] = sheet.render()
        added += _describe(parts, note(book, digest, time.strftime("%Y-%m-%d %H:%M:%S %z")))
        files.write(out, lambda tmp: write_package(tmp, infos, parts, added))  # a new file's usual mode
    except PackageError as err:
        report.error = str(err)
    except OSError as err:
        report.error = files.in_words(err, out) if err.filename != str(book) else f"{err.strerror}: {book}"
    return report


def run(book: str, out: str) -> int:
    """The command: freeze one workbook; exit 0 on success, 1 otherwise."""
    book_path, out_path = Path(book), Path(out)
    if out_path.is_dir():
        out_path = out_path / book_path.name
    report = freeze(book_path, out_path)
    if report.error:
        print(f"{book_path}: not frozen: {report.error}")
        for label, cells in (("blocked", report.blocked), ("left alone", report.left_alone),
                             ("failed", report.failed)):
            for cell, why in cells:
                print(f"  {label} {cell}: {why}")
        return 1
    print(f"{book_path}: {len(report.refreshed)} CALIB_* formulas frozen into {out_path}")
    return 0
