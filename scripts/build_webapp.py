#!/usr/bin/env python3
"""Lay out ``webapp/`` as the whole static site of the tamis web app.

After ``make build``, ``webapp/`` is everything a static server needs:

    webapp/index.html, styles/, src/, icons/, manifest.webmanifest, sw.js   (committed shell)
    webapp/vendor/                                                           (built here, not committed)
        pyodide/pyodide.mjs, pyodide.asm.mjs, pyodide.asm.wasm              runtime from node_modules/pyodide
        pyodide/python_stdlib.zip                                            stdlib with precompiled .pyc
        pyodide/pyodide-lock.json                                            trimmed lock: micropip + packaging only
        pyodide/micropip-*.whl, packaging-*.whl                              from PyPI (pip download, cached in build/)
        wheels/tamis-<version>-py3-none-any.whl                              freshly built core wheel
        idb/                                                                 the IndexedDB wrapper (npm idb)
        demo/*.csv                                                           copies of demo_data/*.csv
        selftest.json                                                        a golden gradation request, CPython's answer
        manifest.json, build.js                                              every file of the site, sha256, size, version

The build is idempotent: a file is rewritten only when its content changes, the
precompiled stdlib and the wheels are cached under ``build/webapp/`` (a rebuild
needs no network), and files left over from an older build are removed from
``webapp/vendor/``. Run ``python scripts/build_webapp.py --help`` for options.
"""

from __future__ import annotations

import argparse
import hashlib
import json
import os
import re
import shutil
import struct
import subprocess
import sys
import time
import zlib
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
WEBAPP = ROOT / "webapp"
VENDOR = WEBAPP / "vendor"
CACHE = ROOT / "build" / "webapp"
NODE_MODULES = ROOT / "node_modules"

#: Files of the npm ``pyodide`` package that boot needs (with a lock file; pyodide.js and the consoles are not).
RUNTIME_FILES = ("pyodide.mjs", "pyodide.asm.mjs", "pyodide.asm.wasm")
#: Wheels fetched from PyPI for the micropip install path; pinned.
PYPI_WHEELS = (("micropip", "0.11.1"), ("packaging", "26.1"))
#: Wheel timestamps are fixed so the same sources give the same wheel bytes (and build version).
SOURCE_DATE_EPOCH = "315532800"  # 1980-01-01, the earliest date a zip entry can carry
#: Paths (relative to webapp/) that never go into the precache manifest.
NOT_PRECACHED = {"sw.js", "vendor/manifest.json", "vendor/build.js"}
SKIP_SUFFIXES = (".map", "~", ".swp", ".orig")
SKIP_NAMES = {".DS_Store", "Thumbs.db", ".gitkeep"}

#: Adds .pyc files to the stdlib zip and to the tamis wheel, inside Pyodide (see scripts/pyodide_bytecode.py).
BYTECODE_MJS = ROOT / "scripts" / "pyodide_bytecode.mjs"


def bytecode_key() -> str:
    """A short hash of the bytecode scripts: a change to them rebuilds what they made."""
    return sha256_bytes(b"".join(p.read_bytes() for p in (BYTECODE_MJS, BYTECODE_MJS.with_suffix(".py"))))[:12]


class BuildError(Exception):
    """A build step failed; the message says what to do."""


def sha256_bytes(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def sha256_file(path: Path) -> str:
    h = hashlib.sha256()
    with path.open("rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def log(msg: str) -> None:
    print(f"build: {msg}", flush=True)


class Layout:
    """Writes into webapp/vendor/ only when content changes and remembers what it wrote."""

    def __init__(self, vendor: Path):
        self.vendor = vendor
        self.written: set[Path] = set()
        self.changed = 0

    def put_bytes(self, rel: str, data: bytes) -> Path:
        dest = self.vendor / rel
        self.written.add(dest)
        if dest.is_file() and dest.stat().st_size == len(data) and dest.read_bytes() == data:
            return dest
        dest.parent.mkdir(parents=True, exist_ok=True)
        tmp = dest.with_name(dest.name + ".tmp")
        tmp.write_bytes(data)
        os.replace(tmp, dest)
        self.changed += 1
        return dest

    def put_file(self, rel: str, src: Path) -> Path:
        if not src.is_file():
            raise BuildError(f"missing source file {src.relative_to(ROOT)}")
        dest = self.vendor / rel
        self.written.add(dest)
        if dest.is_file() and dest.stat().st_size == src.stat().st_size and sha256_file(dest) == sha256_file(src):
            return dest
        dest.parent.mkdir(parents=True, exist_ok=True)
        tmp = dest.with_name(dest.name + ".tmp")
        shutil.copyfile(src, tmp)
        os.replace(tmp, dest)
        self.changed += 1
        return dest

    def remove_stale(self) -> int:
        removed = 0
        for path in sorted(self.vendor.rglob("*"), reverse=True):
            if path.is_file() and path not in self.written:
                path.unlink()
                removed += 1
            elif path.is_dir() and not any(path.iterdir()):
                path.rmdir()
        return removed


def pinned_npm_version(name: str) -> str:
    pkg = json.loads((ROOT / "package.json").read_text(encoding="utf-8"))
    version = pkg.get("dependencies", {}).get(name)
    if not version:
        raise BuildError(f"package.json does not pin {name!r}")
    return version


def npm_package_dir(name: str) -> Path:
    pkg_dir = NODE_MODULES / name
    meta = pkg_dir / "package.json"
    if not meta.is_file():
        raise BuildError(f"node_modules/{name} is missing: run `make setup` (npm ci) first")
    want = pinned_npm_version(name)
    have = json.loads(meta.read_text(encoding="utf-8")).get("version")
    if have != want:
        raise BuildError(f"node_modules/{name} is {have}, package.json pins {want}: run `npm ci`")
    return pkg_dir


def stdlib_with_pyc(pyodide_dir: Path, version: str) -> Path:
    """The stdlib zip with .pyc added, cached per Pyodide version and stock zip hash."""
    stock = pyodide_dir / "python_stdlib.zip"
    key = f"{version}-{sha256_file(stock)[:16]}-{bytecode_key()}"
    out = CACHE / f"python_stdlib-pyc-{key}.zip"
    if out.is_file():
        return out
    CACHE.mkdir(parents=True, exist_ok=True)
    tmp = out.with_name(out.name + ".tmp")
    log(f"precompiling the Pyodide {version} stdlib to .pyc (once per version, ~15 s)")
    t0 = time.monotonic()
    run_node([str(pyodide_dir), "stdlib", str(tmp)], "precompile the stdlib")
    os.replace(tmp, out)
    log(f"stdlib precompiled in {time.monotonic() - t0:.1f} s ({out.stat().st_size:,} bytes)")
    return out


def pypi_wheel(name: str, version: str) -> Path:
    """A pure-Python wheel from PyPI, downloaded once into build/webapp/wheels/."""
    dest = CACHE / "wheels"
    found = sorted(dest.glob(f"{name}-{version}-*.whl"))
    if found:
        return found[0]
    dest.mkdir(parents=True, exist_ok=True)
    log(f"downloading {name}=={version} from PyPI")
    # --python-version 3.14: micropip 0.11 requires Python >= 3.13, newer than the host CPython.
    cmd = [sys.executable, "-m", "pip", "download", "--no-deps", "--only-binary=:all:", "--python-version", "3.14",
           "--platform", "any", "--quiet", "-d", str(dest), f"{name}=={version}"]
    proc = subprocess.run(cmd, capture_output=True, text=True)
    found = sorted(dest.glob(f"{name}-{version}-*.whl"))
    if proc.returncode != 0 or not found:
        raise BuildError(f"could not download {name}=={version} from PyPI (needed once, then cached in "
                         f"build/webapp/wheels/):\n{(proc.stderr or proc.stdout)[-2000:]}")
    return found[0]


def core_sources() -> list[Path]:
    files = [ROOT / "pyproject.toml", ROOT / "README.md"]
    files += sorted(p for p in (ROOT / "pycore" / "tamis").rglob("*") if p.is_file()
                    and "__pycache__" not in p.parts and not p.name.endswith((".pyc", ".pyo")))
    return [p for p in files if p.is_file()]


def tamis_wheel() -> Path:
    """A freshly built tamis wheel, cached by a hash of its sources."""
    h = hashlib.sha256()
    for path in core_sources():
        h.update(path.relative_to(ROOT).as_posix().encode() + b"\0" + path.read_bytes() + b"\0")
    out_dir = CACHE / f"tamis-{h.hexdigest()[:16]}"
    found = sorted(out_dir.glob("tamis-*.whl"))
    if len(found) == 1:
        return found[0]
    tmp_dir = out_dir.with_name(out_dir.name + ".tmp")
    shutil.rmtree(tmp_dir, ignore_errors=True)
    tmp_dir.mkdir(parents=True)
    log("building the tamis wheel")
    # Build from a clean copy of the sources so setuptools' own build/ folder
    # never carries a module deleted from pycore/ into the wheel.
    src_dir = tmp_dir / "src"
    for path in core_sources():
        dest = src_dir / path.relative_to(ROOT)
        dest.parent.mkdir(parents=True, exist_ok=True)
        shutil.copyfile(path, dest)
    env = dict(os.environ, SOURCE_DATE_EPOCH=SOURCE_DATE_EPOCH)
    cmd = [sys.executable, "-m", "pip", "wheel", "--no-deps", "--no-build-isolation", "--quiet", "-w", str(tmp_dir),
           str(src_dir)]
    proc = subprocess.run(cmd, capture_output=True, text=True, env=env, cwd=src_dir)
    found = sorted(tmp_dir.glob("tamis-*.whl"))
    if proc.returncode != 0 or len(found) != 1:
        raise BuildError("building the tamis wheel failed (setuptools and wheel must be in the venv: "
                         f"`make setup`):\n{(proc.stderr or proc.stdout)[-3000:]}")
    shutil.rmtree(src_dir)
    for old in CACHE.glob("tamis-*"):  # keep one cached wheel: the sources move on
        if old != tmp_dir:
            shutil.rmtree(old, ignore_errors=True)
    os.replace(tmp_dir, out_dir)
    return out_dir / found[0].name


def run_node(args: list[str], what: str) -> None:
    """``node scripts/pyodide_bytecode.mjs ARGS``; ``what`` says what for, in an error."""
    node = shutil.which("node")
    if not node:
        raise BuildError(f"node is not on PATH; it is needed to {what}")
    proc = subprocess.run([node, str(BYTECODE_MJS), *args], capture_output=True, text=True)
    if proc.returncode != 0:
        raise BuildError(f"could not {what}:\n" + (proc.stderr or proc.stdout)[-3000:])


def wheel_with_bytecode(wheel: Path, pyodide_dir: Path, pyodide_version: str) -> Path:
    """The tamis wheel plus .pyc for Pyodide's CPython, cached by wheel hash and Pyodide version."""
    out = wheel.parent / "pyodide" / f"{pyodide_version}-{bytecode_key()}" / wheel.name
    if out.is_file():
        return out
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = out.with_name(out.name + ".tmp")
    run_node([str(pyodide_dir), "wheel", str(wheel), str(tmp)], "compile the tamis wheel to Pyodide bytecode")
    os.replace(tmp, out)
    return out


def trimmed_lock(stock_lock: Path, wheels: dict[str, Path]) -> bytes:
    """pyodide-lock.json with only micropip and packaging, hashes of the PyPI files.

    The stock lock's sha256 values belong to Pyodide's repackaged wheels; the
    browser's integrity check rejects PyPI's files against them, so the
    entries are rewritten here.
    """
    stock = json.loads(stock_lock.read_text(encoding="utf-8"))
    packages = {}
    for name, path in wheels.items():
        entry = dict(stock["packages"].get(name) or {
            "name": name, "depends": [], "imports": [name], "install_dir": "site", "package_type": "package",
            "tool": {}, "unvendored_tests": False})
        entry.update(file_name=path.name, sha256=sha256_file(path), version=path.name.split("-")[1], depends=[])
        packages[name] = entry
    lock = {"info": stock["info"], "packages": packages}
    return (json.dumps(lock, indent=1, sort_keys=True) + "\n").encode()


def cpython_answers(wheel: Path, requests: list[str]) -> list[str]:
    """tamis.api.handle on CPython, importing the core from the built wheel only."""
    code = (f"import sys; sys.path.insert(0, {str(wheel)!r}); import json, tamis.api; "
            "print(json.dumps([tamis.api.handle(r) for r in json.load(sys.stdin)]))")
    proc = subprocess.run([sys.executable, "-I", "-S", "-c", code], input=json.dumps(requests),
                          capture_output=True, text=True)
    if proc.returncode != 0:
        raise BuildError("the built tamis wheel does not run on CPython:\n" + proc.stderr[-3000:])
    return json.loads(proc.stdout)


def golden_selftest(wheel: Path) -> bytes | None:
    """One golden gradation request and CPython's exact answer to it, for the worker's boot self-test.

    The expected string is computed here from the built wheel (so the self-test
    checks that Pyodide reproduces CPython byte for byte on these sources); a
    golden response file that no longer matches is reported as stale.
    """
    golden = ROOT / "tests" / "golden"
    for req in sorted(golden.glob("gradation-*.request.json")):
        request = req.read_text(encoding="utf-8")
        answer = cpython_answers(wheel, [request])[0]
        if not json.loads(answer).get("ok"):
            continue
        name = req.name[: -len(".request.json")]
        resp = golden / f"{name}.response.json"
        if resp.is_file() and resp.read_text(encoding="utf-8") != answer:
            log(f"warning: tests/golden/{name}.response.json differs from what the sources answer now "
                "(regenerate the golden files: tests/golden/regenerate.py)")
        return json.dumps({"name": name, "request": request, "response": answer}, indent=1).encode() + b"\n"
    return None


# --- icons: our own simple mark (three sieve bars over a row of grains), drawn pixel by pixel ---

def _png(width: int, height: int, rgba_rows: list[bytes]) -> bytes:
    def chunk(tag: bytes, data: bytes) -> bytes:
        return struct.pack(">I", len(data)) + tag + data + struct.pack(">I", zlib.crc32(tag + data) & 0xFFFFFFFF)
    raw = b"".join(b"\0" + row for row in rgba_rows)
    return (b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", struct.pack(">IIBBBBB", width, height, 8, 6, 0, 0, 0))
            + chunk(b"IDAT", zlib.compress(raw, 9)) + chunk(b"IEND", b""))


def draw_icon(size: int) -> bytes:
    """A square maskable icon: dark slate field, three amber bars narrowing downwards, sand-coloured grains.

    Everything sits inside the central 80 % so a circular or rounded mask keeps the mark whole.
    """
    bg, bar, grain = (0x1F, 0x3A, 0x44), (0xF2, 0xB1, 0x34), (0xE8, 0xDC, 0xC2)
    s = size / 100.0
    bars = [(22, 26, 78, 34), (28, 42, 72, 50), (34, 58, 66, 66)]  # x0, y0, x1, y1 in a 100 x 100 grid
    grains = [(36, 76, 3.2), (46, 77, 4.0), (57, 76, 3.4), (64, 79, 2.6), (41, 81, 2.4), (52, 82, 2.8)]
    rows = []
    for py in range(size):
        y = (py + 0.5) / s
        row = bytearray()
        for px in range(size):
            x = (px + 0.5) / s
            colour = bg
            if any(x0 <= x <= x1 and y0 <= y <= y1 for x0, y0, x1, y1 in bars):
                colour = bar
            elif any((x - cx) ** 2 + (y - cy) ** 2 <= r * r for cx, cy, r in grains):
                colour = grain
            row += bytes(colour) + b"\xff"
        rows.append(bytes(row))
    return _png(size, size, rows)


def ensure_icons() -> None:
    icons = WEBAPP / "icons"
    for size in (192, 512):
        path = icons / f"icon-{size}.png"
        if not path.is_file():
            icons.mkdir(parents=True, exist_ok=True)
            path.write_bytes(draw_icon(size))
            log(f"drew {path.relative_to(ROOT)}")


def site_files() -> list[Path]:
    files = []
    for path in sorted(WEBAPP.rglob("*")):
        if not path.is_file():
            continue
        rel = path.relative_to(WEBAPP).as_posix()
        if rel in NOT_PRECACHED or path.name in SKIP_NAMES or path.name.endswith(SKIP_SUFFIXES):
            continue
        if path.name.endswith(".tmp") or any(part.startswith(".") for part in path.relative_to(WEBAPP).parts):
            continue
        files.append(path)
    return files


def pyodide_build_id(pyodide_dir: Path) -> str:
    """The runtime's BUILD_ID (a hash of pyodide.asm.mjs and pyodide.asm.wasm, written into pyodide.mjs): a memory
    snapshot made by one build of the runtime cannot be loaded by another, so the worker compares a stored
    snapshot's header with this before it tries to load it (docs/webapp.md "Boot paths")."""
    found = set(re.findall(r'BUILD_ID:"([0-9a-f]{64})"', (pyodide_dir / "pyodide.mjs").read_text(encoding="utf-8")))
    if len(found) != 1:
        raise BuildError(f"node_modules/pyodide/pyodide.mjs: expected one BUILD_ID, found {len(found)}; "
                         "the snapshot boot needs it (a new Pyodide release may spell it differently)")
    return found.pop()


def build_manifest(core_version: str, pyodide_version: str, wheel_rel: str, has_selftest: bool,
                   build_id: str) -> dict:
    entries = [{"path": p.relative_to(WEBAPP).as_posix(), "sha256": sha256_file(p), "size": p.stat().st_size}
               for p in site_files()]
    digest = hashlib.sha256("".join(f"{e['path']}\0{e['sha256']}\n" for e in entries).encode()).hexdigest()
    return {
        "schema": 1,
        "version": f"{core_version}+{digest[:12]}",
        "core_version": core_version,
        "pyodide_version": pyodide_version,
        "pyodide_build_id": build_id,
        "wheel": wheel_rel,
        "selftest": "vendor/selftest.json" if has_selftest else None,
        "total_bytes": sum(e["size"] for e in entries),
        "files": entries,
    }


def read_core_version() -> str:
    text = (ROOT / "pycore" / "tamis" / "__init__.py").read_text(encoding="utf-8")
    for line in text.splitlines():
        if line.startswith("__version__"):
            return line.split("=", 1)[1].strip().strip("\"'")
    raise BuildError("pycore/tamis/__init__.py has no __version__")


def build() -> dict:
    t0 = time.monotonic()
    pyodide_dir = npm_package_dir("pyodide")
    pyodide_version = pinned_npm_version("pyodide")
    idb_dir = npm_package_dir("idb")
    core_version = read_core_version()
    layout = Layout(VENDOR)

    for name in RUNTIME_FILES:
        layout.put_file(f"pyodide/{name}", pyodide_dir / name)
    layout.put_file("pyodide/python_stdlib.zip", stdlib_with_pyc(pyodide_dir, pyodide_version))
    wheels = {name: pypi_wheel(name, version) for name, version in PYPI_WHEELS}
    for path in wheels.values():
        layout.put_file(f"pyodide/{path.name}", path)
    layout.put_bytes("pyodide/pyodide-lock.json", trimmed_lock(pyodide_dir / "pyodide-lock.json", wheels))

    wheel = wheel_with_bytecode(tamis_wheel(), pyodide_dir, pyodide_version)
    wheel_rel = f"vendor/wheels/{wheel.name}"
    layout.put_file(f"wheels/{wheel.name}", wheel)

    for src in sorted((idb_dir / "build").glob("*.js")):
        layout.put_file(f"idb/{src.name}", src)
    layout.put_file("idb/LICENSE", idb_dir / "LICENSE")
    for src in sorted((ROOT / "demo_data").glob("*.csv")):
        layout.put_file(f"demo/{src.name}", src)
    selftest = golden_selftest(wheel)
    if selftest is not None:
        layout.put_bytes("selftest.json", selftest)
    else:
        log("warning: no tests/golden/gradation-*.json pair yet; the worker self-test runs the version op only")

    ensure_icons()
    layout.written.update({VENDOR / "manifest.json", VENDOR / "build.js"})
    removed = layout.remove_stale()
    manifest = build_manifest(core_version, pyodide_version, wheel_rel, selftest is not None,
                              pyodide_build_id(pyodide_dir))
    text = json.dumps(manifest, indent=1)
    layout.put_bytes("manifest.json", (text + "\n").encode())
    # The service worker imports build.js, so a new build changes a byte the
    # browser's update check compares, and the waiting worker learns its file list.
    layout.put_bytes("build.js", f"self.TAMIS_BUILD = {text};\n".encode())
    log(f"version {manifest['version']}: {len(manifest['files'])} files, {manifest['total_bytes']:,} bytes; "
        f"{layout.changed} written, {removed} stale removed, {time.monotonic() - t0:.1f} s")
    return manifest


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--redraw-icons", action="store_true", help="redraw webapp/icons/*.png and exit")
    args = parser.parse_args(argv)
    if args.redraw_icons:
        for size in (192, 512):
            (WEBAPP / "icons").mkdir(parents=True, exist_ok=True)
            (WEBAPP / "icons" / f"icon-{size}.png").write_bytes(draw_icon(size))
        return 0
    try:
        build()
    except BuildError as err:
        print(f"build failed: {err}", file=sys.stderr)
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
