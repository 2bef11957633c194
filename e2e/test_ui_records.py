"""Records on the device: saved tests survive reloads (online and offline),
edits keep their history, deleting is soft until exported.

Invented data (see ``test_ui_common``).
"""

from __future__ import annotations

import helpers
from test_ui_common import enter_sample, go, open_app, open_filters, save_test, settle, wait_screen


def save_current_test(page) -> str:
    save_test(page)
    page.wait_for_selector("#view[data-screen='record']")
    wait_screen(page)
    return page.get_attribute(".detail", "data-id")


def stored(page, record_id: str) -> dict:
    return page.evaluate("async (id) => (await import('/src/storage/records.js')).getRecord(id)", record_id)


def test_saved_test_is_there_after_reload_and_edit_keeps_history(page, site):
    open_app(page, site)
    page.get_by_role("link", name="Settings").click()
    wait_screen(page)
    page.get_by_label("Your name or initials").fill("JQ")
    page.get_by_label("Your name or initials").press("Tab")
    enter_sample(page)
    rid = save_current_test(page)
    rec = stored(page, rid)
    assert rec["rev"] == 1 and rec["updated_by"] == "JQ" and rec["kind"] == "test"
    assert rec["test"]["sieves"][1] == {"opening_mm": 4.75, "retained_g": 12.4}  # typed as "12,4"
    assert rec["history"] == [{"rev": 1, "at": rec["updated_at"], "by": "JQ", "summary": "created", "changes": []}]

    page.reload()
    page.wait_for_selector("body[data-core-ready]")
    go(page, "#/records")
    assert page.locator(f"li.record-item[data-id='{rid}']").count() == 1
    # The verdict in the list comes from the core (cached per core version and revision).
    page.wait_for_selector(f"li.record-item[data-id='{rid}'] .record-verdict[data-verdict='review'], "
                           f"li.record-item[data-id='{rid}'] .record-verdict[data-verdict='accept'], "
                           f"li.record-item[data-id='{rid}'] .record-verdict[data-verdict='reject']")

    # Edit one mass: revision 2, the old value kept in the history.
    go(page, f"#/entry/{rid}")
    page.fill("input[data-field='sample.sieves[1].retained_g']", "12,6")
    settle(page)
    save_test(page, "Save changes")
    page.wait_for_function("(id) => import('/src/storage/records.js').then(m => m.getRecord(id)).then(r => r.rev === 2)", arg=rid)
    rec = stored(page, rid)
    assert rec["history"][-1]["changes"] == [{"field": "test.sieves[1].retained_g", "old": 12.4, "new": 12.6}]
    assert rec["history"][-1]["by"] == "JQ" and rec["history"][-1]["summary"] == "edited"
    assert rec["history"][0]["summary"] == "created"
    go(page, f"#/record/{rid}")
    # In words, with the stored path beside them.
    assert "mass on 4.75 mm (g): 12.4 → 12.6 (test.sieves[1].retained_g)" in page.text_content(".history")

    # Saving again with nothing changed writes no empty revision.
    go(page, f"#/entry/{rid}")
    save_test(page, "Save changes")
    page.wait_for_selector("text=Nothing changed since the last save.")
    assert stored(page, rid)["rev"] == 2

    # Delete is soft: flagged, kept, restorable, listed under "deleted, not yet exported".
    go(page, f"#/record/{rid}")
    page.once("dialog", lambda d: d.accept())
    page.get_by_role("button", name="Delete").click()
    page.wait_for_function("(id) => import('/src/storage/records.js').then(m => m.getRecord(id)).then(r => r.deleted)", arg=rid)
    rec = stored(page, rid)
    assert rec["deleted"] is True and rec["rev"] == 3
    go(page, "#/records")
    assert page.locator(f"li.record-item[data-id='{rid}']").count() == 0
    open_filters(page)
    page.get_by_label("Kind").select_option("deleted")
    assert page.locator(f"li.record-item[data-id='{rid}']").count() == 1


def test_a_test_saved_offline_survives_reloads(page, site, context):
    open_app(page, site)
    helpers.wait_controlled(page)
    page.wait_for_selector("#offline-status[data-state='ready']", timeout=120_000)
    context.set_offline(True)
    site.stop()
    response = page.reload()
    assert response.from_service_worker
    page.wait_for_selector("body[data-core-ready]")
    enter_sample(page)
    verdict = page.get_attribute(".verdict-bar", "data-verdict")
    assert verdict in ("accept", "reject", "review")
    rid = save_current_test(page)
    page.reload()
    page.wait_for_selector("body[data-core-ready]")
    go(page, f"#/record/{rid}")
    page.wait_for_selector(".verdict-card .verdict")
    assert page.get_attribute(".verdict-card .verdict", "data-verdict") == verdict
    assert stored(page, rid)["test"]["sieves"][1]["retained_g"] == 12.4


V1_SETUP = """async (rec) => {
  await new Promise((resolve, reject) => {
    const req = indexedDB.open('tamis', 1);
    req.onupgradeneeded = () => {
      const db = req.result;
      const s = db.createObjectStore('records', {keyPath: 'record_id'});
      s.createIndex('kind', 'kind');
      s.createIndex('updated_at', 'updated_at');
      db.createObjectStore('settings');
    };
    req.onsuccess = () => {
      const tx = req.result.transaction('records', 'readwrite');
      tx.objectStore('records').put(rec);
      tx.oncomplete = () => { req.result.close(); resolve(); };
      tx.onerror = () => reject(tx.error);
    };
    req.onerror = () => reject(req.error);
  });
}"""


def test_a_version_1_database_is_migrated_and_keeps_its_records(page, site):
    """A device still holding schema 1 (no results cache) opens with its records intact."""
    rec = {"record_id": "6f1c2b1e-8a3d-4c55-9e0b-3f7a2d9c1b40", "kind": "test", "rev": 1,
           "updated_at": "2026-11-30T08:00:00Z", "updated_by": "JQ", "deleted": False, "exported_at": None,
           "meta": {"sample_id": "OLD-1", "project": "invented"},
           "test": {"passing": [{"opening_mm": 4.75, "passing_pct": 100.0}, {"opening_mm": 0.075, "passing_pct": 3.0}]},
           "band": None,
           "history": [{"rev": 1, "at": "2026-11-30T08:00:00Z", "by": "JQ", "summary": "created", "changes": []}]}
    page.goto(site.url + "vendor/manifest.json")  # any page of the origin, before the app opens its database
    page.evaluate(V1_SETUP, rec)
    open_app(page, site, "#/records")
    assert page.locator(f"li.record-item[data-id='{rec['record_id']}']").count() == 1
    info = page.evaluate("""() => new Promise((resolve) => {
        const req = indexedDB.open('tamis');
        req.onsuccess = () => { const db = req.result; resolve([db.version, [...db.objectStoreNames].sort()]); db.close(); };
    })""")
    assert info == [2, ["records", "results", "settings"]]
    assert stored(page, rec["record_id"]) == rec


def test_the_records_list_at_three_hundred_tests_shows_each_verdict_the_core_gives(page, site):
    """300 tests on the device: the list is drawn a page at a time, every row's verdict is the one
    CPython's tamis.api gives for that record (an independent run of the same core), and a search
    shows exactly the matching records."""
    import json

    from tamis.api import handle

    open_app(page, site, "#/entry")
    assert page.evaluate(helpers.SEED_TEST_RECORDS, 300) == 300
    go(page, "#/records")
    page.wait_for_function("() => document.querySelector('#view ul.record-list').dataset.verdicts === 'done'")
    page.get_by_text("300 of 300 records shown.").wait_for()
    assert page.locator("#view li.record-item").count() == 100   # one page drawn, the rest on demand
    while page.locator("#view button", has_text="more").is_visible():
        page.locator("#view button", has_text="more").click()
    assert page.locator("#view li.record-item").count() == 300

    shown = dict(page.evaluate("""() => [...document.querySelectorAll('#view li.record-item')]
        .map((li) => [li.dataset.id, li.querySelector('.record-verdict').dataset.verdict])"""))
    stored = page.evaluate("async () => (await import('/src/storage/records.js')).listRecords({ kind: 'test' })")
    assert len(stored) == 300 and set(shown) == {r["record_id"] for r in stored}
    for r in stored:
        resp = json.loads(handle(json.dumps({"schema": 1, "op": "evaluate", "id": 1, "sample": r["test"],
                                             "rules": r["meta"]["rules"]})))
        assert resp["ok"], resp
        assert shown[r["record_id"]] == resp["result"]["verdict"], r["meta"]["sample_id"]
    assert set(shown.values()) == {"accept", "review", "reject"}, "the invented tests should give every verdict"

    open_filters(page)
    page.get_by_role("searchbox").press_sequentially("b-0001")
    page.wait_for_function("() => document.querySelector('#view ul.record-list').dataset.query === 'b-0001'")
    ids = sorted(page.locator("#view li.record-item .record-title").all_text_contents())
    expected = sorted(r["meta"]["sample_id"] for r in stored if "b-0001" in r["meta"]["sample_id"].lower())
    assert len(expected) == 10 and [i for i in ids if any(e in i for e in expected)] == ids and len(ids) == 10
