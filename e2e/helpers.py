"""Helpers for the e2e suite: the served site, Debian's chromium, guards, axe.

Nothing here builds anything: ``make test-e2e`` builds first. Use through the
fixtures of ``conftest.py`` (``site``, ``browser``, ``context``, ``page``,
``guard``) or directly (the benchmarks do).

- ``Site``: ``scripts/serve.py`` on a free port, serving ``webapp/`` plus the
  e2e test pages at ``/__e2e__/``; the build manifest it serves also lists the
  test pages so the service worker precaches them, and ``bump_version()``
  serves a new build version (same files) to exercise the update flow.
- ``launch_chromium(playwright)``: Debian's chromium via ``executable_path``
  (env ``CHROMIUM`` or ``/usr/bin/chromium``); never ``playwright install``.
- ``RequestGuard``: records every request of a context (pages, workers and
  the service worker) and lists those that leave the site's origin.
- ``run_axe(page)``: axe-core from ``node_modules/axe-core/axe.min.js``,
  injected from the local file (no network), default rules.
"""

from __future__ import annotations

import hashlib
import importlib.util
import json
import os
import urllib.parse
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
WEBAPP = ROOT / "webapp"
VENDOR = WEBAPP / "vendor"
TEST_PAGES = Path(__file__).resolve().parent / "pages"
TEST_PREFIX = "/__e2e__/"
AXE_JS = ROOT / "node_modules" / "axe-core" / "axe.min.js"
CHROMIUM = os.environ.get("CHROMIUM", "/usr/bin/chromium")
#: URL schemes that never leave the device.
LOCAL_SCHEMES = {"data", "blob", "about", "chrome-error"}
BOOT_TIMEOUT_MS = 60_000


def _load_script(name: str):
    spec = importlib.util.spec_from_file_location(f"tamis_{name}", ROOT / "scripts" / f"{name}.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


serve = _load_script("serve")
build_webapp = _load_script("build_webapp")


def read_manifest(webapp: Path = WEBAPP) -> dict:
    path = webapp / "vendor" / "manifest.json"
    if not path.is_file():
        raise RuntimeError("webapp/vendor/manifest.json is missing: run `make build` before the e2e tests")
    return json.loads(path.read_text(encoding="utf-8"))


def _sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


class Site:
    """The built app served on 127.0.0.1, plus the e2e test pages."""

    def __init__(self, with_test_pages: bool = True, webapp: Path = WEBAPP, link=None):
        """``webapp``: the built site to serve (another build's, e.g. a baseline's for a benchmark);
        ``link``: a ``serve.SlowLink`` every response goes through (benchmarks of a slow link)."""
        self.base_manifest = read_manifest(webapp)
        mounts = {TEST_PREFIX: TEST_PAGES} if with_test_pages else {}
        self.server = serve.StaticServer(webapp, "127.0.0.1", 0, mounts=mounts, link=link).start()
        self.with_test_pages = with_test_pages
        self.version = self.base_manifest["version"]
        self._serve_manifest(self.version)

    @property
    def url(self) -> str:
        return self.server.url

    @property
    def origin(self) -> str:
        return self.server.url.rstrip("/")

    @property
    def requests(self) -> list[tuple[str, str]]:
        return self.server.requests

    def page_url(self, name: str = "platform.html", query: str = "") -> str:
        return self.url + TEST_PREFIX.strip("/") + "/" + name + (f"?{query}" if query else "")

    def _serve_manifest(self, version: str) -> None:
        manifest = dict(self.base_manifest, version=version)
        if self.with_test_pages:
            extra = [{"path": TEST_PREFIX.strip("/") + "/" + p.name, "sha256": _sha256(p), "size": p.stat().st_size}
                     for p in sorted(TEST_PAGES.iterdir()) if p.is_file()]
            manifest["files"] = manifest["files"] + extra
            manifest["total_bytes"] = sum(f["size"] for f in manifest["files"])
        text = json.dumps(manifest, indent=1)
        self.manifest = manifest
        self.version = version
        self.server.overrides["/vendor/manifest.json"] = (text.encode() + b"\n", "application/json")
        self.server.overrides["/vendor/build.js"] = (f"self.TAMIS_BUILD = {text};\n".encode(), "text/javascript")

    def bump_version(self, suffix: str = "next") -> str:
        """Serve the same files under a new build version; returns it."""
        self._serve_manifest(f"{self.base_manifest['version']}-{suffix}")
        return self.version

    def make_missing(self, path: str) -> None:
        """Answer 404 for one site path (e.g. "/vendor/pyodide/pyodide.asm.wasm")."""
        self.server.overrides[path] = (b"not found", "text/plain", 404)

    def stop(self) -> None:
        self.server.stop()


def launch_chromium(playwright, **kwargs):
    """Debian's chromium through Playwright's executable_path, headless."""
    if not Path(CHROMIUM).exists():
        raise RuntimeError(f"chromium not found at {CHROMIUM}: run `make setup` (scripts/system-deps.sh) "
                           "or set CHROMIUM; never `playwright install`")
    return playwright.chromium.launch(executable_path=CHROMIUM, headless=True, **kwargs)


class RequestGuard:
    """Records the requests of a browser context; ``foreign`` lists those leaving the origin."""

    def __init__(self, context, origin: str):
        self.origin = origin
        self.urls: list[str] = []
        self.foreign: list[str] = []
        context.on("request", self._on_request)

    def _on_request(self, request) -> None:
        url = request.url
        self.urls.append(url)
        if not is_same_origin(url, self.origin):
            self.foreign.append(url)

    def assert_clean(self) -> None:
        assert not self.foreign, f"requests left the origin {self.origin}: {self.foreign[:10]}"


def is_same_origin(url: str, origin: str) -> bool:
    """True for a URL of ``origin`` or a scheme that stays on the device (data:, blob:)."""
    parts = urllib.parse.urlsplit(url)
    if parts.scheme in LOCAL_SCHEMES:
        return True
    return f"{parts.scheme}://{parts.netloc}" == origin


def run_axe(page, selector: str | None = None) -> dict:
    """Run axe-core (default rules) on the page; returns the results dict.

    axe is evaluated from the local npm file through the DevTools protocol, so
    the page's CSP (which forbids inline scripts) needs no relaxing and no
    network is used.
    """
    if not AXE_JS.is_file():
        raise RuntimeError("node_modules/axe-core/axe.min.js is missing: run `make setup` (npm ci)")
    if not page.evaluate("() => typeof window.axe === 'object'"):
        page.evaluate("(src) => { (0, eval)(src); }", AXE_JS.read_text(encoding="utf-8"))
    return page.evaluate("(sel) => axe.run(sel ? document.querySelector(sel) : document)", selector)


def axe_violations(results: dict) -> list[str]:
    """One line per violation: rule id, impact and the first offending nodes."""
    return [f"{v['id']} ({v.get('impact')}): {v['help']} -> {[n['target'] for n in v['nodes'][:3]]}"
            for v in results.get("violations", [])]


def wait_worker_ready(page, timeout_ms: int = BOOT_TIMEOUT_MS) -> dict:
    """Wait until the bridge reports ready (the self-test passed); returns that status."""
    page.wait_for_function("() => window.tamisTest && window.tamisTest.statuses.some(s => s.ready || s.error)",
                           timeout=timeout_ms)
    status = page.evaluate("() => window.tamisTest.statuses.find(s => s.ready || s.error)")
    assert status.get("ready"), f"the Python worker did not boot: {status}"
    return status


def wait_precached(page, timeout_ms: int = 120_000) -> dict:
    """Wait until offline.js reports the whole precache done (or an error); returns that state."""
    page.wait_for_function(
        "() => window.tamisTest && window.tamisTest.offlineStates.some(s => s.precached || s.error)",
        timeout=timeout_ms)
    state = page.evaluate("() => window.tamisTest.offlineStates.find(s => s.precached || s.error)")
    assert state.get("precached"), f"the precache did not complete: {state}"
    return state


def wait_controlled(page, timeout_ms: int = 120_000) -> None:
    """Wait until a service worker controls the page (after its whole precache, on a first visit)."""
    page.wait_for_function("() => navigator.serviceWorker.controller !== null", timeout=timeout_ms)


def cpython_handle(requests: list[str]) -> list[str]:
    """Answer request strings with CPython running the *built* wheel (the bytes the browser got)."""
    return build_webapp.cpython_answers(WEBAPP / read_manifest()["wheel"], requests)


def golden_cases() -> list[tuple[str, str, str]]:
    """(name, request text, response text) of every tests/golden pair, sorted by name."""
    golden = ROOT / "tests" / "golden"
    cases = []
    for req in sorted(golden.glob("*.request.json")):
        name = req.name[: -len(".request.json")]
        resp = golden / f"{name}.response.json"
        cases.append((name, req.read_text(encoding="utf-8"),
                      resp.read_text(encoding="utf-8") if resp.is_file() else None))
    return cases


#: Invented records (demo-style data, no real site): tests given as percent
#: passing, varied with their index so the core has real work for each; every fifth
#: has too many fines, every third no word on the fines' plasticity (reject, review, accept).
SEED_TEST_RECORDS = """async (n) => {
  const recs = [];
  const at = '2026-11-01T08:00:00Z';
  for (let i = 0; i < n; i += 1) {
    const f = (i % 97) / 97;
    const passing = [[9.5, 100], [4.75, 92 + 6 * f], [2.36, 70 + 10 * f], [1.18, 45 + 10 * f],
      [0.6, 25 + 8 * f], [0.3, 10 + 5 * f], [0.15, i % 5 ? 3 + 2 * f : 8 + 2 * f], [0.075, i % 5 ? 1 + f : 6 + f]]
      .map(([d, p]) => ({ opening_mm: d, passing_pct: Math.round(p * 100) / 100 }));
    const id = crypto.randomUUID();
    recs.push({ record_id: id, kind: 'test', rev: 1, updated_at: at, updated_by: 'seed', deleted: false,
      exported_at: null, band: null, test: i % 3 ? { passing, plasticity: { nonplastic: true } } : { passing },
      meta: { sample_id: `B-${String(i).padStart(5, '0')}`, project: `Project ${i % 7}`,
              material: i % 2 ? 'filter sand' : 'drain gravel', station: `${Math.floor(i / 10)}+${(i % 10) * 10}`,
              rules: { criteria: 'nrcs-1994' } },
      history: [{ rev: 1, at, by: 'seed', summary: 'created', changes: [] }] });
  }
  await (await import('/src/storage/records.js')).putRecords(recs);
  return recs.length;
}"""
