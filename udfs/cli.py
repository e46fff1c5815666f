"""The ``degreewise`` command: demo, validate, refresh, addin."""

from __future__ import annotations

import argparse
import sys

CAUTION = ("Degreewise supports, and does not replace, method validation under your laboratory's quality "
           "system and applicable standards; results must be reviewed by qualified staff.")


def _demo(args) -> int:
    from pathlib import Path

    import openpyxl

    from .demo import LAYOUT, write_demo

    folder = Path(args.folder)
    for path in write_demo(folder):
        wb = openpyxl.load_workbook(path, data_only=True)
        ws = wb.worksheets[1]
        stats = {}
        row = ws[LAYOUT["stats"]].row
        while ws.cell(row, 4).value is not None:
            stats[ws.cell(row, 4).value] = ws.cell(row, 5).value
            row += 1
        print(f"{wb.worksheets[0]['A2'].value}  [{path}]")
        print(f"  chosen order {ws[LAYOUT['order']].value}: {stats['why this order']}")
        row = ws[LAYOUT["coefs"]].row + 1
        while ws.cell(row, 4).value is not None:
            term, b, se = (ws.cell(row, c).value for c in (4, 5, 6))
            print(f"    {term:<10} {b: .10g}  (std error {se:.3g})")
            row += 1
        print(f"  residual SD {stats['residual SD']:.6g}, R^2 {stats['R²']:.8f}, weights {stats['weights']}")
        print()
    print(CAUTION)
    return 0


def _validate(args) -> int:
    from .validation import report

    text, ok = report()
    print(text)
    return 0 if ok else 1


def _refresh(args) -> int:
    from .refresh import run

    return run(args.paths, check=args.check, backup=args.backup, jobs=args.jobs)


def _addin(args) -> int:
    from .addin import run

    return run(args.config)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(prog="degreewise", description="Polynomial calibration curves: order, "
                                     "coefficients, intervals, checks.")
    sub = parser.add_subparsers(dest="command", required=True)
    p = sub.add_parser("demo", help="write and refresh the demo workbooks, and print each calibration")
    p.add_argument("folder", nargs="?", default="degreewise-demo", help="where to write them (default: ./degreewise-demo)")
    p.set_defaults(run=_demo)
    p = sub.add_parser("validate", help="accuracy report against the NIST StRD reference datasets")
    p.set_defaults(run=_validate)
    p = sub.add_parser("refresh", help="recompute every CALIB_* cell of workbooks, in place")
    p.add_argument("paths", nargs="+", help="workbooks (.xlsx, .xlsm) or folders searched recursively")
    p.add_argument("--check", action="store_true", help="compute and report what would change; write nothing")
    p.add_argument("--backup", action="store_true", help="keep the original beside each refreshed workbook")
    p.add_argument("--jobs", type=int, default=None,
                   help="processes to use (default: one per CPU core): several workbooks at a time, "
                        "or the sheets of one large workbook")
    p.set_defaults(run=_refresh)
    p = sub.add_parser("addin", help="write the xlwings settings for the desktop add-in and print the steps")
    p.add_argument("--config", help="settings file to write (default: the xlwings user settings file)")
    p.set_defaults(run=_addin)
    args = parser.parse_args(argv)
    if args.command != "addin":  # the commands that load the worksheet functions
        from .registration import headless

        headless()  # no spreadsheet to register with: the functions load without xlwings (and pandas)
        _defer_unused_numpy_modules()
    return args.run(args)


def _defer_unused_numpy_modules() -> None:
    """Let numpy's f2py, testing, ma and random load only when something uses them.

    numpy imports these on first attribute access; scipy.special, when it is
    imported, reads every attribute of numpy (to mirror its namespace), which
    costs a tenth of a second for modules the commands never use. Each is
    registered instead as a lazy module (the standard library's
    importlib.util.LazyLoader), which runs the real module on first use.
    """
    import importlib.util

    import numpy

    for name in ("f2py", "testing", "ma", "random"):
        full = f"numpy.{name}"
        if full in sys.modules:
            continue
        spec = importlib.util.find_spec(full)
        spec.loader = importlib.util.LazyLoader(spec.loader)
        module = importlib.util.module_from_spec(spec)
        sys.modules[full] = module
        spec.loader.exec_module(module)
        setattr(numpy, name, module)


if __name__ == "__main__":
    sys.exit(main())
