"""The same numbers on every machine: a refresh keeps a stored number that agrees with its own within
refresh.AGREE (other CPU kernels round the last digits differently), and writes and lists any larger change."""

import os
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

import openpyxl
import pytest

from degreewise.commands.refresh import refresh_file
from degreewise.workbook.audit import AGREE

WORKBOOKS = Path(__file__).parent.parent / "workbooks"
# the kernels of an older CPU: SSE only in numpy and OpenBLAS (each variable documented by its project)
OLDER_KERNELS = {"OPENBLAS_CORETYPE": "Sandybridge",
                 "NPY_DISABLE_CPU_FEATURES": "AVX2 FMA3 F16C AVX512F AVX512CD AVX512_SKX AVX512_CLX AVX512_CNL "
                                             "AVX512_ICL AVX512_SPR"}


def test_older_kernels_find_nothing_to_change_in_the_demo_workbooks(tmp_path):
    for book in WORKBOOKS.glob("*.xlsx"):
        shutil.copy(book, tmp_path / book.name)
    env = {**os.environ, **OLDER_KERNELS}
    out = subprocess.run([sys.executable, "-c", "from degreewise.commands import main; raise SystemExit(main())",
                          "refresh", "--check", str(tmp_path)],
                         env=env, capture_output=True, text=True, timeout=300)
    lines = out.stdout.splitlines()
    assert out.returncode == 0, out.stdout + out.stderr
    assert len(lines) == 4 and all(line.endswith("nothing would change") for line in lines[:3]), lines


def _stored(path: Path, cell: str) -> str:
    with zipfile.ZipFile(path) as z:
        xml = z.read("xl/worksheets/sheet1.xml").decode()
    start = xml.index(f'<c r="{cell}"')
    v = xml.index("<v>", start) + 3
    return xml[v:xml.index("</v>", v)]


def _restore(path: Path, cell: str, text: str) -> None:
    """The workbook with ``cell``'s stored value text replaced (as another machine would have stored it)."""
    with zipfile.ZipFile(path) as z:
        parts = {i.filename: z.read(i) for i in z.infolist()}
    xml = parts["xl/worksheets/sheet1.xml"].decode()
    old = f"<v>{_stored(path, cell)}</v>"
    start = xml.index(f'<c r="{cell}"')
    at = xml.index(old, start)
    parts["xl/worksheets/sheet1.xml"] = (xml[:at] + f"<v>{text}</v>" + xml[at + len(old):]).encode()
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in parts.items():
            z.writestr(name, data)


@pytest.mark.parametrize("factor, listed", [(1 + AGREE / 3, False), (1 - AGREE / 3, False),
                                            (1 + 3 * AGREE, True), (1 - 3 * AGREE, True)])
def test_a_difference_within_the_bound_is_kept_and_a_larger_one_listed(tmp_path, factor, listed):
    wb = openpyxl.Workbook()
    ws = wb.active
    for i, (x, y) in enumerate([(1, 2.1), (2, 3.9), (4, 8.2), (8, 15.8), (16, 32.3), (32, 63.9)], start=1):
        ws.cell(i, 1, x)
        ws.cell(i, 2, y)
    ws["D1"] = "=CALIB_COEFS(A1:A6,B1:B6,1)"
    path = tmp_path / "book.xlsx"
    wb.save(path)
    refresh_file(path, workers=1)
    slope = float(_stored(path, "E3"))
    _restore(path, "E3", repr(slope * factor))
    before = path.read_bytes()
    report = refresh_file(path, workers=1)
    if listed:
        assert [(a, n) for a, _, n, _ in report.changes] == [("Sheet!D1", 1)]
        assert float(_stored(path, "E3")) == slope
    else:
        assert report.changes == [] and not report.changed
        assert path.read_bytes() == before  # the other machine's digits stay
