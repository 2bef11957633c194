"""CSV exchange from the app: the app's export is byte-identical to the core's
export of the same records on CPython; exported records are marked; a bad file
changes nothing; a conflict waits for the user's choice, which the core turns
into a new revision (``resolve``) so the same file brings no conflict back; an
export of a selection carries the band and base soil its tests name as
``context``; the demo opens in one tap and goes without touching the user's
records, even those with one of the demo's two markers.

Invented data (see ``test_ui_common``) and the invented demo project.
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

from tamis.api import handle

from test_ui_common import add_base_soil, add_preset_band, enter_sample, go, open_app, open_filters, save_test, settle, wait_screen

DEMO_CSV = Path(__file__).resolve().parent.parent / "demo_data" / "demo_project.csv"


def all_records(page) -> list[dict]:
    return page.evaluate("async () => (await import('/src/storage/records.js')).listRecords({includeDeleted: true})")


def core(op: str, **fields) -> dict:
    resp = json.loads(handle(json.dumps({"schema": 1, "op": op, "id": 1, **fields})))
    assert resp["ok"], resp
    return resp["result"]


def upload(page, name: str, text: str) -> None:
    page.set_input_files("#import-file", files=[{"name": name, "mimeType": "text/csv", "buffer": text.encode()}])


def test_export_is_byte_identical_to_the_core_and_import_asks_on_conflict(page, site):
    open_app(page, site)
    add_base_soil(page, "B-3")
    enter_sample(page, base_label="B-3 · silty sand core")
    save_test(page)
    page.wait_for_selector("#view[data-screen='record']")
    wait_screen(page)
    assert page.text_content("#unexported") == "1"  # one test not yet exported

    before = all_records(page)
    assert len(before) == 2
    expected_csv = core("records_export_csv", records=before, bom=False, context=[])["csv"]
    go(page, "#/exchange")
    with page.expect_download() as dl:
        page.get_by_role("button", name="Export all records (2)").click()
    got = Path(dl.value.path()).read_bytes().decode("utf-8")
    assert got == expected_csv
    assert dl.value.suggested_filename.endswith(".csv")
    page.wait_for_selector("#unexported[hidden]", state="attached")
    after = all_records(page)
    assert all(r["exported_at"] for r in after)
    assert [dict(r, exported_at=None) for r in after] == before  # nothing else changed

    # The same file imported again changes nothing.
    go(page, "#/exchange")
    upload(page, "again.csv", got)
    page.wait_for_selector(".import-result p")
    assert "2 rows; 0 new, 0 newer than on this device, 2 unchanged, 0 in conflict" in page.text_content(".import-result")

    # A file that is not our CSV is refused and changes nothing.
    go(page, "#/exchange")
    upload(page, "bad.csv", "this,is\nnot,a tamis file\n")
    page.wait_for_selector(".import-result .core-error")
    assert "nothing changed" in page.text_content(".import-result")
    assert all_records(page) == after

    # Both sides change the test: the device edits a mass, the office edits the notes.
    test = next(r for r in after if r["kind"] == "test")
    go(page, f"#/entry/{test['record_id']}")
    page.fill("input[data-field='sample.sieves[2].retained_g']", "81")
    settle(page)
    save_test(page, "Save changes")
    page.wait_for_function("(id) => import('/src/storage/records.js').then(m => m.getRecord(id)).then(r => r.rev === 2)",
                           arg=test["record_id"])
    office = json.loads(json.dumps(test))
    office["meta"]["notes"] = "checked in the office"
    office["rev"] = 2
    office["updated_at"] = "2026-12-01T12:00:00Z"
    office["updated_by"] = "office"
    office["history"].append({"rev": 2, "at": "2026-12-01T12:00:00Z", "by": "office", "summary": "edited",
                              "changes": [{"field": "meta.notes", "old": None, "new": "checked in the office"}]})
    office_csv = core("records_export_csv", records=[office], bom=False, context=[])["csv"]
    go(page, "#/exchange")
    upload(page, "office.csv", office_csv)
    page.wait_for_selector(".conflict")
    apply = page.get_by_role("button", name="Apply the import")
    assert apply.is_disabled()  # no silent choice
    local = next(r for r in all_records(page) if r["record_id"] == test["record_id"])
    assert local["rev"] == 2 and local["meta"].get("notes") is None  # untouched so far
    page.get_by_label("Take the one in the file").check()
    who = page.get_by_label("Your name or initials, recorded with your choices")
    who.fill("")
    assert apply.is_disabled()  # the choice is recorded with who made it
    who.fill("JD")
    assert apply.is_enabled()
    apply.click()
    page.wait_for_selector(".import-result .ok-line")
    assert "1 conflict settled as a new revision" in page.text_content(".import-result")
    now = next(r for r in all_records(page) if r["record_id"] == test["record_id"])
    # The core settled it (resolve, at, by): a new revision above both, with the file's content.
    settled = core("records_import_csv", csv=office_csv, existing=[local], resolve={test["record_id"]: "incoming"},
                   at=now["updated_at"], by="JD")
    assert settled["resolved"] == [test["record_id"]]
    assert now == next(r for r in settled["records"] if r["record_id"] == test["record_id"])
    assert now["rev"] == 3 and now["updated_by"] == "JD" and now["meta"]["notes"] == "checked in the office"
    assert "conflict resolved" in now["history"][-1]["summary"]

    # The same file again: the choice supersedes both versions, so no conflict comes back.
    go(page, "#/exchange")
    upload(page, "office.csv", office_csv)
    page.wait_for_selector(".import-result p")
    assert "0 in conflict" in page.text_content(".import-result")
    assert page.locator(".conflict").count() == 0
    again = core("records_import_csv", csv=office_csv, existing=all_records(page))
    assert again["conflicts"] == [] and test["record_id"] in again["unchanged"]


def test_export_of_a_selection_carries_its_band_and_base_as_context(page, site):
    open_app(page, site)
    add_base_soil(page, "B-5")
    fine = add_preset_band(page, "astm-c33-fine")
    enter_sample(page, base_label="B-5 · silty sand core")
    page.get_by_label("Specification band").select_option(label=fine["name"])
    settle(page)
    save_test(page)
    page.wait_for_selector("#view[data-screen='record']")
    wait_screen(page)
    recs = all_records(page)
    test = next(r for r in recs if r["kind"] == "test")
    refs = [r for r in recs if r["record_id"] in (test["meta"]["band_id"], test["meta"]["base_id"])]
    assert len(refs) == 2

    go(page, "#/records")
    page.get_by_label(f"Select {test['meta']['sample_id']}").check()
    page.get_by_role("button", name="Export the selected records").click()
    wait_screen(page)
    with page.expect_download() as dl:
        page.get_by_role("button", name="Export the selected records (1)").click()
    got = Path(dl.value.path()).read_bytes().decode("utf-8")
    context = sorted(refs, key=lambda r: r["record_id"])
    assert got == core("records_export_csv", records=[test], bom=False, context=context)["csv"]
    rows = list(csv.DictReader(io.StringIO(got)))
    assert [r["record_id"] for r in rows] == [test["record_id"]]  # the context is looked up, not written
    band = next(r for r in refs if r["kind"] == "band")["band"]
    base = next(r for r in refs if r["kind"] == "base")["test"]
    verdict = core("evaluate", sample=test["test"], band=band, base=base, rules=test["meta"]["rules"])["verdict"]
    assert rows[0]["calc_verdict"] == verdict  # filled: without the context it would be blank
    assert core("records_export_csv", records=[test], bom=False)["csv"] != got


DEMO_PROJECT = "Tallowmere Dam (demo)"


def test_demo_opens_in_one_tap_on_an_empty_device(page, site):
    open_app(page, site, "#/welcome")
    page.get_by_role("button", name="Open the demo project").click()
    page.get_by_text("Imported the demo project").first.wait_for()
    assert page.get_by_role("button", name="Apply the import").count() == 0  # no review: nothing conflicts
    expected = core("records_import_csv", csv=DEMO_CSV.read_text(encoding="utf-8"), existing=[])
    recs = all_records(page)
    assert sorted(r["record_id"] for r in recs) == sorted(expected["added"])
    key = lambda r: r["record_id"]  # noqa: E731
    assert sorted(recs, key=key) == sorted(expected["records"], key=key)  # stored as the core read them
    page.get_by_text(f"What was added ({len(expected['added'])})").click()
    assert page.locator(".added-list li").count() == len(expected["added"])


def test_demo_is_removed_without_touching_own_records(page, site):
    open_app(page, site, "#/welcome")
    add_base_soil(page, "MINE-1")
    # Two records of the user's own that carry one of the demo's two markers each.
    go(page, "#/base")
    page.get_by_label("Sample id").fill("MINE-2")
    page.get_by_label("Project").fill(DEMO_PROJECT)
    for i, (d, p) in enumerate([(4.75, 100), (0.075, 40)]):
        page.get_by_role("button", name="Add a size").click()
        page.fill(f"input[data-field='test.passing[{i}].opening_mm']", str(d))
        page.fill(f"input[data-field='test.passing[{i}].passing_pct']", str(p))
    page.get_by_role("button", name="Save base soil").click()
    page.wait_for_selector("#view[data-screen='record']")
    page.evaluate("""async () => {
        const m = await import('/src/storage/records.js');
        const r = m.blankRecord('base', {meta: {sample_id: 'MINE-3', demo: true, project: 'My dam'},
                                         test: {passing: [{opening_mm: 4.75, passing_pct: 100}, {opening_mm: 0.075, passing_pct: 30}]}});
        await m.saveRecord(r, {by: 'me', summary: 'created'});
    }""")
    go(page, "#/exchange")
    page.get_by_role("button", name="Open the demo project").click()
    page.wait_for_selector(".import-result .ok-line")  # applied in one tap: nothing conflicts
    expected = core("records_import_csv", csv=DEMO_CSV.read_text(encoding="utf-8"), existing=[])
    recs = all_records(page)
    assert len(recs) == 3 + len(expected["added"])
    go(page, "#/records")
    go(page, "#/exchange")
    page.once("dialog", lambda d: d.accept())
    page.get_by_role("button", name=f"Remove the demo ({len(expected['added'])} records)").click()
    page.wait_for_selector("button:has-text('Remove the demo (0 records)')")
    left = all_records(page)
    assert sorted(r["meta"]["sample_id"] for r in left) == ["MINE-1", "MINE-2", "MINE-3"]


def cpython_verdicts(records: list[dict]) -> dict:
    """Each test's verdict on CPython, with the band, base soil and rules it names (as the app sends them)."""
    by_id = {r["record_id"]: r for r in records}
    out = {}
    for r in records:
        if r["kind"] != "test" or r["deleted"]:
            continue
        fields = {"sample": r["test"], "rules": r["meta"].get("rules") or {"criteria": "nrcs-1994"}}
        if r["meta"].get("band_id") in by_id:
            fields["band"] = by_id[r["meta"]["band_id"]]["band"]
        if r["meta"].get("base_id") in by_id:
            fields["base"] = by_id[r["meta"]["base_id"]]["test"]
        out[r["record_id"]] = core("evaluate", **fields)["verdict"]
    return out


def test_record_list_verdicts_and_filters_match_cpython(page, site):
    open_app(page, site, "#/exchange")
    page.get_by_role("button", name="Open the demo project").click()
    page.wait_for_selector(".import-result .ok-line")
    expected = cpython_verdicts(all_records(page))
    assert len(set(expected.values())) >= 2  # the demo exercises more than one verdict
    go(page, "#/records")
    page.wait_for_function("() => !document.querySelector('.record-verdict[data-verdict=none]')")
    shown = dict(page.eval_on_selector_all("li.record-item[data-kind=test]",
                                           "els => els.map(e => [e.dataset.id, e.querySelector('.record-verdict').dataset.verdict])"))
    assert shown == expected
    open_filters(page)
    for verdict in set(expected.values()):
        page.get_by_label("Verdict").select_option(verdict)
        ids = page.eval_on_selector_all("li.record-item", "els => els.map(e => e.dataset.id)")
        assert sorted(ids) == sorted(k for k, v in expected.items() if v == verdict), verdict
    page.get_by_label("Verdict").select_option("")
    page.get_by_label("Only records not yet exported").check()
    assert page.locator("li.record-item").count() == len(expected)  # imported, never exported from here
    page.get_by_label("Search").fill("Q-0916-1R")
    page.wait_for_selector("ul.record-list[data-query='q-0916-1r']")  # the search waits for a pause in typing
    assert page.eval_on_selector_all("li.record-item .record-title", "els => els.map(e => e.textContent)")[0].startswith("Q-0916-1R")


def test_demo_shows_the_review_only_when_something_conflicts(page, site):
    """A device holding another version of one demo record (same id and revision, other content): opening the
    demo stops at the review, writes nothing until the user chooses, and the choice is settled by the core."""
    demo_csv = DEMO_CSV.read_text(encoding="utf-8")
    first = core("records_import_csv", csv=demo_csv, existing=[])["records"][0]
    other = json.loads(json.dumps(first))
    other["meta"]["notes"] = "edited on this device"
    open_app(page, site, "#/exchange")
    page.evaluate("async (r) => (await import('/src/storage/records.js')).putRecords([r])", other)
    page.get_by_role("button", name="Open the demo project").click()
    page.wait_for_selector(".conflict")
    assert all_records(page) == [other]  # nothing written yet
    page.get_by_label("Keep the one on this device").check()
    page.get_by_label("Your name or initials, recorded with your choices").fill("JD")
    page.get_by_role("button", name="Apply the import").click()
    page.wait_for_selector(".import-result .ok-line")
    kept = next(r for r in all_records(page) if r["record_id"] == other["record_id"])
    assert kept["meta"]["notes"] == "edited on this device" and kept["rev"] == first["rev"] + 1
    again = core("records_import_csv", csv=demo_csv, existing=all_records(page))
    assert again["conflicts"] == []


def test_the_decimal_comma_export_is_the_cores_and_imports_back_unchanged(page, site):
    """An office whose spreadsheet uses the decimal comma: the inspector picks that variant once,
    exports, and the file (semicolons, 12,4) is the core's and reads back as the same records."""
    open_app(page, site)
    add_base_soil(page, "B-4")
    enter_sample(page, base_label="B-4 · silty sand core")
    save_test(page)
    page.wait_for_selector("#view[data-screen='record']")
    wait_screen(page)
    before = all_records(page)
    go(page, "#/exchange")
    page.get_by_label("Semicolons, decimal comma (12,4)").check()
    page.reload()  # the choice is kept on the device
    page.wait_for_selector("#view[data-screen='exchange']")
    assert page.get_by_label("Semicolons, decimal comma (12,4)").is_checked()
    with page.expect_download() as dl:
        page.get_by_role("button", name="Export all records (2)").click()
    got = Path(dl.value.path()).read_bytes().decode("utf-8")
    assert got == core("records_export_csv", records=before, bom=False, context=[], dialect="decimal_comma")["csv"]
    assert got.startswith("tamis_csv;record_id;kind;")
    header = got.split("\r\n")[0].split(";")
    row = next(line for line in got.split("\r\n")[1:] if ";test;" in line).split(";")
    cells = dict(zip(header, row))
    assert "," in cells["calc_d15_mm"] and "." not in cells["calc_d15_mm"]
    assert any(h.startswith("calc_passing_pct@") and "," in cells[h] for h in header)
    go(page, "#/exchange")
    upload(page, "comma.csv", got)
    page.wait_for_selector(".import-result p")
    assert "2 rows; 0 new, 0 newer than on this device, 2 unchanged, 0 in conflict" in page.text_content(".import-result")
    page.get_by_label("Commas, decimal point (12.4)").check()  # and back: the default export again
    with page.expect_download() as dl:
        page.get_by_role("button", name="Export all records (2)").click()
    assert Path(dl.value.path()).read_bytes().decode("utf-8").startswith("tamis_csv,record_id,kind,")
