"""The web app of another git revision, built in a temporary directory, for the browser benchmarks'
``--baseline REV`` (so both versions are measured side by side in one run).

    with baseline_site.built("82407df") as webapp:   # a Path to that revision's built webapp/
        site = helpers.Site(webapp=webapp)

The revision's tracked files are taken with ``git archive``; its own ``scripts/build_webapp.py`` lays out
its site, with this checkout's ``node_modules`` (the same pinned packages) and a copy of its build cache
(``build/webapp``: the precompiled stdlib and the PyPI wheels), so no network is needed when the cache is
warm. The e2e test pages of this checkout are mounted by ``helpers.Site`` as usual.
"""

from __future__ import annotations

import contextlib
import io
import shutil
import subprocess
import sys
import tarfile
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


@contextlib.contextmanager
def built(rev: str):
    with tempfile.TemporaryDirectory(prefix="tamis-baseline-") as tmp:
        dest = Path(tmp)
        tar = subprocess.run(["git", "-C", str(ROOT), "archive", rev], check=True, capture_output=True).stdout
        with tarfile.open(fileobj=io.BytesIO(tar)) as tf:
            tf.extractall(dest, filter="data") if hasattr(tarfile, "data_filter") else tf.extractall(dest)
        (dest / "node_modules").symlink_to(ROOT / "node_modules")
        cache = ROOT / "build" / "webapp"
        if cache.is_dir():
            shutil.copytree(cache, dest / "build" / "webapp")
        proc = subprocess.run([sys.executable, str(dest / "scripts" / "build_webapp.py")], capture_output=True,
                              text=True)
        if proc.returncode:
            raise RuntimeError(f"building {rev} failed:\n{(proc.stderr or proc.stdout)[-2000:]}")
        print(f"baseline {rev}: " + proc.stdout.strip().splitlines()[-1].removeprefix("build: "), flush=True)
        yield dest / "webapp"
