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


def add_pyc(src: str, out: str, code_path, pyc_name, *, record_name: str | None = None, level: int | None = None):
    """Copy every entry of the zip ``src`` into ``out`` and, after each ``.py``, its
    bytecode as an unchecked-hash ``.pyc`` named ``pyc_name(entry name)``, compiled
    with ``code_path(entry name)`` as its file name. With ``record_name`` (a wheel's
    ``RECORD``) the added files are listed in it, before its own last line."""
    added = []
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED, compresslevel=level) as zout:
        for info in zin.infolist():
            if info.filename == record_name:
                continue
            data = zin.read(info)
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
    """The runtime's stdlib zip, a ``.pyc`` beside each ``.py``, written to ``out``."""
    name = "/lib/python%d%d.zip" % sys.version_info[:2]
    add_pyc(name, out, lambda f: f"{name}/{f}", lambda f: f + "c", level=9)


def add_wheel_pyc(src: str, out: str) -> None:
    """The wheel ``src`` with the ``__pycache__`` bytecode of each module, written to ``out``."""
    with zipfile.ZipFile(src) as z:
        record_name = next(n for n in z.namelist() if n.endswith(".dist-info/RECORD"))
    add_pyc(src, out, lambda f: "/lib/python3/site-packages/" + f, importlib.util.cache_from_source,
            record_name=record_name)
