"""The snapshot boot (docs/webapp.md "Boot paths"): a first visit boots plainly, then a second worker makes a
Python memory snapshot and keeps it in Cache Storage; later boots restore it, run the same self-test and answer
byte for byte as the plain boot does. Every way the snapshot can be unusable (missing, stale, corrupted, not
stored for want of space) ends in a plain boot that works, with no error shown.

The ready status says which path ran: ``boot`` is "snapshot" or "plain", ``snapshot_fallback`` why a plain
boot ran ("missing", "stale", "refused", ...). The background work reports on the bridge's ``onSnapshot``
(recorded by the test page as ``window.tamisTest.snapshots``).
"""

from __future__ import annotations

import pytest

import helpers

pytestmark = pytest.mark.e2e

SNAPSHOT_CACHE = "tamis.snapshot"
ENTRY = "/__tamis_snapshot__/python.bin"

WAIT_SNAPSHOT = """(after) => window.tamisTest.snapshots.some(
    (s) => s.at_ms > after && (s.state === 'saved' || s.state === 'failed' || s.state === 'skipped'))"""
LAST_SNAPSHOT = """(after) => window.tamisTest.snapshots.filter(
    (s) => s.at_ms > after && (s.state === 'saved' || s.state === 'failed' || s.state === 'skipped')).pop()"""

# The stored entry, read and written back from the page (same origin: the worker's Cache Storage).
READ_ENTRY = """async () => {
  const hit = await (await caches.open('%s')).match('%s');
  if (!hit) return null;
  return { key: hit.headers.get('x-tamis-snapshot-key'), build_id: hit.headers.get('x-tamis-snapshot-build-id'),
           bytes: (await hit.arrayBuffer()).byteLength };
}""" % (SNAPSHOT_CACHE, ENTRY)

# Rewrites the stored entry: new header values and/or a range of its bytes filled with a value.
# ``replace``: every occurrence of one byte string by another of the same length; answers how many.
REWRITE_ENTRY = """async ({headers, fillFrom, fillTo, fillWith, replace}) => {
  const cache = await caches.open('%s');
  const hit = await cache.match('%s');
  const body = new Uint8Array(await hit.arrayBuffer());
  if (fillTo > fillFrom) body.fill(fillWith, fillFrom, fillTo);
  let replaced = 0;
  if (replace) {
    const [from, to] = replace.map((t) => new TextEncoder().encode(t));
    for (let i = 0; i + from.length <= body.length; i += 1) {
      let j = 0;
      while (j < from.length && body[i + j] === from[j]) j += 1;
      if (j === from.length) { body.set(to, i); replaced += 1; }
    }
  }
  const h = new Headers(hit.headers);
  for (const [k, v] of Object.entries(headers || {})) h.set(k, v);
  await cache.put('%s', new Response(body, { headers: h }));
  return replaced;
}""" % (SNAPSHOT_CACHE, ENTRY, ENTRY)


def _ready(page, after_ms: float = -1.0) -> dict:
    page.wait_for_function("(after) => window.tamisTest.statuses.some(s => s.at_ms > after && (s.ready || s.error))",
                           arg=after_ms, timeout=helpers.BOOT_TIMEOUT_MS)
    status = page.evaluate("(after) => window.tamisTest.statuses.find(s => s.at_ms > after && (s.ready || s.error))",
                           after_ms)
    assert status.get("ready"), f"the Python worker did not boot: {status}"
    assert not [s for s in page.evaluate("() => window.tamisTest.statuses") if s.get("error")]
    return status


def _snapshot_outcome(page, after_ms: float = -1.0) -> dict:
    page.wait_for_function(WAIT_SNAPSHOT, arg=after_ms, timeout=120_000)
    return page.evaluate(LAST_SNAPSHOT, after_ms)


def _reload(page) -> dict:
    page.reload()
    return _ready(page)


def _golden_answers(page) -> list[str]:
    cases = helpers.golden_cases()
    return page.evaluate("(reqs) => Promise.all(reqs.map((r) => window.tamisTest.bridge.callJSON(r)))",
                         [req for _, req, _ in cases])


def _assert_golden(page) -> list[str]:
    cases = helpers.golden_cases()
    assert len(cases) >= 20
    answers = _golden_answers(page)
    differing = [name for (name, _, want), got in zip(cases, answers) if got != want]
    assert not differing, differing
    return answers


def _first_visit(page, site) -> tuple[dict, dict]:
    page.goto(site.page_url())
    first = _ready(page)
    helpers.wait_precached(page)
    helpers.wait_controlled(page)
    return first, _snapshot_outcome(page)


def test_first_visit_is_plain_then_a_snapshot_is_kept_and_an_offline_reload_boots_from_it(page, site, context):
    first, made = _first_visit(page, site)
    assert first["boot"] == "plain" and first["snapshot_fallback"] == "missing", first
    assert made["state"] == "saved", made
    entry = page.evaluate(READ_ENTRY)
    manifest = site.manifest
    assert entry["key"] == f"1|{manifest['pyodide_build_id']}|{manifest['version']}"
    assert entry["build_id"] == manifest["pyodide_build_id"]
    # stored sparse: less than the 30 MiB heap, and what was reported
    assert entry["bytes"] == made["stored_bytes"] and entry["bytes"] < made["raw_bytes"]
    plain_answers = _assert_golden(page)
    # records kept in IndexedDB are untouched by the snapshot's making and use
    assert page.evaluate(helpers.SEED_TEST_RECORDS, 3) == 3

    context.set_offline(True)
    site.stop()
    response = page.reload()
    assert response.from_service_worker
    ready = _ready(page)
    assert ready["boot"] == "snapshot" and ready["snapshot_fallback"] is None, ready
    assert ready["install"] == "snapshot"
    assert "saved state" in ready["detail"] and "self-test" in ready["detail"]
    # every golden request, replayed through the bridge, gives the golden bytes, as the plain boot did
    assert _assert_golden(page) == plain_answers
    # the lazily imported ops and the package data (demo records) work after a restore
    assert page.evaluate("""async () => (await import('/src/storage/records.js')).listRecords()
                            .then((rs) => rs.length)""") == 3
    # a snapshot boot makes no new snapshot
    page.wait_for_timeout(2500)
    assert page.evaluate("() => window.tamisTest.snapshots") == []
    assert page.console_errors == []


@pytest.mark.parametrize("other", ["version", "build_id"])
def test_a_stale_snapshot_is_ignored_replaced_and_the_boot_is_plain(page, site, context, other):
    _, made = _first_visit(page, site)
    assert made["state"] == "saved"
    manifest = site.manifest
    if other == "version":
        key = f"1|{manifest['pyodide_build_id']}|0.0.0+000000000000"
        headers = {"x-tamis-snapshot-key": key}
    else:
        key = f"1|{'0' * 64}|{manifest['version']}"
        headers = {"x-tamis-snapshot-key": key, "x-tamis-snapshot-build-id": "0" * 64}
    page.evaluate(REWRITE_ENTRY, {"headers": headers, "fillFrom": 0, "fillTo": 0, "fillWith": 0})
    context.set_offline(True)
    ready = _reload(page)
    assert ready["boot"] == "plain" and ready["snapshot_fallback"] == "stale", ready
    _assert_golden(page)
    remade = _snapshot_outcome(page)
    assert remade["state"] == "saved", remade
    assert page.evaluate(READ_ENTRY)["key"] == f"1|{manifest['pyodide_build_id']}|{manifest['version']}"
    again = _reload(page)
    assert again["boot"] == "snapshot", again
    assert page.console_errors == []


@pytest.mark.parametrize("damage", ["heap", "header", "version"])
def test_a_corrupted_snapshot_falls_back_to_a_plain_boot_with_no_error_shown(page, site, context, damage):
    _, made = _first_visit(page, site)
    assert made["state"] == "saved"
    core = site.manifest["core_version"]
    change = {"fillFrom": 0, "fillTo": 0, "fillWith": 0, "replace": None}
    if damage == "heap":
        # a large part of the stored heap pages overwritten: the restore traps (seen: "table index is out of
        # bounds") or the self-test differs
        change.update(fillFrom=1_000_000, fillTo=9_000_000, fillWith=0x5A)
        why = ""
    elif damage == "header":
        # the stored pages' table and the first page (Pyodide's header with its magic and BUILD_ID) overwritten
        change.update(fillFrom=16, fillTo=60_000)
        why = "header"
    else:
        # the core's version string changed in the heap: the restore works, the version self-test differs
        change.update(replace=[core + "\0", core[:-1] + ("9" if core[-1] != "9" else "8") + "\0"])
        why = "self-test failed"
    replaced = page.evaluate(REWRITE_ENTRY, {"headers": {}, **change})
    assert damage != "version" or replaced >= 1
    context.set_offline(True)
    ready = _reload(page)
    assert ready["boot"] == "plain" and ready["snapshot_fallback"] == "refused", ready
    assert why in ready["snapshot_fallback_detail"], ready
    assert page.locator("#py-status").text_content().startswith("ready:")
    _assert_golden(page)
    # the refused snapshot was deleted, a new one is made, and the next boot uses it
    remade = _snapshot_outcome(page)
    assert remade["state"] == "saved", remade
    again = _reload(page)
    assert again["boot"] == "snapshot", again
    _assert_golden(page)
    assert page.console_errors == []


def test_storage_refusing_the_snapshot_leaves_a_working_app(page, site, context):
    # The origin's quota is set (DevTools protocol) to room for the precache but not for the snapshot.
    cdp = context.new_cdp_session(page)
    quota = site.manifest["total_bytes"] + 4_000_000
    cdp.send("Storage.overrideQuotaForOrigin", {"origin": site.origin, "quotaSize": quota})
    first, made = _first_visit(page, site)
    assert first["boot"] == "plain"
    assert made["state"] == "failed" and made["reason"] == "quota", made
    assert page.evaluate(READ_ENTRY) is None
    assert page.evaluate("() => window.tamisTest.offlineStates.some(s => s.precached)")
    context.set_offline(True)
    ready = _reload(page)
    assert ready["boot"] == "plain" and ready["snapshot_fallback"] == "missing", ready
    _assert_golden(page)
    assert page.console_errors == []


def test_a_restore_that_does_not_finish_in_time_is_replaced_by_a_plain_boot(page, site, context):
    # A damaged snapshot could loop instead of failing: the bridge replaces a worker whose restore has not
    # reached ready within its limit by one that refuses the snapshot. The limit (15 s) is set to 1 ms here,
    # so the worker is stopped in the middle of a good restore, as a hung one would be.
    _, made = _first_visit(page, site)
    assert made["state"] == "saved"
    context.set_offline(True)
    page.goto(site.page_url(query="snapshot_restore_limit_ms=1"))
    ready = _ready(page)
    assert ready["boot"] == "plain" and ready["snapshot_fallback"] == "refused", ready
    assert "in time" in ready["snapshot_fallback_detail"]
    statuses = page.evaluate("() => window.tamisTest.statuses")
    stages = [s["stage"] for s in statuses]
    restoring = next(i for i, s in enumerate(statuses) if s.get("restoring"))
    assert "starting" in stages[restoring:], stages   # the first worker began its restore, then a new one started
    _assert_golden(page)
    remade = _snapshot_outcome(page)
    assert remade["state"] == "saved", remade
    assert page.console_errors == []
