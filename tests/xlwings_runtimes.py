"""xlwings' own registration and call code for both spreadsheet runtimes, run here in a fresh interpreter.

Desktop (the classic add-in on Windows): xlwings is imported as on Windows, with stand-ins only for what
exists only there (pywin32's modules and the Windows parts of ctypes). Then xlwings' ``import_udfs`` (what
"Import Functions" runs) generates the VBA wrappers and registers the descriptions with a stand-in
workbook, and calls go through ``com_server.XLPython.CallUDF``, the method the wrappers call, with arguments
as COM delivers them: a range object whose ``Value`` is a tuple of row tuples (a scalar for one cell),
floats, integer error codes, None, Decimal (currency), ``pywintypes.TimeType`` (dates), and the
missing-argument marker for an omitted optional.

Browser (in-workbook Python, Office.js custom functions): xlwings is imported as xlwings Lite runs it (the
custom-function decorators of ``xlwings.pro``, under the noncommercial licence key; Pyodide's ``JsNull``
is a stand-in class), and ``custom_functions_meta`` and ``custom_functions_call`` run on a module made like
the workbook's main.py, with arguments as Office.js delivers them: 2-D arrays, whole numbers as ints, null,
error objects.

Each session runs in its own interpreter (``desktop(calls)``, ``browser(calls)``); calls and results
travel as pickles.
"""

from __future__ import annotations

import functools
import os
import pickle
import subprocess
import sys
from pathlib import Path

MISSING = -2147352572  # COM's DISP_E_PARAMNOTFOUND: an omitted optional argument (xlwings udfs.call_udf)
RANGE_IID = "{00020846-0000-0000-C000-000000000046}"  # the COM Range interface (xlwings _xlwindows)


class ComRange:
    """A worksheet range as the COM layer hands it to xlwings: its Value is what pywin32 returns (a tuple of
    row tuples, or a scalar for one cell). ``blank_rows`` adds empty rows below, as a whole column has."""

    Row = Column = 1  # where the range is: xlwings reads its engine through the worksheet

    def __init__(self, value, blank_rows: int = 0):
        self.filled, self.blank_rows = value, blank_rows
        rows = value if isinstance(value, tuple) else ((value,),)
        self.Rows, self.Columns = _Count(len(rows) + blank_rows), _Count(len(rows[0]))
        self.Count = self.Rows.Count * self.Columns.Count
        self.Worksheet = _Parent()

    @functools.cached_property
    def Value(self):
        if not self.blank_rows:
            return self.filled
        return self.filled + tuple((None,) for _ in range(self.blank_rows))

    @property
    def _oleobj_(self):  # what xlwings' is_range_instance looks at
        return _TypeInfo()


class Column(list):
    """A column as Office.js hands it over: one-cell rows, ``blank_rows`` of them null at the bottom."""

    def __init__(self, values, blank_rows: int = 0):
        super().__init__([[v] for v in values])
        self.blank_rows = blank_rows


class _Count:
    def __init__(self, n):
        self.Count = n


class _Parent:
    """A worksheet whose Parent is a workbook whose Application is the program."""

    @property
    def Parent(self):
        return _Parent()

    Application = type("Application", (), {"Hwnd": 1})()


class _TypeInfo:
    iid = RANGE_IID

    def GetTypeInfo(self):
        return self

    def GetTypeAttr(self):
        return self


def _run(kind: str, calls, env: dict):
    here = Path(__file__).resolve().parent
    environment = {**os.environ, "PYTHONPATH": os.pathsep.join([str(here), os.environ.get("PYTHONPATH", "")]),
                   **env}
    out = subprocess.run([sys.executable, "-c", f"import xlwings_runtimes as r; r._{kind}_session()"],
                         input=pickle.dumps(calls), capture_output=True, env=environment, check=False)
    if out.returncode:
        raise RuntimeError(out.stderr.decode())
    return pickle.loads(out.stdout)


def desktop(calls):
    """{'vba': the generated module, 'options': MacroOptions calls, 'results': one per (name, args) call}."""
    return _run("desktop", calls, {"XLWINGS_LICENSE_KEY": "", "XLWINGS_ON_SERVER": ""})


def browser(calls):
    """{'meta': custom_functions_meta of main.py, 'results': one per (python name, args) call}."""
    return _run("browser", calls, {"XLWINGS_LICENSE_KEY": "noncommercial", "XLWINGS_ON_SERVER": "true"})


def _windows_stand_ins():
    import ctypes
    import datetime
    import types
    from unittest import mock

    class TimeType(datetime.datetime):  # pywin32's date type is a datetime subclass
        pass

    class com_error(Exception):  # noqa: N801 - pywin32's name
        pass

    pywintypes = types.ModuleType("pywintypes")
    pywintypes.TimeType, pywintypes.com_error, pywintypes.error = TimeType, com_error, com_error
    pywintypes.IID = lambda s: s
    util = types.ModuleType("win32com.server.util")
    util.unwrap = lambda ob: (_ for _ in ()).throw(TypeError("not a wrapped COM object"))
    util.wrap = lambda ob: ob
    client = mock.MagicMock(name="win32com.client")
    client.Dispatch = lambda ob, *a, **k: ob
    for kind in ("CDispatch", "CoClassBaseClass", "DispatchBaseClass"):
        setattr(client, kind, type(kind, (), {}))
    modules = {name: mock.MagicMock(name=name) for name in (
        "pythoncom", "win32api", "win32con", "win32gui", "win32process", "win32timezone", "win32event",
        "win32com", "win32com.client.gencache", "win32com.server", "win32com.server.dispatcher",
        "win32com.server.policy")}
    modules["pythoncom"].__file__ = "pythoncom311.dll"
    modules.update({"pywintypes": pywintypes, "win32com.client": client, "win32com.server.util": util})
    for name, module in modules.items():  # win32com.server.util is also an attribute of win32com.server
        parent, _, child = name.rpartition(".")
        if parent:
            setattr(modules[parent], child, module)
    sys.modules.update(modules)
    ctypes.windll = ctypes.oledll = mock.MagicMock(name="ctypes Windows DLLs")
    return TimeType, mock.patch("ctypes.PyDLL")


class _Workbook:
    """What import_udfs touches of the COM workbook: name, VBA project, application."""

    Name = "calibrations.xlsm"

    def __init__(self):
        self.vba, self.options = [], []
        book = self

        class Components:
            def __call__(self, name):
                return name

            def Remove(self, component):
                pass

            def Import(self, path):
                book.vba.append(Path(path).read_text())

        class Application:
            Version = "16.0"

            def MacroOptions(self, macro, **kwargs):
                book.options.append((macro, kwargs))

        self.VBProject = type("VBProject", (), {"VBComponents": Components()})()
        self.Application = Application()
        self.Worksheets = []


def _desktop_session():
    calls, out = pickle.load(sys.stdin.buffer), sys.stdout.buffer
    sys.stdout = sys.stderr  # xlwings prints what it imported
    time_type, pydll = _windows_stand_ins()
    platform, sys.platform = sys.platform, "win32"
    try:
        with pydll:
            import xlwings
            try:
                from xlwings import com_server
            except ImportError:  # xlwings 0.30 (the declared floor) named it xlwings.server
                from xlwings import server as com_server
    finally:
        sys.platform = platform
    assert xlwings.func.__module__ == "xlwings.udfs"  # the desktop decorators, as on Windows
    book = _Workbook()
    xlwings.import_udfs("degreewise", book)
    server = com_server.XLPython()
    results = [server.CallUDF("degreewise", name, tuple(_as_com(a, time_type) for a in args), book, None)
               for name, args in calls]
    pickle.dump({"vba": book.vba[0], "options": book.options, "results": results}, out)


def _as_com(value, time_type):
    """Dates become pywin32's date type, in ranges too."""
    import datetime

    if isinstance(value, ComRange):
        return ComRange(_as_com(value.filled, time_type), value.blank_rows)
    if isinstance(value, tuple):
        return tuple(_as_com(v, time_type) for v in value)
    if isinstance(value, datetime.datetime):
        return time_type(*value.timetuple()[:6])
    return value


class JsError(dict):
    """An error value as Office.js hands it to a custom function (allowErrorForDataTypeAny)."""

    def __init__(self, text: str, kind: str):
        super().__init__(type="Error", basicType="Error", basicValue=text, errorType=kind)


def _browser_session():
    import asyncio
    import types

    calls, out = pickle.load(sys.stdin.buffer), sys.stdout.buffer
    sys.stdout = sys.stderr
    ffi = types.ModuleType("pyodide.ffi")
    ffi.JsNull = type("JsNull", (), {})
    sys.modules.update({"pyodide": types.ModuleType("pyodide"), "pyodide.ffi": ffi})
    import xlwings
    from xlwings.pro.udfs_officejs import custom_functions_call, custom_functions_meta

    assert xlwings.func.__module__ == "xlwings.pro.udfs_officejs"  # the custom-function decorators
    main = types.ModuleType("main")
    exec("from degreewise import *", main.__dict__)  # the main.py the README gives
    null = ffi.JsNull()

    def js(value):
        if isinstance(value, Column):
            return js(list(value)) + [[null] for _ in range(value.blank_rows)]
        if isinstance(value, list):
            return [js(v) for v in value]
        return null if value is None else value

    async def call(name, args):
        data = {"func_name": name, "args": [js(a) for a in args], "version": xlwings.__version__,
                "client": "Office.js", "runtime": "1.4", "caller_address": "Sheet1!H2",
                "culture_info_name": "en-US", "date_format": "m/d/yyyy"}
        return await custom_functions_call(data, main)

    results = [asyncio.run(call(name, args)) for name, args in calls]
    pickle.dump({"meta": custom_functions_meta(main), "results": results}, out)
