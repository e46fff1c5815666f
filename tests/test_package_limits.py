"""The package read safely: entries that lie about their size, encrypted entries and workbooks, and a DTD in
[Content_Types].xml are refused in words, and what a lying entry inflates stays bounded while inflating."""

import struct
import tracemalloc
import zipfile
import zlib

import openpyxl
import pytest

from degreewise.commands.refresh import refresh_file
from degreewise.xlsx.package import PackageError, read_package

DECLARED = 1000


def _patch_entry(path, name, crc=None, size=None, flags=None):
    """Change the CRC, the unpacked size or the flags an entry declares, in its local header and in the
    central directory (ZIP APPNOTE 4.3.7 and 4.3.12: offsets of these fields in each record)."""
    data = bytearray(path.read_bytes())
    encoded = name.encode()
    for signature, at_flags, at_crc, at_size, at_name in ((b"PK\x03\x04", 6, 14, 22, 30),
                                                          (b"PK\x01\x02", 8, 16, 24, 46)):
        start = 0
        while (start := data.find(signature, start)) >= 0:
            if data[start + at_name:start + at_name + len(encoded)] == encoded:
                if crc is not None:
                    struct.pack_into("<I", data, start + at_crc, crc)
                if size is not None:
                    struct.pack_into("<I", data, start + at_size, size)
                if flags is not None:
                    struct.pack_into("<H", data, start + at_flags, flags)
            start += 4
    path.write_bytes(bytes(data))


def test_an_entry_that_lies_about_its_size_is_refused_while_inflating(tmp_path):
    """64 MiB of spaces declared as 1000 bytes, with the CRC of those 1000 bytes: before, the whole entry
    was inflated in one piece (peak above 64 MiB) and its first 1000 bytes accepted."""
    path = tmp_path / "lying.xlsx"
    body = b" " * (64 * 2**20)
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr("xl/big.xml", body)
    _patch_entry(path, "xl/big.xml", crc=zlib.crc32(body[:DECLARED]), size=DECLARED)
    tracemalloc.start()
    try:
        with pytest.raises(PackageError) as caught:
            read_package(path)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert str(caught.value) == f"part xl/big.xml does not unpack to its declared size (more than {DECLARED} bytes)"
    assert peak < 8 * 2**20


def test_an_encrypted_entry_is_named_in_words(tmp_path):
    path = tmp_path / "entry.xlsx"
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr("xl/workbook.xml", b"<workbook/>")
    _patch_entry(path, "xl/workbook.xml", flags=0x1)  # general purpose bit 0: the entry is encrypted
    with pytest.raises(PackageError) as caught:
        read_package(path)
    assert str(caught.value) == ("part xl/workbook.xml is encrypted; save the workbook without a password and "
                                 "try again")


def test_a_password_protected_workbook_is_named_in_words(tmp_path):
    """The program stores a password-protected workbook as a compound file (MS-OFFCRYPTO 2.1 and MS-CFB 2.2:
    the header signature D0 CF 11 E0 A1 B1 1A E1), not as a zip."""
    path = tmp_path / "locked.xlsx"
    path.write_bytes(bytes.fromhex("D0CF11E0A1B11AE1") + bytes(504))
    report = refresh_file(path)
    assert report.error == ("the workbook is encrypted (password-protected); save it without a password and "
                            "try again")


def test_a_dtd_in_the_content_types_is_refused_like_in_every_other_part(tmp_path):
    path = tmp_path / "dtd.xlsx"
    wb = openpyxl.Workbook()
    for row, (x, y) in enumerate([(1, 2.1), (2, 3.9), (3, 6.2), (4, 7.8), (5, 10.1)], start=1):
        wb.active.cell(row, 1, x), wb.active.cell(row, 2, y)
    wb.active["D1"] = "=CALIB_ORDER(A1:A5,B1:B5,1)"  # one cell: the refresh adds no part
    wb.save(path)
    with zipfile.ZipFile(path) as z:
        parts = {i.filename: z.read(i) for i in z.infolist()}
    types = parts["[Content_Types].xml"].decode()
    parts["[Content_Types].xml"] = ('<!DOCTYPE Types [<!ENTITY a "aaaa">]>' + types).encode()
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in parts.items():
            z.writestr(name, data)
    before = path.read_bytes()
    report = refresh_file(path)
    assert report.error is not None and report.error.startswith("unsafe XML in [Content_Types].xml: ")
    assert path.read_bytes() == before


def test_an_entry_whose_crc_does_not_match_is_refused(tmp_path):
    path = tmp_path / "damaged.xlsx"
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr("xl/workbook.xml", b"<workbook/>")
    _patch_entry(path, "xl/workbook.xml", crc=zlib.crc32(b"<workbook/>") ^ 1)
    with pytest.raises(PackageError) as caught:
        read_package(path)
    assert str(caught.value) == "part xl/workbook.xml is damaged (its CRC-32 does not match)"
