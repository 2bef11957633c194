"""Records on the device: saved tests survive reloads (online and offline),
edits keep their history, deleting is soft until exported.

Invented data (see ``test_ui_common``).
"""

from __future__ import annotations

import helpers
from test_ui_common import enter_sample, go, open_app, settle, wait_screen


def save_current_test(page) -> str:
    page.get_by_role("button", name="Save test").click()
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
    page.get_by_role("button", name="Save changes").click()
    page.wait_for_function("(id) => import('/src/storage/records.js').then(m => m.getRecord(id)).then(r => r.rev === 2)", arg=rid)
    rec = stored(page, rid)
    assert rec["history"][-1]["changes"] == [{"field": "test.sieves[1].retained_g", "old": 12.4, "new": 12.6}]
    assert rec["history"][-1]["by"] == "JQ" and rec["history"][-1]["summary"] == "edited"
    assert rec["history"][0]["summary"] == "created"
    go(page, f"#/record/{rid}")
    assert "test.sieves[1].retained_g: 12.4 → 12.6" in page.text_content(".history")

    # Saving again with nothing changed writes no empty revision.
    go(page, f"#/entry/{rid}")
    page.get_by_role("button", name="Save changes").click()
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
