"""`degreewise addin`: settings for the classic xlwings desktop add-in, and the steps left to the user.

The xlwings user settings file holds one '"KEY","value"' pair per line
(xlwings reads it from ~/.xlwings/xlwings.conf); other keys in it are kept.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

UDF_MODULE = "degreewise"

STEPS = """Remaining steps, in a Windows desktop spreadsheet program with Python and this package installed:
  1. Install the xlwings add-in:  xlwings addin install
  2. Allow the add-in to register functions: File > Options > Trust Center > Trust Center Settings >
     Macro Settings > tick "Trust access to the VBA project object model".
  3. Restart the spreadsheet program; on the xlwings tab check that UDF Modules reads "degreewise",
     then click "Import Functions".
  4. Type =CALIB_VERSION() into a cell: it shows the versions in use.
Workbooks then contain only CALIB_* names and cell references, so a colleague with the add-in sees the same
numbers. Degreewise supports, and does not replace, method validation under your quality system."""


def settings_path() -> Path:
    import xlwings

    return Path(xlwings.USER_CONFIG_FILE)


def write_settings(path: Path, interpreter: str | None) -> dict[str, str]:
    """Set UDF MODULES (and INTERPRETER_WIN when given) in the xlwings settings file at ``path``."""
    wanted = {"UDF MODULES": UDF_MODULE}
    if interpreter:
        wanted["INTERPRETER_WIN"] = interpreter
    kept = []
    if path.exists():
        for line in path.read_text().splitlines():
            key = line.split(",", 1)[0].strip().strip('"').upper()
            if line.strip() and key not in wanted:
                kept.append(line)
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_name(path.name + ".tmp")
    tmp.write_text("\n".join(kept + [f'"{k}","{v}"' for k, v in wanted.items()]) + "\n")
    os.replace(tmp, path)
    return wanted


def run(config: str | None = None) -> int:
    path = Path(config) if config else settings_path()
    on_windows = sys.platform.startswith("win")
    written = write_settings(path, sys.executable if on_windows else None)
    print(f"wrote xlwings settings to {path}: " + ", ".join(f"{k} = {v}" for k, v in written.items()))
    if not on_windows:
        print("This system cannot run the desktop add-in: classic xlwings worksheet functions need the "
              "spreadsheet program on Windows. Copy the settings there, or use in-workbook Python (see README).")
    print(STEPS)
    return 0
