"""A site laboratory technician on a 360 x 780 phone enters a clay core base soil as it comes off the
bench: the masses on the sieves, then the hydrometer sheet as read (152H, Gs, the dry mass in
suspension, the composite correction in the blank, and the readings: elapsed time, reading,
temperature). One reading is mistyped (43 for 34) and corrected after the screen says why it cannot
be; the temperature of the 24-hour reading is left empty at first; the meniscus correction is left
empty throughout. The reduced sheet (diameter, percent finer) is the one CPython's core computes,
nothing is wider than the screen, the record survives a reload, and an export imported on another
device gives the same records and the same sheet.

Then the inspector checks a filter sand against that base soil and against the same core typed as
percent finer from the reduced sheet: the base soil category, d85B and every filter limit are the
same, through the worker in the page and on CPython.

The figures are an invented scenario of our own (a realistic clay core, not a measured one). The
reduction follows ASTM D7928-17 as the core documents it (tamis/lab/sedimentation.py, docs/methods.md);
the criteria are the default set (NRCS NEH 633 Ch. 26, 1994). The oracle for every figure is
``tamis.api.handle`` on CPython with the same input: the app computes nothing itself.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

import helpers
from tamis.api import handle
from test_ui_common import PHONE, cpython, go, phone_session, scroll_width, settle, shown_errors, wait_screen
from test_ui_inspector import CLEAN, STACK, num


#: Masses retained on the "Soil" stack [g], as typed (one with a comma); the sieves above 4.75 mm stay empty.
MASSES = [("4.75", "0"), ("2", "9,6"), ("0.85", "14.2"), ("0.425", "17.5"), ("0.25", "21.3"), ("0.15", "24.8"),
          ("0.106", "13.1"), ("0.075", "15.4")]
PAN, DRY, WASHED = "0.9", "500", "117.1"
LL, PI = "44", "23"
GS, SUSP, CC = "2,70", "50", "5.5"
#: The hydrometer readings as taken: elapsed time [min], 152H reading [g/L], temperature [C].
READINGS = [("1", "43", "21"), ("2", "40.5", "21"), ("4", "37", "21"), ("8", "34", "21.5"), ("15", "31", "21.5"),
            ("30", "28", "22"), ("60", "25", "22"), ("120", "22", "22.5"), ("240", "19.5", "22.5"),
            ("1440", "12.5", "15.5")]
MISTYPED = (3, "43")  # the 8-minute reading typed with its digits swapped


def expected_test() -> dict:
    """The base soil as the screen must send it (the core's JSON contract)."""
    return {"sieves": [{"opening_mm": float(d), "retained_g": num(m)} for d, m in MASSES],
            "pan_g": num(PAN), "dry_mass_g": num(DRY), "washed_dry_mass_g": num(WASHED),
            "plasticity": {"liquid_limit": num(LL), "plasticity_index": num(PI)}, "dispersive": False,
            "sedimentation": {"hydrometer": "152H", "specific_gravity": num(GS), "dry_mass_g": num(SUSP),
                              "split_mm": 2, "composite_correction": num(CC),
                              "readings": [{"time_min": num(t), "reading": num(r), "temperature_c": num(c)}
                                           for t, r, c in READINGS]}}


def js_number(v: float) -> str:
    """A number as JavaScript's String() writes it (for the figures these tests meet)."""
    return str(int(v)) if float(v).is_integer() else repr(float(v))


def shown_3(v: float) -> str:
    """dom.js fmt(v, 3) for 0.000001 <= v < 100: three significant digits."""
    return js_number(float(f"{v:.3g}"))


@pytest.fixture
def phone(request, browser, site):
    """A 360 x 780 phone with the tester's name set, in the theme given by parametrize (standard by default)."""
    theme = getattr(request, "param", "standard")
    yield from phone_session(browser, site, theme, tester="LT", accept_downloads=True)



def reading_field(i: int, name: str) -> str:
    return f"input[data-field='test.sedimentation.readings[{i}].{name}']"


def note_under(page, i: int) -> str:
    """The full-width line under reading i: its typing errors, what it lacks, the core's messages."""
    return page.text_content(f".sed-readings tr[data-note-of='{i}']")


def all_records(page) -> list[dict]:
    return page.evaluate("async () => (await import('/src/storage/records.js')).listRecords({includeDeleted: true})")


def in_page(page, op: str, fields: dict) -> dict:
    """The op answered by the worker in the page (Pyodide), as the screens ask it."""
    resp = page.evaluate("async ([op, f]) => (await import('/src/ui/core.js')).ask(op, f)", [op, fields])
    assert resp["ok"], resp
    return resp["result"]


def enter_clay_core(page) -> None:
    go(page, "#/base")
    page.get_by_label("Sample id").fill("CORE-7")
    page.get_by_label("Description").fill("clay core, borrow area C")
    page.get_by_label("Masses retained").check()
    page.get_by_label("Sieve stack").select_option(label=next(
        o for o in page.locator("select option").all_text_contents() if o.startswith("Soil")))
    page.get_by_role("button", name="Use this stack").click()
    for d, m in MASSES:
        page.fill(f"tr[data-opening='{d}'] input", m)
    page.fill("input[data-field='test.pan_g']", PAN)
    page.fill("input[data-field='test.dry_mass_g']", DRY)
    page.fill("input[data-field='test.washed_dry_mass_g']", WASHED)
    page.get_by_label("Liquid limit LL (%)").fill(LL)
    page.get_by_label("Plasticity index PI (%)").fill(PI)
    page.get_by_role("radio", name="No", exact=True).check()
    settle(page)


@pytest.mark.parametrize("phone", ["standard", "sunlight"], indirect=True)
def test_clay_core_hydrometer_sheet_typed_as_read(phone, site, browser, tmp_path):
    page = phone
    enter_clay_core(page)
    page.get_by_role("button", name="Add hydrometer readings").click()
    # The sheet opens with the first field focused; nothing typed yet is no error.
    assert page.evaluate("() => document.activeElement.dataset.field") == "test.sedimentation.specific_gravity"
    assert shown_errors(page) == []
    # Numeric keypads on every figure of the sheet.
    modes = page.eval_on_selector_all(".sed-box input[type='text']", "ns => ns.map(n => n.inputMode)")
    assert modes and set(modes) == {"decimal"}
    page.get_by_label("Specific gravity of solids Gs").fill(GS)
    page.get_by_label("Dry mass in suspension (g)").fill(SUSP)
    page.get_by_label("Composite correction (reading in the blank)").fill(CC)
    # Readings as taken; the 8-minute one mistyped, the 24-hour temperature not typed yet.
    for i, (t, r, c) in enumerate(READINGS):
        if i:
            page.get_by_role("button", name="Add a reading").click()
            assert page.evaluate("() => document.activeElement.dataset.field") == f"test.sedimentation.readings[{i}].time_min"
        page.fill(reading_field(i, "time_min"), t)
        page.fill(reading_field(i, "reading"), MISTYPED[1] if i == MISTYPED[0] else r)
        if i < len(READINGS) - 1:
            page.fill(reading_field(i, "temperature_c"), c)
    page.get_by_label("Meniscus correction").focus()  # the row is left
    settle(page)
    assert "Reading 10: the temperature is missing." in note_under(page, 9)
    assert scroll_width(page) <= PHONE["width"]

    # The temperature read: the core now refuses the swapped reading, in plain words under its row.
    page.fill(reading_field(9, "temperature_c"), READINGS[9][2])
    settle(page)
    bad = page.locator(reading_field(3, "reading"))
    assert bad.get_attribute("aria-invalid") == "true"
    wrong = expected_test()
    wrong["sedimentation"]["readings"][3]["reading"] = num(MISTYPED[1])
    refused = json.loads(handle(json.dumps({"schema": 1, "op": "gradation", "id": 1, "test": wrong})))
    assert refused["ok"] is False and refused["error"]["field"] == "test.sedimentation.readings[3].reading"
    line = note_under(page, 3)
    assert line.startswith("Reading 4 = ") and "cannot rise as sizes fall" in line, line
    assert "test.sedimentation" not in line  # the path is named in words
    assert "refuses an entry" in page.text_content(".sed-reduced")
    assert scroll_width(page) <= PHONE["width"]  # with the error shown

    # Corrected: no error left, and the reduced sheet is CPython's.
    page.fill(reading_field(3, "reading"), READINGS[3][1])
    settle(page)
    assert bad.get_attribute("aria-invalid") == "false"
    assert shown_errors(page) == []
    want = cpython("gradation", test=expected_test())
    sed = want["result"]["sedimentation"]
    rows = page.eval_on_selector_all(".sed-table tbody tr", "rs => rs.map(r => [...r.children].map(c => c.firstChild.textContent))")
    assert rows == [[js_number(r["time_min"]), shown_3(r["corrected_reading"]), shown_3(r["diameter_mm"]),
                     f"{r['finer_pct']:.1f}"] for r in sed["readings"]]
    assert len(rows) == 10
    assert f"Passing 2 mm, from the sieves: {sed['passing_split_pct']:.1f} %" in page.text_content(".sed-split")
    # The core's warning beside the row it concerns: the 24-hour temperature is outside the viscosity table.
    warn = next(f for f in want["findings"] if f["code"] == "sed_temperature_range")
    assert warn["field"] == "test.sedimentation.readings[9].temperature_c"
    assert "Warning: The temperature of reading 10 = 15.5 C is outside 16-30 C" in note_under(page, 9)
    assert all("Warning" not in note_under(page, i) for i in range(9))
    # The combined curve as typed: each hydrometer point an open triangle, the sieve points squares.
    sources = [p["source"] for p in want["result"]["points"]]
    assert sources.count("sedimentation") == 10 and sources.count("sieve") == 8
    assert page.locator(".chart .base-curve polygon.sed-mark").count() == 10
    assert page.locator(".chart .base-curve rect[data-source='sieve']").count() == 8
    assert "Hydrometer points: open triangles" in page.text_content(".legend")
    assert scroll_width(page) <= PHONE["width"]
    sheet_box = page.locator(".sed-reduced").bounding_box()
    assert sheet_box["x"] >= 0 and sheet_box["x"] + sheet_box["width"] <= PHONE["width"]
    # Every control of the sheet is a thumb-sized target (a radio with its label), and axe-core finds nothing to report.
    small = page.eval_on_selector_all(".sed-box input:not([type='radio']), .sed-box button, .sed-box .radio", "ns => ns.filter(n => n.getClientRects().length)"
                                      ".map(n => n.getBoundingClientRect()).filter(r => r.width < 44 || r.height < 44).length")
    assert small == 0
    assert helpers.axe_violations(helpers.run_axe(page, ".sed-box")) == []

    page.get_by_role("button", name="Save base soil").click()
    page.wait_for_selector("#view[data-screen='record']")
    wait_screen(page)
    page.wait_for_selector(".sed-detail .sed-table")
    (base,) = [r for r in all_records(page) if r["kind"] == "base"]
    assert base["test"] == expected_test()
    assert base["rev"] == 1 and base["updated_by"] == "LT"
    detail_rows = page.eval_on_selector_all(".sed-detail .sed-table tbody tr", "rs => rs.length")
    assert detail_rows == 10
    assert "Warning: hydrometer reading 10 at 1440 min: temperature (°C) = 15.5 C is outside 16-30 C" in \
        page.text_content(".sed-detail .sed-findings")
    assert scroll_width(page) <= PHONE["width"]

    # A reload: the record is there, the same, and so is its sheet.
    page.reload()
    page.wait_for_selector("body[data-core-ready]")
    wait_screen(page)
    page.wait_for_selector(".sed-detail .sed-table")
    assert [r for r in all_records(page) if r["kind"] == "base"] == [base]

    # An edit of one temperature is one history line, in words.
    go(page, f"#/base/{base['record_id']}")
    page.fill(reading_field(5, "temperature_c"), "22.5")
    settle(page)
    page.get_by_role("button", name="Save base soil").click()
    page.wait_for_selector("#view[data-screen='record']")
    wait_screen(page)
    history = page.text_content(".history")
    assert "hydrometer reading 6 at 30 min: temperature (°C): 22 → 22.5" in history
    assert "(test.sedimentation.readings[5].temperature_c)" in history
    (base2,) = [r for r in all_records(page) if r["kind"] == "base"]
    assert base2["rev"] == 2 and base2["history"][-1]["changes"] == [
        {"field": "test.sedimentation.readings[5].temperature_c", "old": 22, "new": 22.5}]

    # Export, then import on another phone: the same records, the same sheet on screen.
    go(page, "#/exchange")
    with page.expect_download() as dl:
        page.get_by_role("button", name="Export all records (1)").click()
    text = Path(dl.value.path()).read_bytes().decode("utf-8")
    exported = all_records(page)
    assert text == cpython("records_export_csv", records=[dict(r, exported_at=None) for r in exported], bom=False,
                           context=[])["result"]["csv"]
    other = browser.new_context(viewport=PHONE)
    guard = helpers.RequestGuard(other, site.origin)
    try:
        p2 = other.new_page()
        p2.set_default_timeout(helpers.BOOT_TIMEOUT_MS)
        p2.goto(site.url + "index.html#/exchange")
        p2.wait_for_selector("body[data-core-ready]")
        wait_screen(p2)
        p2.set_input_files("#import-file", files=[{"name": "core.csv", "mimeType": "text/csv", "buffer": text.encode()}])
        p2.get_by_role("button", name="Apply the import").click()
        p2.wait_for_selector(".import-result .ok-line")
        (imported,) = all_records(p2)
        assert imported == dict(exported[0], exported_at=None)
        assert imported["test"]["sedimentation"] == base2["test"]["sedimentation"]
        go(p2, f"#/record/{imported['record_id']}")
        p2.wait_for_selector(".sed-detail .sed-table")
        assert p2.eval_on_selector_all(".sed-detail .sed-table tbody tr", "rs => rs.length") == 10
        assert scroll_width(p2) <= PHONE["width"]
    finally:
        other.close()
    guard.assert_clean()
    assert page.console_errors == []


def sand_test() -> dict:
    return {"sieves": [{"opening_mm": d, "retained_g": num(m)} for d, m in zip(STACK, CLEAN["masses"])],
            "pan_g": num(CLEAN["pan"]), "dry_mass_g": num(CLEAN["dry"]), "washed_dry_mass_g": num(CLEAN["washed"]),
            "plasticity": {"nonplastic": True}}


def test_filter_check_against_the_sheet_equals_the_core_typed_as_percent_finer(phone):
    page = phone
    # The base soil from masses and readings, stored through the API the screens use (the typing of it
    # is the test above); then its twin typed on the screen as percent finer from the reduced sheet.
    combined = cpython("gradation", test=expected_test())["result"]
    page.evaluate("""async (test) => {
      const m = await import('/src/storage/records.js');
      const r = m.blankRecord('base', {meta: {sample_id: 'CORE-7', material: 'clay core'}, test});
      await m.saveRecord(r, {by: 'LT', summary: 'created'});
    }""", expected_test())
    go(page, "#/base")
    page.get_by_label("Sample id").fill("CORE-7P")
    page.get_by_label("Description").fill("clay core, typed as percent finer")
    for i, p in enumerate(combined["points"]):
        page.get_by_role("button", name="Add a size").click()
        page.keyboard.type(repr(p["opening_mm"]))
        page.fill(f"input[data-field='test.passing[{i}].passing_pct']", repr(p["passing_pct"]))
    page.get_by_label("Liquid limit LL (%)").fill(LL)
    page.get_by_label("Plasticity index PI (%)").fill(PI)
    page.get_by_role("radio", name="No", exact=True).check()
    settle(page)
    assert shown_errors(page) == []
    page.get_by_role("button", name="Save base soil").click()
    page.wait_for_selector("#view[data-screen='record']")
    wait_screen(page)
    bases = {r["meta"]["sample_id"]: r for r in all_records(page) if r["kind"] == "base"}
    typed = bases["CORE-7P"]["test"]
    assert "sedimentation" not in typed and len(typed["passing"]) == 18

    # The inspector types the filter sand once and switches the base soil it protects.
    go(page, "#/entry")
    page.get_by_label("Sieve stack").select_option(label=next(
        o for o in page.locator("select option").all_text_contents() if o.startswith("Fine aggregate")))
    page.get_by_role("button", name="Use this stack").click()
    for i, m in enumerate(CLEAN["masses"]):
        page.fill(f"input[data-field='sample.sieves[{i}].retained_g']", m)
    page.fill("input[data-field='sample.pan_g']", CLEAN["pan"])
    page.fill("input[data-field='sample.dry_mass_g']", CLEAN["dry"])
    page.fill("input[data-field='sample.washed_dry_mass_g']", CLEAN["washed"])
    page.get_by_label("Nonplastic").check()
    seen = {}
    for sid, label in (("CORE-7", "CORE-7 · clay core"), ("CORE-7P", "CORE-7P · clay core, typed as percent finer")):
        page.get_by_label("Base soil it protects").select_option(label=label)
        settle(page)
        seen[sid] = {"verdict": page.get_attribute(".verdict-card .verdict", "data-verdict"),
                     "d15": page.text_content(".verdict-card .legend .lg-d15"),
                     # Every check but the lab QA of the masses (a sheet typed as percent finer has none).
                     "checks": page.eval_on_selector_all(".verdict-card li.check", "ns => ns.filter(n => !n.dataset.check.startsWith('qa.'))"
                                                         ".map(n => [n.dataset.check, n.dataset.status, n.querySelector('.reason-line')?.textContent])")}
        # The base curve from the sheet says where its points come from; the typed one has sizes only.
        assert page.locator(".verdict-card .legend .lg-sed").count() == (1 if sid == "CORE-7" else 0)
        assert scroll_width(page) <= PHONE["width"]
    assert seen["CORE-7"] == seen["CORE-7P"]
    assert seen["CORE-7"]["d15"].startswith("D15 window of the filter: ")

    rules = {"criteria": "nrcs-1994"}
    results = {}
    for sid in ("CORE-7", "CORE-7P"):
        mine = in_page(page, "evaluate", {"sample": sand_test(), "base": bases[sid]["test"], "rules": rules})
        oracle = cpython("evaluate", sample=sand_test(), base=bases[sid]["test"], rules=rules)["result"]
        for k in ("base_category", "limits", "verdict"):
            assert mine[k] == oracle[k], (sid, k)
        results[sid] = oracle
        assert page.get_attribute(".verdict-card .verdict", "data-verdict") == oracle["verdict"]
    a, b = results["CORE-7"], results["CORE-7P"]
    assert a["base_category"] == b["base_category"] is not None
    assert a["limits"]["d85b_mm"] == b["limits"]["d85b_mm"] is not None
    assert a["limits"] == b["limits"]
    assert a["verdict"] == b["verdict"]

    # The test screen offers the same sheet for the sample; opened and left empty, it is no input.
    page.locator("form.entry").get_by_role("button", name="Add hydrometer readings").click()
    settle(page)
    assert page.locator("input[data-field='sample.sedimentation.specific_gravity']").count() == 1
    assert shown_errors(page) == []
    assert page.get_attribute(".verdict-card .verdict", "data-verdict") == b["verdict"]
    assert scroll_width(page) <= PHONE["width"]
    # A figure typed on it before any reading is kept through a reload (the draft), and is still no error.
    page.fill("input[data-field='sample.sedimentation.specific_gravity']", "2,66")
    settle(page)
    page.reload()
    page.wait_for_selector("body[data-core-ready]")
    wait_screen(page)
    settle(page)
    assert page.input_value("input[data-field='sample.sedimentation.specific_gravity']") == "2.66"
    assert shown_errors(page) == []
    assert page.get_attribute(".verdict-card .verdict", "data-verdict") == b["verdict"]
    assert page.console_errors == []
