"""The ``degreewise`` command: its arguments, and one module per command (demo, validate, refresh, report,
freeze, addin), each loaded only when it runs."""

from __future__ import annotations

import argparse
import os
import signal
import sys


class _Parser(argparse.ArgumentParser):
    """Bad arguments: one line naming the problem, exit code 2 (argparse's usage block goes to --help)."""

    def error(self, message):
        self.exit(2, f"{self.prog}: {message} (see {self.prog.split()[0]} --help)\n")


def _jobs(text: str) -> int:
    try:
        jobs = int(text)
    except ValueError:
        jobs = 0
    if jobs < 1:
        raise argparse.ArgumentTypeError(f"needs a whole number of at least 1, not {text!r}")
    return jobs


def _demo(args) -> int:
    from .demo import run

    return run(args.folder)


def _validate(args) -> int:
    from .validate import run

    return run()


def _refresh(args) -> int:
    from .refresh import run

    return run(args.paths, check=args.check, backup=args.backup, jobs=args.jobs, report_to=args.report_to)


def _freeze(args) -> int:
    from .freeze import run

    return run(args.book, args.out)


def _report(args) -> int:
    try:
        from .report import run
    except ImportError as err:  # the report extra is not installed
        print(f"degreewise report needs {err.name}: pip install \"degreewise[report]\"", file=sys.stderr)
        return 2
    return run(args.paths, args.out, args.paper)


def _addin(args) -> int:
    from .addin import run

    return run(args.config)


def main(argv=None) -> int:
    from .. import VERSION

    parser = _Parser(prog="degreewise", description="Polynomial calibration curves: order, coefficients, "
                     "intervals, checks.")
    parser.add_argument("--version", action="version", version=f"degreewise {VERSION}")
    sub = parser.add_subparsers(dest="command", required=True)
    p = sub.add_parser("demo", help="write and refresh the demo workbooks, and print each calibration")
    p.add_argument("folder", nargs="?", default="degreewise-demo",
                   help="where to write them (default: ./degreewise-demo)")
    p.set_defaults(run=_demo)
    p = sub.add_parser("validate", help="accuracy report against the NIST StRD reference datasets")
    p.set_defaults(run=_validate)
    p = sub.add_parser("refresh", help="recompute every CALIB_* cell of workbooks, in place")
    p.add_argument("paths", nargs="+", help="workbooks (.xlsx, .xlsm) or folders searched recursively")
    p.add_argument("--check", action="store_true", help="compute and report what would change; write nothing")
    p.add_argument("--backup", action="store_true", help="keep the original beside each refreshed workbook")
    p.add_argument("--jobs", type=_jobs, default=None,
                   help="processes to use (default: one per CPU core): several workbooks at a time, "
                        "or the sheets of one large workbook")
    p.add_argument("--report-to", metavar="FILE",
                   help="append each workbook's report to FILE as it finishes (default: print it)")
    p.set_defaults(run=_refresh)
    p = sub.add_parser("freeze", help="write a copy whose CALIB_* formulas are replaced by their values")
    p.add_argument("book", help="the workbook (.xlsx, .xlsm); it is not changed")
    p.add_argument("out", help="the copy to write (a folder: the same file name in it)")
    p.set_defaults(run=_freeze)
    p = sub.add_parser("report", help="write a printable PDF calibration report for each workbook")
    p.add_argument("paths", nargs="+", help="workbooks (.xlsx, .xlsm) or folders searched recursively")
    p.add_argument("--out", help="folder for the reports (default: beside each workbook)")
    p.add_argument("--paper", choices=("a4", "letter"), default="a4", help="page size (default: a4)")
    p.set_defaults(run=_report)
    p = sub.add_parser("addin", help="write the xlwings settings for the desktop add-in and print the steps")
    p.add_argument("--config", help="settings file to write (default: the xlwings user settings file)")
    p.set_defaults(run=_addin)
    args = parser.parse_args(argv)
    if args.command != "addin":  # the commands that load the worksheet functions
        from ..registration import headless

        headless()  # no spreadsheet to register with: the functions load without xlwings (and pandas)
        _defer_unused_numpy_modules()
    signal.signal(signal.SIGTERM, _stop)  # a termination unwinds like Ctrl-C: temporary files are removed
    try:
        return args.run(args)
    except KeyboardInterrupt as stop:
        code = stop.args[0] if stop.args else 130
        print(f"degreewise {args.command}: stopped ({'terminated' if code == 143 else 'interrupted'}); a "
              "workbook not yet replaced was left as it was", file=sys.stderr)
        return code
    except BrokenPipeError:  # the reader of the output went away (| head): end quietly
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 141


def _stop(signum, frame):
    raise KeyboardInterrupt(143)


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
