"""The demo workbooks: invented calibrations laid out with CALIB_* formulas and native charts.

One workbook per scenario (see ``scenarios``). Each calibration sheet holds the
standards, the order choice, the tables, the back-calculated standards and a
fine-grid prediction spill with CALIB_LABELS headers, and two scatter charts
that read the spill ranges (standards with visible markers, curve and
prediction band, log axes where the range or the weighting asks for them;
residuals against x, or the deviation % of the back-calculated x for a
weighted fit), so they follow a refresh. Header cells are styled before the
refresh fills them, texts wrap, and each sheet prints as its calibration on a
few landscape pages. The weighted scenario adds unknown samples read back with
CALIB_INVERSE. Below them, on a page of its own, every sheet states its
detection and quantitation limits (CALIB_LIMITS, with blank readings where the
scenario has them), and the weighted one compares weighting schemes
(CALIB_WEIGHTING). A first sheet states the scenario and the cautions.
"""

from __future__ import annotations

import sys
from pathlib import Path

from openpyxl import Workbook

from ...catalogue import CAUTION_SENTENCE
from .scenarios import Scenario, all_scenarios
from .sheets import about_sheet, acceptance_sheet, calibration_sheet, compare_sheet


def build(sc: Scenario, path: Path) -> Path:
    wb = Workbook()
    about_sheet(wb, sc)
    calibration_sheet(wb, sc)
    if sc.reference_y:
        compare_sheet(wb, sc)
    if sc.criteria:
        acceptance_sheet(wb, sc)
    wb.save(path)
    return path


def write_demo(folder: Path) -> list[Path]:
    """Write every demo workbook into ``folder`` and refresh it; return the paths."""
    from ..refresh import refresh_file

    folder.mkdir(parents=True, exist_ok=True)
    paths = []
    for sc in all_scenarios():
        path = build(sc, folder / f"degreewise-demo-{sc.name}.xlsx")
        report = refresh_file(path)
        if not report.ok:
            raise RuntimeError("\n".join(report.lines()))
        paths.append(path)
    return paths


def run(folder) -> int:
    """degreewise demo: write and refresh the demo workbooks, and print each calibration (and its report
    when the report extra is installed)."""
    from ...workbook.sections import sections, summary

    folder = Path(folder)
    if folder.exists() and not folder.is_dir():
        print(f"degreewise demo: {folder} is a file; give a folder to write the demo workbooks into", file=sys.stderr)
        return 2
    try:
        paths = write_demo(folder)
    except OSError as err:
        print(f"degreewise demo: cannot write the demo workbooks into {folder}: {err.strerror or err}",
              file=sys.stderr)
        return 1
    try:
        from ..report import report_path, write_report
    except ImportError as err:  # the report extra is not installed
        write_report, missing = None, err.name
    for sc, path in zip(all_scenarios(), paths):
        found, _ = sections(path)
        print(f"{sc.title}  [{path}]")
        for s in found:
            print("\n".join(summary(s)))
        if write_report:
            print(f"  report: {write_report(path, report_path(path, None))[0]}")
        else:
            print(f"  no report: {missing} is not installed (pip install \"degreewise[report]\")")
        print()
    print(CAUTION_SENTENCE)
    return 0
