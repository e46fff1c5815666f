"""Registration: the xlwings settings that `degreewise addin` writes, and what `import degreewise` pulls in."""

import subprocess
import sys

import openpyxl
import pytest

from degreewise.commands.addin import write_settings
from degreewise.commands import main
from conftest import workbook


def test_settings_file_is_written_and_other_keys_kept(tmp_path):
    conf = tmp_path / ".xlwings" / "xlwings.conf"
    conf.parent.mkdir()
    conf.write_text('"ONEDRIVE_WIN","C:\\\\Users\\\\me\\\\OneDrive"\n"UDF MODULES","old_module;lab_tools"\n')
    done = write_settings(conf, "C:\\Python\\python.exe")
    assert conf.read_text().splitlines() == [
        '"ONEDRIVE_WIN","C:\\\\Users\\\\me\\\\OneDrive"', '"UDF MODULES","old_module;lab_tools;degreewise"',
        '"INTERPRETER_WIN","C:\\Python\\python.exe"']
    assert done == ["added degreewise to UDF MODULES (now old_module;lab_tools;degreewise)",
                    "INTERPRETER_WIN = C:\\Python\\python.exe"]
    assert write_settings(conf, "C:\\Other\\python.exe")[0] == "UDF MODULES already lists degreewise"
    assert conf.read_text().count("degreewise") == 1 and "Other" not in conf.read_text()  # nothing doubled or lost


def test_the_settings_file_keeps_its_mode_and_leaves_no_temporary_file(tmp_path):
    conf = tmp_path / "xlwings.conf"
    conf.write_text('"UDF MODULES","lab_tools"\n')
    conf.chmod(0o600)  # a user's private settings stay private
    write_settings(conf, None)
    assert conf.stat().st_mode & 0o777 == 0o600
    assert sorted(p.name for p in tmp_path.iterdir()) == ["xlwings.conf"]


def test_conda_settings_and_an_existing_interpreter_are_kept(tmp_path):
    conf = tmp_path / "xlwings.conf"
    conda = '"CONDA PATH","C:\\\\Users\\\\me\\\\miniconda3"\n"CONDA ENV","lab"\n'
    conf.write_text(conda)
    assert write_settings(conf, "C:\\Python\\python.exe")[1] == (
        "kept your conda settings (the add-in activates that environment); no interpreter written")
    assert conf.read_text() == conda + '"UDF MODULES","degreewise"\n'
    conf.write_text('"INTERPRETER_WIN","D:\\\\py\\\\python.exe"\n')
    assert write_settings(conf, "C:\\Python\\python.exe")[1].startswith("kept your interpreter D:")
    assert "C:\\Python" not in conf.read_text()


def test_addin_command_prints_the_numbered_steps_that_the_readme_gives(tmp_path, capsys):
    from pathlib import Path

    from degreewise.catalogue import CAUTION_SENTENCE
    from degreewise.commands.addin import STEPS

    conf = tmp_path / "xlwings.conf"
    assert main(["addin", "--config", str(conf)]) == 0
    out = capsys.readouterr().out
    assert conf.read_text().startswith('"UDF MODULES","degreewise"')
    assert f"{STEPS}\n{CAUTION_SENTENCE}\n" in out
    if not sys.platform.startswith("win"):
        assert "This system cannot run the desktop add-in" in out and "INTERPRETER" not in conf.read_text()
    readme = (Path(__file__).resolve().parent.parent / "README.md").read_text()
    assert f"{STEPS}\n{CAUTION_SENTENCE}\n" in readme  # the README's desktop set-up is exactly what the command prints


def test_the_worksheet_functions_load_neither_the_file_format_nor_the_command_line():
    """What in-workbook Python runs: the functions room only (no files, no subprocesses), through a first
    CALIB_ORDER and a first CALIB_CHECKS. The first result of a session pays for scipy.special only:
    scipy.stats (0.5 to 1 s to import, more than everything else together; see
    benchmarks/bench_first_result.py) and the scipy.optimize it brings load with the first CALIB_CHECKS,
    for Shapiro-Wilk, and no worksheet function loads pandas, plotting, PDF or xlsx code."""
    code = ("import sys; from degreewise.registration import headless; headless(); import degreewise;"
            "x = [[float(v)] for v in (1, 1, 2, 2, 3, 3, 4, 4, 5, 5)]; y = [[2 * r[0] + (-1) ** i / 10] for i, r in"
            " enumerate(x)]; assert degreewise.calib_order(x, y) == 1; first = sorted(sys.modules);"
            "degreewise.calib_checks(x, y); print(repr((first, sorted(sys.modules))))")
    first, loaded = map(set, eval(subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                                                 check=True).stdout))
    ours = sorted(m for m in loaded if m.startswith("degreewise") and not m.startswith("degreewise.engine"))
    rooms = ["about", "acceptance", "compare", "fit", "frame", "judgments", "points"]
    assert ours == ["degreewise", "degreewise.catalogue", "degreewise.coercion", "degreewise.functions",
                    *(f"degreewise.functions.{room}" for room in rooms), "degreewise.prepared",
                    "degreewise.registration"]
    unneeded = {"openpyxl", "defusedxml", "tqdm", "multiprocessing", "reportlab", "matplotlib", "pandas"}
    assert "scipy.special" in first and not first & ({"scipy.stats", "scipy.optimize"} | unneeded)
    assert {"scipy.stats", "scipy.optimize"} <= loaded and not loaded & unneeded


REGISTRATION_PROBE = """
import sys, types
calls = []
stub = types.ModuleType("xlwings")  # records what the real decorators would be given
stub.func = lambda **kw: calls.append(("func", kw)) or (lambda f: f)
stub.arg = lambda name, **kw: calls.append(("arg", name)) or (lambda f: f)
sys.modules["xlwings"] = stub
{setup}
import degreewise
assert "degreewise.functions" not in sys.modules  # the functions load on first use
names = [n for n in dir(degreewise) if n.startswith("calib_")]
[getattr(degreewise, n) for n in names]
print(repr((names, calls)))
"""


def _probe(setup=""):
    out = subprocess.run([sys.executable, "-c", REGISTRATION_PROBE.format(setup=setup)], capture_output=True,
                         text=True, check=True).stdout
    return eval(out)


def test_the_command_line_loads_the_functions_without_registration():
    from degreewise import FUNCTIONS

    names, calls = _probe("from degreewise.registration import headless; headless()")
    assert len(names) == len(FUNCTIONS) and calls == []


def test_the_refresh_command_imports_neither_xlwings_nor_pandas(tmp_path):
    workbook(tmp_path / "book.xlsx", {1: [1.0, 2.0, 3.0, 4.0, 5.0, 6.0], 2: [2.1, 3.9, 6.2, 7.8, 10.1, 12.2]},
             {"D1": "=CALIB_ORDER(A1:A6,B1:B6)"})
    code = ("import sys; from degreewise.commands import main; code = main(['refresh', sys.argv[1]]);"
            "print(code, 'xlwings' in sys.modules, 'pandas' in sys.modules, 'numpy.f2py.crackfortran' in sys.modules,"
            " 'numpy.testing._private.utils' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code, str(tmp_path / "book.xlsx")], capture_output=True, text=True,
                         check=True).stdout
    assert out.splitlines()[-1] == "0 False False False False"  # nor the numpy modules it never uses
    assert openpyxl.load_workbook(tmp_path / "book.xlsx", data_only=True).active["D1"].value == 1


def test_numpy_modules_deferred_by_the_command_line_still_work():
    code = ("import sys; from degreewise.commands import _defer_unused_numpy_modules as defer; defer(); import numpy as np;"
            "np.testing.assert_allclose(np.ma.masked_invalid([1.0, float('nan')]).sum(), 1.0);"
            "print(np.random.default_rng(7).integers(0, 10**6), 'numpy.f2py.crackfortran' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.split()
    reference = subprocess.run([sys.executable, "-c", "import numpy as np; print(np.random.default_rng(7)"
                                ".integers(0, 10**6))"], capture_output=True, text=True, check=True).stdout.split()
    assert out == reference + ["False"]


@pytest.mark.slow
def test_the_wheel_for_in_workbook_python_is_pure_python_and_runs_from_the_archive(tmp_path):
    # what the README tells a user without a package index to build and put into requirements.txt
    from pathlib import Path

    from degreewise import VERSION

    import shutil

    source = tmp_path / "source"  # a copy, so that the build leaves nothing in the working tree
    shutil.copytree(Path(__file__).resolve().parent.parent, source,
                    ignore=shutil.ignore_patterns(".git", "build", "*.egg-info", "tests", "workbooks", "__pycache__"))
    subprocess.run([sys.executable, "-m", "pip", "wheel", str(source), "--no-deps", "-q", "-w", str(tmp_path)],
                   check=True, capture_output=True)
    wheel = tmp_path / f"degreewise-{VERSION}-py3-none-any.whl"
    import zipfile

    names = zipfile.ZipFile(wheel).namelist()
    metadata = zipfile.ZipFile(wheel).read(f"degreewise-{VERSION}.dist-info/METADATA").decode()
    assert f"\nVersion: {VERSION}\n" in metadata  # pyproject reads the version from degreewise.VERSION
    assert {n.split("/")[0] for n in names} == {"degreewise", f"degreewise-{VERSION}.dist-info"}
    assert all(n.endswith((".py", ".csv", ".json")) for n in names if n.startswith("degreewise/"))
    assert "degreewise/engine/calibration.py" in names
    # the main.py line, run from the archive itself (no file system of ours, no compiled code)
    code = ("import sys; sys.path.insert(0, sys.argv[1]); from degreewise import *; import degreewise;"
            "assert degreewise.__file__.startswith(sys.argv[1]);"
            "print(calib_order([[1.0], [2.0], [3.0], [4.0], [5.0]], [[2.1], [3.9], [6.2], [7.8], [10.1]]))")
    out = subprocess.run([sys.executable, "-c", code, str(wheel)], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "1"


def test_the_installed_version_is_the_packages_own():
    from importlib.metadata import version

    from degreewise import VERSION

    assert version("degreewise") == VERSION


def test_the_engine_modules_import_each_other_without_a_cycle():
    """Module-level imports between engine modules form no cycle (imports for type hints only are not
    counted), and no function imports an engine module, which would only hide one."""
    import ast
    from pathlib import Path

    engine_dir = Path(__file__).resolve().parent.parent / "engine"
    graph = {}
    for path in engine_dir.glob("*.py"):
        tree = ast.parse(path.read_text())
        graph[path.stem] = {(node.module or node.names[0].name).split(".")[0] for node in tree.body
                            if isinstance(node, ast.ImportFrom) and node.level == 1}
        inner = [node for f in ast.walk(tree) if isinstance(f, (ast.FunctionDef, ast.AsyncFunctionDef))
                 for node in ast.walk(f) if isinstance(node, ast.ImportFrom) and node.level >= 1]
        assert inner == [], path.name
    done, visiting = set(), []

    def visit(name):
        assert name not in visiting, " -> ".join(visiting[visiting.index(name):] + [name])
        if name not in done:
            visiting.append(name)
            for dep in graph.get(name, ()):
                visit(dep)
            visiting.pop()
            done.add(name)

    for name in graph:
        visit(name)
    assert graph["calibration"] >= {"orders", "selection"}  # the calibration builds on them, not the reverse


def test_no_module_of_the_package_is_over_500_lines():
    """The house rule (DEVELOPERS.md): a module over 500 lines holds more than one job."""
    from pathlib import Path

    top = Path(__file__).resolve().parent.parent
    long = {str(p.relative_to(top)): n for folder in ("engine", "udfs") for p in (top / folder).rglob("*.py")
            if (n := len(p.read_text(encoding="utf-8").splitlines())) > 500}
    assert long == {}
