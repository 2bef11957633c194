"""The web platform in Debian's chromium: server headers, the Python worker and
its bridge, the golden files replayed in the worker, offline reload through the
service worker, the update notice, and no request leaving the origin.

These tests drive the e2e test page ``e2e/pages/platform.html`` (served at
``/__e2e__/`` by the fixtures, precached like the app's own files), which only
wires ``webapp/src/bridge.js`` and ``webapp/src/offline.js`` to
``window.tamisTest``. The app's own screens are tested by the UI suite.
"""

from __future__ import annotations

import json
import urllib.error
import urllib.request

import pytest

import helpers

pytestmark = pytest.mark.e2e

STAGES = ["starting", "runtime", "stdlib", "core", "selftest", "ready"]


def _get(url: str, method: str = "GET"):
    req = urllib.request.Request(url, method=method)
    try:
        with urllib.request.urlopen(req, timeout=10) as resp:
            return resp.status, resp.headers, resp.read()
    except urllib.error.HTTPError as err:
        return err.code, err.headers, b""


def _small_gradation_request(req_id: str) -> str:
    # Invented masses (a clean sand), only to exercise the seam; the numbers are
    # checked against CPython running the same wheel, not against a source.
    test = {"sieves": [{"opening_mm": 4.75, "retained_g": 8.0}, {"opening_mm": 2.36, "retained_g": 61.5},
                       {"opening_mm": 1.18, "retained_g": 102.0}, {"opening_mm": 0.6, "retained_g": 121.4},
                       {"opening_mm": 0.3, "retained_g": 98.2}, {"opening_mm": 0.15, "retained_g": 70.3},
                       {"opening_mm": 0.075, "retained_g": 22.6}],
            "pan_g": 2.0, "dry_mass_g": 500.0, "washed_dry_mass_g": 486.9}
    return json.dumps({"schema": 1, "op": "gradation", "id": req_id, "test": test})


# --- the static server -------------------------------------------------------------------------------


def test_server_headers_mime_csp_and_root(site):
    status, headers, _ = _get(site.url + "vendor/pyodide/pyodide.asm.wasm", "HEAD")
    assert status == 200 and headers["Content-Type"] == "application/wasm"
    for path in ("vendor/pyodide/pyodide.mjs", "src/bridge.js", "src/worker/worker.js", "sw.js"):
        status, headers, _ = _get(site.url + path, "HEAD")
        assert status == 200 and headers["Content-Type"] == "text/javascript", path
    _, headers, _ = _get(site.url + "manifest.webmanifest", "HEAD")
    assert headers["Content-Type"] == "application/manifest+json"
    _, headers, _ = _get(site.url + "sw.js", "HEAD")
    assert headers.get("Cache-Control") == "no-cache"
    csp = headers["Content-Security-Policy"]
    directives = dict(d.strip().split(" ", 1) for d in csp.split(";"))
    assert directives["default-src"] == "'self'"
    assert directives["script-src"] == "'self' 'wasm-unsafe-eval'"
    assert directives["connect-src"] == "'self'"
    assert "unsafe-inline" not in csp and "'unsafe-eval'" not in csp and "http" not in csp
    # Only webapp/ is served: nothing outside it, even through encoded dot segments.
    for path in ("../scripts/serve.py", "%2e%2e/pyproject.toml", "__e2e__/../../pyproject.toml"):
        status, _, body = _get(site.url + path)
        assert status == 404 or b"[project]" not in body, path


# --- the Python worker through the bridge -----------------------------------------------------------


def test_worker_boots_in_stages_and_answers(page, site):
    page.goto(site.page_url())
    ready = helpers.wait_worker_ready(page)
    assert ready["build_version"] == site.base_manifest["version"]
    assert ready["core_version"] == site.base_manifest["core_version"]
    statuses = page.evaluate("() => window.tamisTest.statuses")
    stages = []
    for s in statuses:
        if not stages or stages[-1] != s["stage"]:
            stages.append(s["stage"])
    assert stages == STAGES, stages
    progress = [s["progress"] for s in statuses]
    assert progress == sorted(progress) and progress[-1] == 1
    assert sum(1 for s in statuses if s["ready"]) == 1

    answer = page.evaluate("() => window.tamisTest.bridge.call('version')")
    assert answer["ok"] is True and answer["result"]["core_version"] == ready["core_version"]
    assert isinstance(answer["id"], int)
    # Bad input is a normal error response on the normal channel, not a failure of the worker.
    bad = page.evaluate("() => window.tamisTest.bridge.callJSON('{\"schema\": 1, \"op\": ')")
    assert json.loads(bad)["ok"] is False and json.loads(bad)["error"]["code"] == "bad_json"
    unknown = page.evaluate("() => window.tamisTest.bridge.call('no_such_op')")
    assert unknown["ok"] is False and unknown["error"]["field"] == "op"
    # The same request string gives the same bytes as CPython running the same wheel.
    request = _small_gradation_request("seam-1")
    got = page.evaluate("(r) => window.tamisTest.bridge.callJSON(r)", request)
    assert got == helpers.cpython_handle([request])[0]
    assert page.evaluate("() => window.tamisTest.bridge.currentStatus().ready") is True
    assert page.evaluate("() => window.tamisTest.violations") == []
    assert page.console_errors == []


def test_newer_call_with_same_key_supersedes_older(page, site):
    page.goto(site.page_url())
    helpers.wait_worker_ready(page)
    results = page.evaluate("""async () => {
        const b = window.tamisTest.bridge;
        const calls = [1, 2, 3, 4].map((i) => b.call('version', {id: 'edit-' + i}, {key: 'verdict'}));
        const other = b.call('version', {id: 'other'}, {key: 'chart'});
        return Promise.all([...calls, other]);
    }""")
    assert [r.get("superseded") for r in results[:3]] == [True, True, True]
    assert results[3]["ok"] is True and results[3]["id"] == "edit-4"
    assert results[4]["ok"] is True and results[4]["id"] == "other"  # another key is not affected
    # The worker was not terminated: it still answers, and it booted once.
    again = page.evaluate("() => window.tamisTest.bridge.call('version', {id: 'after'})")
    assert again["id"] == "after"
    assert page.evaluate("() => window.tamisTest.statuses.filter(s => s.stage === 'runtime').length") >= 1
    assert page.evaluate("() => window.tamisTest.statuses.filter(s => s.ready).length") == 1


def test_golden_files_replayed_in_the_worker_are_byte_identical(page, site):
    cases = helpers.golden_cases()
    assert cases, "tests/golden/ holds no request/response pairs"
    missing = [name for name, _, resp in cases if resp is None]
    assert not missing, f"golden requests without a response file: {missing}"
    page.goto(site.page_url())
    helpers.wait_worker_ready(page)
    answers = page.evaluate(
        "(reqs) => Promise.all(reqs.map((r) => window.tamisTest.bridge.callJSON(r)))",
        [req for _, req, _ in cases])
    differing = [i for i, ((_, _, want), got) in enumerate(zip(cases, answers)) if got != want]
    if differing:
        # Say which side moved: Pyodide against CPython (same wheel), or the golden file against the sources.
        cpython = helpers.cpython_handle([cases[i][1] for i in differing])
        engine = [cases[i][0] for i, cp in zip(differing, cpython) if answers[i] != cp]
        stale = [cases[i][0] for i, cp in zip(differing, cpython) if answers[i] == cp]
        pytest.fail(f"{len(differing)} of {len(cases)} golden cases differ in the worker; "
                    f"Pyodide differs from CPython on the same wheel: {engine}; "
                    f"golden file differs from CPython too (regenerate tests/golden): {stale}")


# --- offline ----------------------------------------------------------------------------------------


def test_offline_reload_after_full_precache(page, site, context):
    page.goto(site.page_url())
    helpers.wait_worker_ready(page)
    state = helpers.wait_precached(page)
    total = len(site.manifest["files"])
    assert state["total"] == total and state["done"] == total and state["version"] == site.version
    states = page.evaluate("() => window.tamisTest.offlineStates")
    first_ready = next(i for i, s in enumerate(states) if s["precached"])
    assert all(not s["precached"] for s in states[:first_ready])
    assert any(s["done"] < s["total"] for s in states[:first_ready]), "no progress was reported before ready"
    helpers.wait_controlled(page)
    cached = page.evaluate("""async (version) => {
        const cache = await caches.open('tamis-' + version);
        const files = (await (await fetch('/vendor/manifest.json')).json()).files;
        const missing = [];
        for (const f of files) if (!(await cache.match(new URL(f.path, location.origin + '/')))) missing.push(f.path);
        return {missing, names: await caches.keys(), count: files.length};
    }""", site.version)
    assert cached["missing"] == [] and cached["count"] == total
    # the build caches: only this one (the Python snapshot has a cache of its own, "tamis.snapshot")
    assert [n for n in cached["names"] if n.startswith("tamis-")] == [f"tamis-{site.version}"]

    context.set_offline(True)
    site.stop()  # nothing can answer now: only the service worker's cache
    response = page.reload()
    assert response.from_service_worker
    assert response.headers.get("content-security-policy") == helpers.serve.CSP  # the policy holds offline too
    assert page.evaluate("() => navigator.onLine") is False
    helpers.wait_worker_ready(page)
    request = _small_gradation_request("offline-1")
    got = page.evaluate("(r) => window.tamisTest.bridge.callJSON(r)", request)
    assert json.loads(got)["ok"] is True
    assert got == helpers.cpython_handle([request])[0]
    again = helpers.wait_precached(page)
    assert again["version"] == site.version


def test_update_waits_for_the_user_then_switches(page, site):
    page.goto(site.page_url())
    helpers.wait_precached(page)
    helpers.wait_controlled(page)
    old = site.version
    page.fill("#typed", "12.6 g on the 2.36 mm sieve")
    new = site.bump_version("update-test")
    assert page.evaluate("() => window.tamisTest.offline.checkForUpdate()") is True
    page.wait_for_function("() => window.tamisTest.updateOffered", timeout=120_000)
    assert page.is_visible("#update-notice")
    # Nothing switched behind the user's back: same page, same controller, text kept.
    assert page.input_value("#typed") == "12.6 g on the 2.36 mm sieve"
    assert page.evaluate("() => window.tamisTest.offline.state().version") == old
    assert page.evaluate("() => window.tamisTest.offline.state().precached") is True
    with page.expect_navigation():
        page.click("#apply-update")
    state = helpers.wait_precached(page)
    assert state["version"] == new
    assert [n for n in page.evaluate("() => caches.keys()") if n.startswith("tamis-")] == [f"tamis-{new}"]
    helpers.wait_worker_ready(page)


def test_missing_runtime_file_fails_loudly(page, site):
    site.make_missing("/vendor/pyodide/pyodide.asm.wasm")
    page.goto(site.page_url())
    page.wait_for_function("() => window.tamisTest.statuses.some(s => s.error)", timeout=60_000)
    status = page.evaluate("() => window.tamisTest.statuses.find(s => s.error)")
    assert status["ready"] is False and status["stage"] == "failed"
    assert "pyodide.asm.wasm" in status["error"] or "runtime" in status["error"]
    assert page.text_content("#py-status").startswith("failed:")
    rejected = page.evaluate("() => window.tamisTest.bridge.call('version').then(() => 'resolved', e => e.message)")
    assert rejected == status["error"]
    # The precache cannot succeed either, so "ready offline" is never shown.
    page.wait_for_function("() => window.tamisTest.offlineStates.some(s => s.error)", timeout=60_000)
    assert not page.evaluate("() => window.tamisTest.offlineStates.some(s => s.precached)")


# --- nothing leaves the origin ----------------------------------------------------------------------


def test_csp_blocks_a_foreign_request(page, site, guard):
    page.goto(site.page_url())
    outcome = page.evaluate("""() => fetch('http://192.0.2.10/probe.json').then(() => 'fetched', (e) => 'blocked')""")
    assert outcome == "blocked"
    page.wait_for_function("() => window.tamisTest.violations.length > 0")
    violation = page.evaluate("() => window.tamisTest.violations[0]")
    assert violation["directive"] == "connect-src" and "192.0.2.10" in violation["blocked"]
    assert not [u for u in guard.foreign if "192.0.2.10" in u]  # blocked before any request left


def test_guard_recognises_foreign_urls():
    origin = "http://127.0.0.1:8765"
    assert helpers.is_same_origin("http://127.0.0.1:8765/vendor/x.whl", origin)
    assert helpers.is_same_origin("blob:http://127.0.0.1:8765/1f2e", origin)
    assert helpers.is_same_origin("data:image/png;base64,AAAA", origin)
    assert not helpers.is_same_origin("http://127.0.0.1:8766/x", origin)
    assert not helpers.is_same_origin("https://cdn.jsdelivr.net/pyodide/v314.0.8/full/numpy.whl", origin)
    assert not helpers.is_same_origin("http://localhost:8765/", origin)


def test_whole_boot_requests_only_the_origin(page, site, guard):
    page.goto(site.page_url())
    helpers.wait_worker_ready(page)
    helpers.wait_precached(page)
    assert guard.urls, "the guard saw no request at all"
    assert any(u.endswith("/vendor/pyodide/pyodide.asm.wasm") for u in guard.urls)  # the Python worker's
    assert any(u.endswith("/vendor/idb/umd.js") for u in guard.urls)  # only the service worker fetches this one
    guard.assert_clean()
    served = {path.split("?")[0] for _, path in site.requests}
    assert "/vendor/pyodide/python_stdlib.zip" in served and "/sw.js" in served


def test_axe_helper_runs_under_the_csp(page, site):
    page.goto(site.page_url())
    helpers.wait_worker_ready(page)
    results = helpers.run_axe(page)
    assert results["testEngine"]["name"] == "axe-core" and results["passes"], "axe did not run"
    assert helpers.axe_violations(results) == []
    assert page.evaluate("() => window.tamisTest.violations") == []  # injecting axe broke no CSP rule


def test_self_test_mismatch_blocks_ready(page, site):
    selftest = json.loads((helpers.VENDOR / "selftest.json").read_text(encoding="utf-8"))
    assert selftest["request"] and selftest["response"].startswith('{"schema":1')
    # One character added to the expected answer: the worker must refuse to report ready.
    tampered = dict(selftest, response=selftest["response"].replace('"ok":true', '"ok":true ', 1))
    site.server.overrides["/vendor/selftest.json"] = (json.dumps(tampered).encode(), "application/json")
    page.goto(site.page_url())
    page.wait_for_function("() => window.tamisTest.statuses.some(s => s.error)", timeout=60_000)
    status = page.evaluate("() => window.tamisTest.statuses.find(s => s.error)")
    assert status["error"].startswith(f"self-test {selftest['name']} differs from its golden response")
    assert not page.evaluate("() => window.tamisTest.statuses.some(s => s.ready)")


def test_superseded_request_is_never_sent_to_the_worker(page, site):
    # A scripted stand-in for the worker shows what reaches it: nothing before
    # ready, one request in flight at a time, and a request superseded while
    # waiting is never posted.
    page.goto(site.page_url("bridge_fake.html"))
    page.wait_for_function("() => window.bridgeTest")
    seen = page.evaluate("""async () => {
        const { bridge, worker } = window.bridgeTest;
        const tick = () => new Promise((r) => setTimeout(r, 0));
        const ids = () => worker().received.map((m) => JSON.parse(m.json).id);
        const results = {};
        const ask = (id, key) => bridge.call('version', { id }, { key }).then((r) => { results[id] = r; });
        const early = ask('early', 'other');
        await tick();
        const beforeReady = ids();
        if (worker().options.type !== 'module') throw new Error('the worker is not a module worker');
        worker().ready();
        await tick();
        const afterReady = ids();
        worker().answerNext();               // 'early'
        await early;
        const a = ask('a', 'verdict');       // sent at once: the worker is idle
        await tick();
        const rest = ['b', 'c', 'd'].map((id) => ask(id, 'verdict'));
        await tick();
        const whileBusy = ids();
        worker().answerNext();               // 'a' finishes; its answer is dropped, 'd' goes out
        await tick();
        const afterA = ids();
        worker().answerNext();               // 'd'
        await Promise.all([a, ...rest]);
        return { beforeReady, afterReady, whileBusy, afterA, results };
    }""")
    assert seen["beforeReady"] == []                     # nothing is sent before the self-test passed
    assert seen["afterReady"] == ["early"]
    assert seen["whileBusy"] == ["early", "a"]           # one request in flight at a time
    assert seen["afterA"] == ["early", "a", "d"]         # b and c were superseded while waiting: never sent
    results = seen["results"]
    assert results["a"] == results["b"] == results["c"] == {"superseded": True}
    assert results["d"]["id"] == "d" and results["d"]["ok"] is True
    assert results["early"]["id"] == "early"
