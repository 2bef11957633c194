"""Nothing typed or saved is lost: a tab killed right after Save, two tabs on
one new test, one record edited in two tabs, a reload right after the last
keystroke. Each scenario was first run against the app before the fix and
failed there (see the report of the change that added this file).

The rules these tests hold the app to are written in docs/records.md
("Saving in the app"). Invented data only.
"""

from __future__ import annotations

import helpers
from test_ui_common import TESTER, go, open_app, settle, wait_screen

ALL_RECORDS = "async () => (await import('/src/storage/records.js')).listRecords({includeDeleted: true})"


def new_tab(context):
    page = context.new_page()
    page.set_default_timeout(helpers.BOOT_TIMEOUT_MS)
    page.console_errors = []
    page.on("pageerror", lambda err: page.console_errors.append(f"pageerror: {err}"))
    return page


def known_tester(context, site) -> None:
    """The inspector gave their name on an earlier day (Settings), so a save asks nothing.

    The page is reloaded the moment the name is typed, before the field is left:
    the name must still be there (it once was lost when the reload beat the
    IndexedDB write)."""
    page = new_tab(context)
    open_app(page, site, "#/settings")
    box = page.get_by_label("Your name or initials (recorded with each save)")
    box.press_sequentially(TESTER)
    page.reload()
    page.wait_for_selector("body[data-core-ready]")
    wait_screen(page)
    assert page.get_by_label("Your name or initials (recorded with each save)").input_value() == TESTER
    page.close()


def records(page) -> list[dict]:
    return page.evaluate(ALL_RECORDS)


def stored(page, record_id: str) -> dict:
    return page.evaluate("async (id) => (await import('/src/storage/records.js')).getRecord(id)", record_id)


def typed(page, label: str, text: str) -> None:
    """Type into a labelled field as a person does (key by key), then let the draft land."""
    page.evaluate("() => document.querySelectorAll('#view details').forEach(d => { d.open = true; })")
    box = page.get_by_label(label, exact=True)
    box.fill("")
    box.press_sequentially(text)
    settle(page)


def save_new(page) -> str:
    page.get_by_role("button", name="Save test").click()
    page.wait_for_selector("#view[data-screen='record']")
    wait_screen(page)
    return page.get_attribute(".detail", "data-id")


def test_a_tab_killed_just_after_save_never_turns_the_test_into_a_revision_of_the_next(context, site):
    """Save, then the tab dies 1-10 ms later (its script stops, then it is closed); reopen, next test."""
    known_tester(context, site)
    for ms in range(1, 11):
        page = new_tab(context)
        open_app(page, site, "#/entry")
        typed(page, "Project", f"kill-{ms}")
        page.evaluate("""(ms) => {
            [...document.querySelectorAll('button')].find(b => b.textContent === 'Save test').click();
            setTimeout(() => { for (;;) {} }, ms);   // the tab stops running here, as a killed tab does
        }""", ms)
        page.close(run_before_unload=False)
    page = new_tab(context)
    open_app(page, site, "#/entry")
    typed(page, "Project", "after-the-kills")
    rid = save_new(page)
    recs = records(page)
    assert stored(page, rid)["rev"] == 1, stored(page, rid)["history"]
    killed = [r for r in recs if r["meta"].get("project", "").startswith("kill-")]
    assert killed, "no save committed before the tab stopped: the scenario was not exercised"
    # No record was turned into a later revision of another test, and no two share a project.
    assert [r for r in recs if r["rev"] != 1] == [], [(r["meta"], r["history"]) for r in recs if r["rev"] != 1]
    projects = [r["meta"].get("project") for r in recs]
    assert len(projects) == len(set(projects)), projects
    assert "after-the-kills" in projects


def test_two_tabs_on_a_new_test_both_saves_are_kept(context, site):
    known_tester(context, site)
    a = new_tab(context)
    open_app(a, site, "#/entry")
    typed(a, "Project", "typed-in-A")
    b = new_tab(context)
    open_app(b, site, "#/entry")
    typed(b, "Project", "typed-in-B")
    typed(b, "Station", "0+250")
    rid_a = save_new(a)
    rid_b = save_new(b)
    by_project = {r["meta"].get("project"): r for r in records(b)}
    assert "typed-in-A" in by_project, f"tab A's test is gone: {by_project}"
    assert "typed-in-B" in by_project
    assert rid_a != rid_b
    assert by_project["typed-in-A"]["rev"] == 1 and by_project["typed-in-B"]["rev"] == 1
    assert by_project["typed-in-B"]["meta"]["station"] == "0+250"
    assert "station" not in by_project["typed-in-A"]["meta"]


def saved_test(page, site, project: str) -> str:
    open_app(page, site, "#/entry")
    typed(page, "Project", project)
    return save_new(page)


def one_record_in_two_tabs(context, site, label: str):
    """A saved test (the inspector's name known) opened for editing in tab A, then in tab B."""
    known_tester(context, site)
    a = new_tab(context)
    rid = saved_test(a, site, label)
    go(a, f"#/entry/{rid}")
    b = new_tab(context)
    open_app(b, site, f"#/entry/{rid}")
    return a, b, rid


def test_one_record_in_two_tabs_a_stale_save_is_refused_and_merged_field_by_field(context, site):
    a, b, rid = one_record_in_two_tabs(context, site, "two-tabs")
    typed(a, "Station", "1+100")
    typed(b, "Material", "river sand")
    a.get_by_role("button", name="Save changes").click()
    a.wait_for_selector("text=(revision 2)")
    b.get_by_role("button", name="Save changes").click()
    b.wait_for_function("() => document.querySelector('section.conflict:not([hidden])')"
                        " || document.body.textContent.includes('(revision 3)')")
    rec = stored(b, rid)
    assert rec["rev"] == 2, f"tab B's stale save went through: {rec['history'][-1]}"
    assert rec["meta"]["station"] == "1+100" and "material" not in rec["meta"]
    # Each tab was told the other has the record open, and B saw A's save.
    assert "open in another tab" in a.text_content(".tab-notice")
    assert "open in another tab" in b.text_content(".tab-notice")
    assert f"Revision 2 was saved in another tab by {TESTER} (station)" in b.text_content(".tab-notice")
    conflict = b.locator("section.conflict")
    # Both versions, field by field: station changed there, material changed here.
    rows = {r.get_attribute("data-field"): r for r in conflict.locator("tr[data-field]").all()}
    assert set(rows) == {"meta.station", "meta.material"}, list(rows)
    assert "1+100" in rows["meta.station"].text_content() and "river sand" in rows["meta.material"].text_content()
    assert rows["meta.station"].locator("input[value='saved']").is_checked()
    assert rows["meta.material"].locator("input[value='mine']").is_checked()
    b.get_by_role("button", name="Save the merge").click()
    b.wait_for_function("(id) => import('/src/storage/records.js').then(m => m.getRecord(id)).then(r => r.rev === 3)", arg=rid)
    rec = stored(b, rid)
    assert rec["meta"]["station"] == "1+100" and rec["meta"]["material"] == "river sand"
    assert rec["meta"]["project"] == "two-tabs"


def test_one_record_in_two_tabs_each_tab_keeps_its_own_unsaved_edit(context, site):
    a, b, rid = one_record_in_two_tabs(context, site, "own-drafts")
    typed(a, "Station", "2+000")
    typed(b, "Material", "crushed gravel")
    # B's typing came last; A reloads and must find its own edit, not B's.
    a.reload()
    a.wait_for_selector("body[data-core-ready]")
    wait_screen(a)
    assert a.get_by_label("Station", exact=True).input_value() == "2+000"
    assert a.get_by_label("Material", exact=True).input_value() == ""
    b.reload()
    b.wait_for_selector("body[data-core-ready]")
    wait_screen(b)
    assert b.get_by_label("Material", exact=True).input_value() == "crushed gravel"
    assert b.get_by_label("Station", exact=True).input_value() == ""


#: A large write to the store the drafts live in, started and not awaited: the
#: storage is busy (a slow phone, an import or another tab saving) when the key goes in.
BUSY_STORAGE = """() => {
    const req = indexedDB.open('tamis');
    req.onsuccess = () => {
        const tx = req.result.transaction('settings', 'readwrite');
        tx.objectStore('settings').put('x'.repeat(8_000_000), 'e2e:ballast');
        tx.oncomplete = () => req.result.close();
    };
}"""


def test_a_reload_right_after_the_last_keystroke_keeps_every_character(page, site):
    open_app(page, site, "#/entry")
    expected = ""
    for i in range(8):
        page.evaluate("() => document.querySelectorAll('#view details').forEach(d => { d.open = true; })")
        box = page.get_by_label("Station", exact=True)
        box.focus()
        page.keyboard.press("End")
        page.evaluate(BUSY_STORAGE)
        ch = "0123456789"[i]
        page.keyboard.type(ch)
        page.evaluate("() => location.reload()")  # the reload comes right after the key
        expected += ch
        page.wait_for_selector("body[data-core-ready]")
        wait_screen(page)
        got = page.get_by_label("Station", exact=True).input_value()
        assert got == expected, f"after reload {i + 1}: {got!r}, typed {expected!r}"
