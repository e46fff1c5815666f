"""Registration: the xlwings settings that `degreewise addin` writes, and what `import udfs` pulls in."""

import subprocess
import sys

from udfs.addin import write_settings
from udfs.cli import main


def test_settings_file_is_written_and_other_keys_kept(tmp_path):
    conf = tmp_path / ".xlwings" / "xlwings.conf"
    conf.parent.mkdir()
    conf.write_text('"ONEDRIVE_WIN","C:\\\\Users\\\\me\\\\OneDrive"\n"UDF MODULES","old_module"\n')
    written = write_settings(conf, "C:\\Python\\python.exe")
    assert written == {"UDF MODULES": "udfs", "INTERPRETER_WIN": "C:\\Python\\python.exe"}
    assert conf.read_text().splitlines() == [
        '"ONEDRIVE_WIN","C:\\\\Users\\\\me\\\\OneDrive"', '"UDF MODULES","udfs"',
        '"INTERPRETER_WIN","C:\\Python\\python.exe"']


def test_addin_command_prints_steps(tmp_path, capsys):
    conf = tmp_path / "xlwings.conf"
    assert main(["addin", "--config", str(conf)]) == 0
    out = capsys.readouterr().out
    assert conf.read_text().startswith('"UDF MODULES","udfs"')
    assert "xlwings addin install" in out and "Import Functions" in out
    if not sys.platform.startswith("win"):
        assert "This system cannot run the desktop add-in" in out


def test_import_udfs_needs_no_file_system_modules_of_ours():
    code = ("import sys, udfs; mods = set(sys.modules);"
            "print(sorted(m for m in mods if m.startswith('udfs') or m in ('openpyxl', 'tqdm', 'subprocess',"
            " 'multiprocessing', 'defusedxml')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    loaded = eval(out)
    assert "udfs.cli" not in loaded and "udfs.validation" not in loaded and "udfs.addin" not in loaded
    assert "openpyxl" not in loaded and "tqdm" not in loaded and "multiprocessing" not in loaded
    assert "udfs.functions" in loaded and "udfs.coercion" in loaded
