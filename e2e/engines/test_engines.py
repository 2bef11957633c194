"""The app in every engine a phone may carry: Chromium, Firefox, WebKit.

Each test runs once per engine (``engine`` fixture, see ``engines.py``) on the
built app with the e2e error collector (``conftest.InstrumentedSite``):

- first visit to "Ready offline", every file of the build in the cache;
- a sieve test typed from masses to its verdict, the verdict and every check
  compared with CPython's answer to the same request (``tamis.api.handle``);
- saved, then offline (the engine's offline switch where its driver has one,
  and the server stopped, so only the service worker can answer), reloaded: the
  page is controlled by the service worker, the calculator boots, "Ready
  offline" shows again, the record and its verdict are intact;
- a new build waiting: offered, nothing switched before the user asks, then
  switched, the new build's cache alone, what was typed still there;
- the storage-persistence message each engine should give (docs/decisions.md).

No page, worker or service-worker error may be reported in any of them.
Hooks: ids, ``data-`` attributes (``data-field`` carries the core's field
paths), the verdict words; the only button texts used are "Use this stack",
"Save test", "Save with this name" and "Switch to the new version".
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import pytest

from tamis.api import handle

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
from test_ui_common import DRY_G, PAN_G, SAMPLE_TYPED, WASHED_G, sample_test  # noqa: E402

from engines import BOOT  # noqa: E402

pytestmark = pytest.mark.e2e

RULES = {"criteria": "nrcs-1994"}
STACK = "fine_aggregate"  # the core's sieve preset id (sieve_presets)
#: The words the app shows for each verdict (webapp/src/ui/verdict.js).
VERDICT_WORDS = {"accept": "Meets the checks", "reject": "Fails a check", "review": "Needs review"}
#: What each engine is told about keeping the records (docs/decisions.md): Chromium answers
#: persist() at once (no prompt; false for a site with no engagement), Firefox asks the user and
#: its promise stays pending while nobody answers, WebKitGTK has no navigator.storage.
PERSISTENCE = {"chromium": "refused", "firefox": "pending", "webkit": "unsupported"}
STORAGE_WORDS = {
    "refused": "This browser may clear the app's records when space runs low",
    "pending": "The browser is asking whether this app may keep its records",
    "unsupported": "This browser cannot be asked to keep the app's records",
}


def cpython_evaluate(sample: dict) -> dict:
    resp = json.loads(handle(json.dumps({"schema": 1, "op": "evaluate", "id": 1, "sample": sample, "rules": RULES})))
    assert resp["ok"], resp
    return resp["result"]


# ---- steps ------------------------------------------------------------------------------------


def open_app(engine, site, route: str = "#/entry") -> None:
    engine.open(site.url + "index.html" + route)
    wait_app(engine)


def wait_app(engine) -> None:
    engine.wait_for("body[data-core-ready]")
    engine.wait_for("#view[data-rendered]:not([data-busy])")


def wait_ready_offline(engine, timeout: float = 60) -> None:
    try:
        engine.wait("""const s = document.getElementById('offline-status');
                       if (s.dataset.state === 'error') throw new Error(s.textContent);
                       return s.dataset.state === 'ready' && navigator.serviceWorker.controller !== null;""",
                    timeout=timeout, what="'Ready offline' with a controlling service worker")
    except TimeoutError as err:
        raise AssertionError(f"{err}; the header says {engine.text('#offline-status')!r}") from None
    assert engine.text("#offline-status") == "Ready offline"


def boot_marks(engine) -> dict:
    return engine.wait("const m = window.tamisE2E.marks; return m.core_ready_ms && m.offline_ready_ms ? m : null;",
                       what="both ready marks")


def cache_report(engine, version: str) -> dict:
    return engine.run("""
        const cache = await caches.open('tamis-' + arguments[0]);
        const files = (await (await fetch('vendor/manifest.json')).json()).files;
        const missing = [];
        for (const f of files) if (!(await cache.match(new URL(f.path, location.origin + '/')))) missing.push(f.path);
        return {missing, count: files.length, names: await caches.keys()};""", version)


def settle(engine) -> None:
    engine.run("await new Promise((r) => setTimeout(r, 200)); return true;")
    engine.wait_for("#view:not([data-busy])")


def type_sample(engine) -> None:
    """Choose the rule set and the sieve stack, then type every mass (the 4.75 mm one with a decimal comma)."""
    engine.select("#view select:has(option[value='terzaghi'])", RULES["criteria"])
    engine.select(f"#view select:has(option[value='{STACK}'])", STACK)
    engine.click_text("Use this stack")
    engine.wait_for(f"input[data-field='sample.sieves[{len(SAMPLE_TYPED) - 1}].retained_g']")
    for i, (_, mass) in enumerate(SAMPLE_TYPED):
        engine.type(f"input[data-field='sample.sieves[{i}].retained_g']", mass)
    engine.type("input[data-field='sample.pan_g']", PAN_G)
    engine.type("input[data-field='sample.dry_mass_g']", DRY_G)
    engine.type("input[data-field='sample.washed_dry_mass_g']", WASHED_G)
    settle(engine)


def shown_verdict(engine) -> dict:
    """Every verdict the screen carries, the checks listed with their status, and the screen's text."""
    return engine.run("""
        const view = document.getElementById('view');
        return {
          verdicts: [...new Set([...document.querySelectorAll('[data-verdict]')].map((e) => e.dataset.verdict))],
          checks: [...view.querySelectorAll('[data-check][data-status]')].map((e) => [e.dataset.check, e.dataset.status]),
          text: view.textContent,
        };""")


def assert_verdict(engine, expected: dict) -> None:
    shown = shown_verdict(engine)
    assert shown["verdicts"] == [expected["verdict"]], shown["verdicts"]
    assert VERDICT_WORDS[expected["verdict"]] in shown["text"]
    assert sorted(shown["checks"]) == sorted([c["id"], c["status"]] for c in expected["checks"])
    assert expected["notice"] in shown["text"]


def typed_masses(engine) -> list[str]:
    return [engine.value(f"input[data-field='sample.sieves[{i}].retained_g']") for i in range(len(SAMPLE_TYPED))]


def no_errors(engine) -> None:
    assert engine.console_errors() == []


# ---- scenarios --------------------------------------------------------------------------------


def test_first_visit_typed_test_saved_and_offline_reload(engine, site):
    # First visit: the calculator boots and the whole build is saved on the device.
    open_app(engine, site)
    wait_ready_offline(engine)
    BOOT[(engine.name, "first visit")] = boot_marks(engine)
    cached = cache_report(engine, site.version)
    assert cached["missing"] == [] and cached["count"] == len(site.manifest["files"])
    # the build caches: only this one (the Python snapshot has a cache of its own, "tamis.snapshot")
    assert [n for n in cached["names"] if n.startswith("tamis-")] == [f"tamis-{site.version}"]

    # A test typed from its masses: the verdict and every check are CPython's.
    expected = cpython_evaluate(sample_test())
    type_sample(engine)
    assert_verdict(engine, expected)

    # Saved: the record screen shows the same verdict.
    # The first save on a device asks the tester's name once (kept in Settings).
    engine.click_text("Save test")
    engine.wait_for(".tester-ask input")
    engine.type(".tester-ask input", "E2E")
    engine.click_text("Save with this name")
    engine.wait_for("#view[data-screen='record'] [data-id]")
    wait_app(engine)
    record_id = engine.attr("#view [data-id]", "data-id")
    engine.wait_for("#view [data-check]")
    assert_verdict(engine, expected)

    # The Python memory snapshot (docs/webapp.md "Boot paths") is made in the background after the plain boot
    # of the first visit; where the engine cannot make or keep one, the reload below boots plainly.
    made = engine.wait("""const b = await import('/src/bridge.js'); let s = null; b.onSnapshot((x) => { s = x; });
        return s && ['saved', 'failed', 'skipped'].includes(s.state) ? s : null;""", timeout=120,
                       what="the snapshot saved or given up")

    # Offline, nothing answers but the service worker: reload.
    offline_switch = engine.go_offline()
    site.stop()
    engine.reload()
    wait_app(engine)
    assert engine.run("return navigator.serviceWorker.controller !== null;") is True
    assert engine.run("return location.hash;") == f"#/record/{record_id}"
    if offline_switch:
        assert engine.run("return navigator.onLine;") is False
    wait_ready_offline(engine)
    BOOT[(engine.name, "offline reload")] = boot_marks(engine)
    ready = engine.run("return (await import('/src/bridge.js')).currentStatus();")
    assert ready["ready"] and ready["boot"] in ("snapshot", "plain"), ready
    # only a saved snapshot is used; one this engine cannot restore ends in a plain boot (e2e/test_boot_snapshot.py
    # checks in chromium that a saved one is used)
    if ready["boot"] == "snapshot":
        assert made["state"] == "saved", (made, ready)
    else:
        assert ready["snapshot_fallback"] == ("refused" if made["state"] == "saved" else "missing"), (made, ready)
    BOOT[(engine.name, "offline reload")].update(boot=ready["boot"], snapshot=made.get("state"),
                                                  snapshot_reason=made.get("reason"),
                                                  snapshot_fallback=ready.get("snapshot_fallback"))
    engine.wait_for("#view [data-check]")
    assert_verdict(engine, expected)
    stored = engine.run("return (await import('/src/storage/records.js')).getRecord(arguments[0]);", record_id)
    assert stored["test"] == sample_test()
    assert stored["kind"] == "test" and stored["rev"] == 1
    no_errors(engine)


def test_update_waits_for_the_user_and_keeps_what_was_typed(engine, site):
    open_app(engine, site)
    wait_ready_offline(engine)
    old = site.version
    type_sample(engine)
    typed = typed_masses(engine)
    assert typed == [m for _, m in SAMPLE_TYPED]

    # A new build on the server; the browser's update check finds it.
    new = site.bump_version("engines")
    engine.run("await (await navigator.serviceWorker.getRegistration()).update(); return true;")
    engine.wait("""const b = document.getElementById('banner');
                   return !b.hidden && [...b.querySelectorAll('button')].some(
                       (x) => x.textContent.trim() === 'Switch to the new version');""",
                what="the update offer")
    # Nothing switched behind the user's back.
    assert engine.run("return (await navigator.serviceWorker.getRegistration()).waiting !== null;") is True
    assert engine.attr("#offline-status", "data-state") == "ready"
    assert typed_masses(engine) == typed
    assert engine.run("return (await (await fetch('vendor/manifest.json')).json()).version;") == old

    engine.run("window.tamisE2EBeforeSwitch = true; return true;")
    engine.click_text("Switch to the new version")
    engine.wait("return !window.tamisE2EBeforeSwitch && document.body.dataset.coreReady === '1';",
                what="the page reloaded on the new version")
    wait_app(engine)
    wait_ready_offline(engine)
    assert engine.run("return (await (await fetch('vendor/manifest.json')).json()).version;") == new
    assert [n for n in engine.run("return caches.keys();") if n.startswith("tamis-")] == [f"tamis-{new}"]
    # What was typed is still there (kept as a draft, shown with a point as decimal mark).
    assert typed_masses(engine) == [m.replace(",", ".") for _, m in SAMPLE_TYPED]
    assert_verdict(engine, cpython_evaluate(sample_test()))
    no_errors(engine)


def test_storage_persistence_message_fits_the_engine(engine, site):
    open_app(engine, site)
    engine.wait_for("#storage-warning[data-persistence]", timeout=30)
    state = engine.attr("#storage-warning", "data-persistence")
    probe = engine.run("""
        if (!navigator.storage || !navigator.storage.persist) return 'no navigator.storage.persist';
        return navigator.storage.persisted().then((p) => 'persisted() ' + p);""")
    assert state == PERSISTENCE[engine.name], (state, probe)
    assert engine.run("return !document.getElementById('storage-warning').hidden;") is True
    assert engine.text("#storage-warning").startswith(STORAGE_WORDS[state])
    no_errors(engine)
