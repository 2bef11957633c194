"""CSV exchange from the app: the app's export is byte-identical to the core's
export of the same records on CPython; exported records are marked; a bad file
changes nothing; a conflict waits for the user's choice; the demo comes and
goes without touching the user's records.

Invented data (see ``test_ui_common``) and the invented demo project.
"""

from __future__ import annotations

import json
from pathlib import Path

from tamis.api import handle

from test_ui_common import add_base_soil, enter_sample, go, open_app, settle, wait_screen

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
    page.get_by_role("button", name="Save test").click()
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
    page.get_by_role("button", name="Save changes").click()
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
    assert apply.is_enabled()
    apply.click()
    page.wait_for_selector(".import-result .ok-line")
    now = next(r for r in all_records(page) if r["record_id"] == test["record_id"])
    incoming = core("records_import_csv", csv=office_csv, existing=[])["records"][0]
    assert now == incoming


def test_demo_opens_and_is_removed_without_touching_own_records(page, site):
    open_app(page, site, "#/welcome")
    add_base_soil(page, "MINE-1")
    go(page, "#/exchange")
    page.get_by_role("button", name="Open the demo project").click()
    page.get_by_role("button", name="Apply the import").click()
    page.wait_for_selector(".import-result .ok-line")
    expected = core("records_import_csv", csv=DEMO_CSV.read_text(encoding="utf-8"), existing=[])
    recs = all_records(page)
    assert len(recs) == 1 + len(expected["added"])
    go(page, "#/records")
    go(page, "#/exchange")
    page.once("dialog", lambda d: d.accept())
    page.get_by_role("button", name=f"Remove the demo ({len(expected['added'])} records)").click()
    page.wait_for_selector("button:has-text('Remove the demo (0 records)')")
    left = all_records(page)
    assert [r["meta"]["sample_id"] for r in left] == ["MINE-1"]


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
    page.get_by_role("button", name="Apply the import").click()
    page.wait_for_selector(".import-result .ok-line")
    expected = cpython_verdicts(all_records(page))
    assert len(set(expected.values())) >= 2  # the demo exercises more than one verdict
    go(page, "#/records")
    page.wait_for_function("() => !document.querySelector('.record-verdict[data-verdict=none]')")
    shown = dict(page.eval_on_selector_all("li.record-item[data-kind=test]",
                                           "els => els.map(e => [e.dataset.id, e.querySelector('.record-verdict').dataset.verdict])"))
    assert shown == expected
    for verdict in set(expected.values()):
        page.get_by_label("Verdict").select_option(verdict)
        ids = page.eval_on_selector_all("li.record-item", "els => els.map(e => e.dataset.id)")
        assert sorted(ids) == sorted(k for k, v in expected.items() if v == verdict), verdict
    page.get_by_label("Verdict").select_option("")
    page.get_by_label("Only records not yet exported").check()
    assert page.locator("li.record-item").count() == len(expected)  # imported, never exported from here
    page.get_by_label("Search").fill("Q-0916-1R")
    assert page.eval_on_selector_all("li.record-item .record-title", "els => els.map(e => e.textContent)")[0].startswith("Q-0916-1R")
