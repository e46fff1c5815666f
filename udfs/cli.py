"""The ``degreewise`` command: demo, validate, refresh, addin."""

from __future__ import annotations

import argparse
import sys

CAUTION = ("Degreewise supports, and does not replace, method validation under your laboratory's quality "
           "system and applicable standards; results must be reviewed by qualified staff.")


def _demo(args) -> int:
    import engine

    from .scenarios import all_scenarios

    for sc in all_scenarios():
        cal = engine.Calibration(sc.x, sc.y, weights=sc.weights)
        choice = engine.choose_order(cal)
        fit = cal.fit(choice.order)
        print(f"{sc.title}  [{sc.name}, {cal.n_points} standards, weights {cal.weighting.label}]")
        print(f"  chosen order {choice.order}: {choice.reason}")
        for k, (b, se) in enumerate(zip(fit.coefficients, fit.std_errors)):
            term = "intercept" if k == 0 else ("x" if k == 1 else f"x^{k}")
            print(f"    {term:<10} {b: .10g}  (std error {se:.3g})")
        print(f"  residual SD {fit.residual_sd:.6g}, R^2 {fit.r_squared:.8f}")
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
    p = sub.add_parser("demo", help="run the built-in demo calibrations")
    p.set_defaults(run=_demo)
    p = sub.add_parser("validate", help="accuracy report against the NIST StRD reference datasets")
    p.set_defaults(run=_validate)
    p = sub.add_parser("refresh", help="recompute every CALIB_* cell of workbooks, in place")
    p.add_argument("paths", nargs="+", help="workbooks (.xlsx, .xlsm) or folders searched recursively")
    p.add_argument("--check", action="store_true", help="compute and report what would change; write nothing")
    p.add_argument("--backup", action="store_true", help="keep the original beside each refreshed workbook")
    p.add_argument("--jobs", type=int, default=1, help="refresh this many workbooks in parallel processes")
    p.set_defaults(run=_refresh)
    p = sub.add_parser("addin", help="write the xlwings settings for the desktop add-in and print the steps")
    p.add_argument("--config", help="settings file to write (default: the xlwings user settings file)")
    p.set_defaults(run=_addin)
    args = parser.parse_args(argv)
    return args.run(args)


if __name__ == "__main__":
    sys.exit(main())
