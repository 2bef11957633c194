"""Add unchecked-hash ``.pyc`` files to a zip of Python sources, inside Pyodide.

``scripts/pyodide_bytecode.mjs`` runs this file in Pyodide itself, so that the
bytecode magic is the runtime's CPython's, then calls one of:

- :func:`add_stdlib_pyc`: the stock ``python_stdlib.zip`` ships ``.py`` only,
  so every boot would compile ~200 modules (measured on the build machine:
  offline boot 4.7 s with the stock zip, 1.1 s with the ``.pyc`` beside each
  ``.py``);
- :func:`add_wheel_pyc`: the tamis wheel with ``tamis/**/__pycache__/*.pyc``,
  listed in the wheel's ``RECORD``; importing the core from bytecode saves
  most of its import time at every boot (``docs/webapp.md``).

Standard library only; nothing here is Pyodide-specific but the paths.
"""

from __future__ import annotations

import base64
import hashlib
import importlib._bootstrap_external as bootstrap
import importlib.util
import sys
import zipfile


def _digest(data: bytes) -> str:
    """A wheel ``RECORD`` hash: ``sha256=`` and the urlsafe base64 digest without padding."""
    return "sha256=" + base64.urlsafe_b64encode(hashlib.sha256(data).digest()).rstrip(b"=").decode()


#: Top-level stdlib modules and packages left out of the app's stdlib zip (docs/decisions.md, "precache"):
#: none is imported by the core, its self-test, Pyodide's own start or micropip (tests/pyodide/
#: stdlib_complete.mjs runs all of them on the trimmed zip and fails on a missing module). Interactive and
#: development tools (REPL, debuggers, test runners, documentation browsers), process and server modules that
#: cannot run in a browser worker, and the pure-Python twins of modules Pyodide builds in C (_decimal,
#: _datetime, _io).
STDLIB_LEFT_OUT = frozenset({
    "_pyrepl", "pdb", "bdb", "doctest", "unittest", "pydoc", "pydoc_data", "idlelib", "turtledemo", "turtle",
    "tkinter", "lib2to3", "ensurepip", "venv", "curses", "dbm", "sqlite3", "test", "antigravity", "this",
    "__hello__", "__phello__", "multiprocessing", "xmlrpc", "wsgiref", "mailbox", "imaplib", "poplib",
    "smtplib", "ftplib", "socketserver", "cProfile", "profile", "pstats", "trace", "tracemalloc", "timeit",
    "tabnanny", "pyclbr", "zipapp", "webbrowser", "_pydecimal", "_pydatetime", "_pyio",
})


def _left_out(name: str) -> bool:
    top = name.split("/", 1)[0]
    return (top[:-3] if top.endswith(".py") else top) in STDLIB_LEFT_OUT


def add_pyc(src: str, out: str, code_path, pyc_name, *, record_name: str | None = None, level: int | None = None,
            keep_source: bool = True, leave_out=lambda name: False):
    """Copy every entry of the zip ``src`` into ``out`` and, after each ``.py``, its
    bytecode as an unchecked-hash ``.pyc`` named ``pyc_name(entry name)``, compiled
    with ``code_path(entry name)`` as its file name. With ``record_name`` (a wheel's
    ``RECORD``) the added files are listed in it, before its own last line.
    ``keep_source=False`` writes the ``.pyc`` without its ``.py`` (a sourceless
    module, which zipimport loads from the ``.pyc`` beside where the ``.py`` was);
    entries for which ``leave_out(name)`` is true are not copied at all."""
    added = []
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED, compresslevel=level) as zout:
        for info in zin.infolist():
            if info.filename == record_name or leave_out(info.filename):
                continue
            data = zin.read(info)
            if keep_source or not info.filename.endswith(".py"):
                zout.writestr(info, data)
            if info.filename.endswith(".py"):
                code = compile(data, code_path(info.filename), "exec", dont_inherit=True)
                pyc = bootstrap._code_to_hash_pyc(code, importlib.util.source_hash(data), checked=False)
                zi = zipfile.ZipInfo(pyc_name(info.filename), info.date_time)
                zi.compress_type = zipfile.ZIP_DEFLATED
                zout.writestr(zi, pyc)
                added.append(f"{zi.filename},{_digest(pyc)},{len(pyc)}")
        if record_name is not None:
            record = zin.read(record_name).decode().rstrip("\n").split("\n")
            zi = zipfile.ZipInfo(record_name, zin.getinfo(record_name).date_time)
            zi.compress_type = zipfile.ZIP_DEFLATED
            zout.writestr(zi, "\n".join(record[:-1] + added + record[-1:]) + "\n")


def add_stdlib_pyc(out: str) -> None:
    """The runtime's stdlib zip as bytecode only (a ``.pyc`` where each ``.py`` was, no source: tracebacks
    name the file and line without quoting it) and without :data:`STDLIB_LEFT_OUT`, written to ``out``."""
    name = "/lib/python%d%d.zip" % sys.version_info[:2]
    add_pyc(name, out, lambda f: f"{name}/{f}", lambda f: f + "c", level=9, keep_source=False, leave_out=_left_out)


def add_wheel_pyc(src: str, out: str) -> None:
    """The wheel ``src`` with the ``__pycache__`` bytecode of each module, written to ``out``."""
    with zipfile.ZipFile(src) as z:
        record_name = next(n for n in z.namelist() if n.endswith(".dist-info/RECORD"))
    add_pyc(src, out, lambda f: "/lib/python3/site-packages/" + f, importlib.util.cache_from_source,
            record_name=record_name)
