"""`degreewise addin`: settings for the classic xlwings desktop add-in, and the steps left to the user.

The xlwings user settings file (~/.xlwings/xlwings.conf) holds one '"KEY","value"' line per setting. Every
line the user had is kept: "degreewise" is added to the semicolon-separated UDF MODULES, and the Python
interpreter is written only on Windows, only when the file names none and names no conda environment
(CONDA PATH / CONDA ENV: the add-in then activates that environment itself, which a fixed interpreter
path would bypass).
"""

from __future__ import annotations

import sys
from pathlib import Path

from .. import VERSION
from ..catalogue import CAUTION_SENTENCE
from ..workbook import files

UDF_MODULE = "degreewise"
MODULES, INTERPRETER, CONDA = "UDF MODULES", "INTERPRETER_WIN", ("CONDA PATH", "CONDA ENV")

STEPS = f"""Desktop set-up (Windows; the worksheet functions need the desktop program on Windows):
  1. Install Python 3.10 or newer, then in a terminal: pip install degreewise-{VERSION}-py3-none-any.whl
     (the wheel file you were given; from a clone of the repository: pip install .)
  2. Run: degreewise addin   (writes the xlwings settings; your other settings and UDF modules are kept)
  3. Run: xlwings addin install   (the xlwings add-in, once per computer)
  4. In the spreadsheet program: File > Options > Trust Center > Trust Center Settings > Macro Settings,
     tick "Trust access to the VBA project object model".
  5. Open your calibration workbook and save it as a macro-enabled workbook (.xlsm).
  6. Press Alt+F11, choose Tools > References, tick "xlwings", close the editor.
  7. On the xlwings tab click "Import Functions": the workbook gets the module xlwings_udfs with the CALIB_*
     functions (category "Degreewise" in the function wizard).
  8. Type =CALIB_VERSION() into a cell: it shows the versions in use. Save the workbook.
A colleague who receives the .xlsm needs steps 1 to 4 on their computer, nothing else: the functions travel
in the workbook."""


def settings_path() -> Path:
    import xlwings

    return Path(xlwings.USER_CONFIG_FILE)


def _key(line: str) -> str:
    return line.split(",", 1)[0].strip().strip('"').upper()


def _value(line: str) -> str:
    return line.split(",", 1)[1].strip().strip('"') if "," in line else ""


def write_settings(path: Path, interpreter: str | None) -> list[str]:
    """Add Degreewise to the xlwings settings file at ``path``; return what was done, in words."""
    lines = path.read_text().splitlines() if path.exists() else []
    keys = {_key(line): i for i, line in enumerate(lines) if line.strip()}
    done = []
    if MODULES in keys:
        modules = [m.strip() for m in _value(lines[keys[MODULES]]).split(";") if m.strip()]
        if UDF_MODULE in modules:
            done.append(f"{MODULES} already lists {UDF_MODULE}")
        else:
            lines[keys[MODULES]] = f'"{MODULES}","{";".join(modules + [UDF_MODULE])}"'
            done.append(f"added {UDF_MODULE} to {MODULES} (now {';'.join(modules + [UDF_MODULE])})")
    else:
        lines.append(f'"{MODULES}","{UDF_MODULE}"')
        done.append(f"{MODULES} = {UDF_MODULE}")
    if any(k in keys for k in CONDA):
        done.append("kept your conda settings (the add-in activates that environment); no interpreter written")
    elif INTERPRETER in keys:
        done.append(f"kept your interpreter {_value(lines[keys[INTERPRETER]])}; Degreewise must be installed there")
    elif interpreter:
        lines.append(f'"{INTERPRETER}","{interpreter}"')
        done.append(f"{INTERPRETER} = {interpreter}")
    path.parent.mkdir(parents=True, exist_ok=True)
    text = "\n".join(lines) + "\n"
    files.write(path, lambda tmp: Path(tmp).write_text(text), like=path if path.exists() else None)
    return done


def run(config: str | None = None) -> int:
    path = Path(config) if config else settings_path()
    on_windows = sys.platform.startswith("win")
    done = write_settings(path, sys.executable if on_windows else None)
    print(f"xlwings settings {path}: " + "; ".join(done))
    if not on_windows:
        print("This system cannot run the desktop add-in: classic xlwings worksheet functions need the "
              "spreadsheet program on Windows. Copy the settings there, or use in-workbook Python (see README).")
    print(STEPS)
    print(CAUTION_SENTENCE)
    return 0
