"""Fixtures of the engine suite: each test runs once per engine (chromium, firefox, webkit).

- ``engine`` (one browser per engine for the whole run, a fresh origin per test
  through ``site``): the interface of ``engines.py``; it is put back online and
  its error lists emptied before each test.
- ``site``: the built app on a free port, with the e2e error collector:
  ``index.html`` carries ``<script src="__e2e__/errors.js">`` first, and the
  service worker imports ``__e2e__/errors_scope.js`` (through the served
  ``vendor/build.js``); the manifest lists the served bytes, so the service
  worker precaches and checks exactly what the browser runs.
- Boot figures (navigation -> "Calculator ready" and -> "Ready offline", from
  the page's own clock) are collected in ``BOOT`` and printed at the end of the
  run, one line per engine and visit, side by side.

A missing browser fails every test of that engine with the package to install.
"""

from __future__ import annotations

import hashlib
import json
import time

import pytest

import engines
import helpers

from engines import BOOT, SPENT

COLLECTOR = '<script src="__e2e__/errors.js"></script>\n  '
MODULE_TAG = '<script type="module" src="src/main.js"></script>'


class InstrumentedSite(helpers.Site):
    """The app with the e2e error collector in its page and in its service worker."""

    def _serve_manifest(self, version: str) -> None:
        if not getattr(self, "_index", None):
            html = (helpers.WEBAPP / "index.html").read_text(encoding="utf-8")
            if MODULE_TAG not in html:
                raise RuntimeError(f"webapp/index.html no longer loads {MODULE_TAG}: update e2e/engines/conftest.py")
            self._index = html.replace(MODULE_TAG, COLLECTOR + MODULE_TAG, 1).encode("utf-8")
            files = [dict(f) for f in self.base_manifest["files"]]
            entry = next(f for f in files if f["path"] == "index.html")
            entry.update(sha256=hashlib.sha256(self._index).hexdigest(), size=len(self._index))
            self.base_manifest = dict(self.base_manifest, files=files)
            self.server.overrides["/index.html"] = (self._index, "text/html; charset=utf-8")
            self.server.overrides["/"] = (self._index, "text/html; charset=utf-8")
        super()._serve_manifest(version)
        body, ctype = self.server.overrides["/vendor/build.js"][:2]
        self.server.overrides["/vendor/build.js"] = (
            body + b'importScripts("./__e2e__/errors_scope.js");\n', ctype)


@pytest.fixture
def site():
    site = InstrumentedSite()
    yield site
    site.stop()


@pytest.fixture(scope="session", params=engines.ENGINES)
def engine_session(request):
    started = time.monotonic()
    eng = engines.launch(request.param)
    yield eng
    eng.close()
    SPENT[request.param] = SPENT.get(request.param, 0.0) + time.monotonic() - started


@pytest.fixture
def engine(engine_session):
    started = time.monotonic()
    engine_session.go_online()
    engine_session.clear_errors()
    yield engine_session
    engine_session.go_online()
    SPENT[engine_session.name + " tests"] = SPENT.get(engine_session.name + " tests", 0.0) + time.monotonic() - started


def pytest_terminal_summary(terminalreporter):
    if not BOOT and not SPENT:
        return
    tr = terminalreporter
    tr.section("engine suite: boot to ready (ms since navigation start, the page's clock)")
    visits = sorted({v for _, v in BOOT})
    header = f"{'engine':<10}" + "".join(f"{v + ': calculator':>28}{v + ': offline':>24}" for v in visits)
    tr.write_line(header)
    for name in engines.ENGINES:
        cells = []
        for v in visits:
            m = BOOT.get((name, v), {})
            cells.append(f"{_ms(m.get('core_ready_ms')):>28}{_ms(m.get('offline_ready_ms')):>24}")
        tr.write_line(f"{name:<10}" + "".join(cells))
    for name in engines.ENGINES:
        if name in SPENT:
            tr.write_line(f"{name}: {SPENT[name]:.1f} s in all (browser start and stop included)")
    tr.write_line(f"engine suite: {sum(v for k, v in SPENT.items() if k in engines.ENGINES):.1f} s")
    tr.write_line(json.dumps({f"{k[0]}/{k[1]}": v for k, v in BOOT.items()}))


def _ms(v) -> str:
    return "-" if v is None else f"{v:,.0f}"
