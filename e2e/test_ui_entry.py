"""Entering a test through the UI gives the verdict and D-values CPython computes.

The oracle is ``tamis.api.handle`` on CPython with the same input: the app must
show exactly what the core computes (the UI computes no engineering number).
Invented data (see ``test_ui_common``).
"""

from __future__ import annotations

import re

from test_ui_common import (add_base_soil, add_preset_band, base_test, cpython, enter_sample, go, open_app, save_test,
                            sample_test, settle, SAMPLE_TYPED)


def shown_js_precision3(v: float) -> float:
    """The app shows D-values as Number(v.toPrecision(3)); the same rounding in Python."""
    return float(f"{v:.3g}")


def test_verdict_and_d_values_match_cpython(page, site):
    open_app(page, site)
    add_base_soil(page, "B-1")
    enter_sample(page, base_label="B-1 · silty sand core")
    expected = cpython("evaluate", sample=sample_test(), base=base_test(), rules={"criteria": "nrcs-1994"})["result"]

    # Overall verdict, in the card and in the sticky bar.
    assert page.get_attribute(".verdict-card .verdict", "data-verdict") == expected["verdict"]
    assert page.get_attribute(".verdict-bar", "data-verdict") == expected["verdict"]
    # Every check the core emitted, with its status: the reasons, the passes, then folded those that do
    # not apply and the advisory indicators (the core's order within each group).
    assert shown_checks(page) == ordered_checks(expected)
    pairs = [[c["id"], c["status"]] for c in expected["checks"]]
    assert any(p[1] == "not_applicable" for p in pairs)  # the collapsed list is exercised
    # The caution is shown once, with the verdict, not in the bar; the bar gives the first reason.
    assert page.text_content("#view").count(expected["notice"]) == 1
    assert expected["notice"] not in page.text_content(".verdict-bar")
    reasons = [c for c in expected["checks"] if not c.get("advisory") and c["status"] in ("fail", "needs_data", "warn")]
    if reasons:
        first = page.text_content(".verdict-card .reasons li.check .reason-line")
        assert first.split(": ", 1)[1] in page.text_content(".bar-reason")

    # D-values of the sample, as displayed (rounded for display only).
    for key, value in expected["sample"]["d_mm"].items():
        text = page.text_content(f"tr[data-dvalue='{key}'] td")
        if value is None:
            assert text == "—", key
        else:
            assert float(text.replace(" mm", "")) == shown_js_precision3(value), key
    assert float(page.text_content("td[data-key='cu']")) == shown_js_precision3(expected["sample"]["cu"])
    assert page.text_content("td[data-key='uscs']").startswith(expected["sample"]["uscs"]["symbol"])

    # Percent passing and cumulative retained beside each sieve come from the core's table.
    table = cpython("gradation", test=sample_test())["result"]["table"]
    for d, _ in SAMPLE_TYPED:
        row = next(r for r in table if r["opening_mm"] == d)
        passing = float(page.text_content(f"tr[data-opening='{d}'] .pass"))
        assert abs(passing - row["passing_pct"]) <= 0.05 + 1e-9, d
        cum = float(page.text_content(f"tr[data-opening='{d}'] .cum"))
        assert abs(cum - row["cum_retained_pct"]) <= 0.05 + 1e-9, d

    # The chart is drawn from the same points: one mark per sample point.
    assert page.locator("svg.chart .sample-curve circle").count() == len(expected["sample"]["points"])
    assert page.locator("svg.chart .base-curve rect").count() == len(expected["base"]["points"])
    assert page.console_errors == []


def test_core_error_is_shown_next_to_its_field(page, site):
    """A mass that makes the cumulative exceed the dry mass: the core names the field, the UI marks it."""
    open_app(page, site)
    enter_sample(page)
    page.fill("input[data-field='sample.dry_mass_g']", "100")
    page.wait_for_timeout(50)
    page.wait_for_selector("#view:not([data-busy])")
    t = sample_test()
    t["dry_mass_g"] = 100.0
    t.pop("washed_dry_mass_g")
    page.fill("input[data-field='sample.washed_dry_mass_g']", "")
    page.wait_for_timeout(50)
    page.wait_for_selector("#view:not([data-busy])")
    from tamis.api import handle
    import json
    resp = json.loads(handle(json.dumps({"op": "evaluate", "sample": t, "rules": {"criteria": "nrcs-1994"}})))
    assert resp["ok"] is False
    field = resp["error"]["field"]
    marked = page.locator(f"[data-field='{field}']")
    assert marked.get_attribute("aria-invalid") == "true"
    # In plain words: the path stays in data-field, the message names the field as the screen does.
    shown = page.text_content(".core-field-error")
    assert field not in shown
    assert resp["error"]["message"].split(": ", 1)[1] in shown
    assert page.get_attribute(".verdict-bar", "data-verdict") == "none"


#: An invented delivery ticket: percent passing at a few sizes.
SPOT = [(9.5, "100"), (4.75, "97,5"), (1.18, "60"), (0.3, "16"), (0.075, "2,5")]


def test_spot_check_gives_cpython_verdict_and_saves_as_a_record(page, site):
    open_app(page, site)
    add_base_soil(page, "B-9")
    go(page, "#/quick")
    page.get_by_label("Stored base soil").select_option(label="B-9 · silty sand core")
    for i, (d, p) in enumerate(SPOT):
        if i >= 3:
            page.get_by_role("button", name="Add a size").click()
        page.fill(f"input[data-field='sample.passing[{i}].opening_mm']", str(d))
        page.fill(f"input[data-field='sample.passing[{i}].passing_pct']", p)
    settle(page)
    sample = {"passing": [{"opening_mm": d, "passing_pct": float(p.replace(",", "."))} for d, p in SPOT]}
    expected = cpython("evaluate", sample=sample, base=base_test(), rules={"criteria": "nrcs-1994"})["result"]
    assert page.get_attribute(".verdict-card .verdict", "data-verdict") == expected["verdict"]
    shown = dict(page.eval_on_selector_all(".verdict-card li.check", "els => els.map(e => [e.dataset.check, e.dataset.status])"))
    for cid in ("filter.retention", "filter.permeability"):
        assert shown[cid] == next(c["status"] for c in expected["checks"] if c["id"] == cid)
    assert page.text_content("#view").count(expected["notice"]) == 1  # once on the screen
    assert shown_checks(page) == ordered_checks(expected)  # the other checks as the core reports them

    page.get_by_role("button", name="Save as a test record").click()
    page.wait_for_selector("#view[data-screen='entry']")
    settle(page)
    assert page.get_attribute(".verdict-bar", "data-verdict") == expected["verdict"]
    save_test(page)
    page.wait_for_selector("#view[data-screen='record']")
    rid = page.get_attribute(".detail", "data-id")
    rec = page.evaluate("async (id) => (await import('/src/storage/records.js')).getRecord(id)", rid)
    assert rec["test"] == sample and rec["meta"]["base_id"]


def ordered_checks(result: dict) -> list:
    """The core's checks as the verdict block lists them, the core's order kept within each group: what fails,
    then what needs data, then warnings (the reasons, under the verdict); the passes; those that do not apply
    (folded); the advisory indicators (folded)."""
    counted = [c for c in result["checks"] if not c.get("advisory")]
    groups = [[c for c in counted if c["status"] == s] for s in ("fail", "needs_data", "warn", "pass", "not_applicable")]
    groups.append([c for c in result["checks"] if c.get("advisory")])
    return [[c["id"], c["status"]] for g in groups for c in g]


def shown_checks(page) -> list:
    return page.eval_on_selector_all(".verdict-card li.check", "els => els.map(e => [e.dataset.check, e.dataset.status])")


def headline(page) -> dict:
    return dict(page.eval_on_selector_all(".headline li.check", "els => els.map(e => [e.dataset.check, e.dataset.status])"))


def sample_checks(result: dict) -> dict:
    return {c["id"]: c["status"] for c in result["checks"] if c.get("subject", "sample") == "sample"}


def test_spot_check_from_d_values_matches_cpython_and_saves(page, site):
    """A supplier's D-values and a base soil typed from its lab sheet, no stored record (invented figures).

    Terzaghi's ratios need only the base's D15 and D85; the NRCS 1994 set needs its percent passing
    4.75 mm and 0.075 mm for the category, and says "needs data" without them.
    """
    open_app(page, site)
    go(page, "#/quick")
    page.get_by_label("Filter criteria").select_option("terzaghi")
    assert page.get_by_label("Its figures, typed here").is_checked()  # no stored base soil on this device
    page.fill("input[data-field='base.d_mm.D15']", "0,01")
    page.fill("input[data-field='base.d_mm.D85']", "0.08")
    # The base's category sizes are in view, filled with their size and no percent, and not sent.
    sizes = page.eval_on_selector_all(".typed-base input[aria-label^='Size']", "els => els.map(e => e.value)")
    assert sizes[:2] == ["4.75", "0.075"]
    page.get_by_label("D-values (supplier's sheet)").check()
    page.fill("input[data-field='sample.d_mm.D15']", "0,3")
    page.fill("input[data-field='sample.d_mm.D60']", "1,1")
    page.fill("input[data-field='sample.d_mm.D85']", "2")
    page.fill("input[data-field='sample.passing[0].passing_pct']", "3")
    settle(page)
    sample = {"d_mm": {"D15": 0.3, "D60": 1.1, "D85": 2.0}, "passing": [{"opening_mm": 0.075, "passing_pct": 3.0}]}
    base = {"d_mm": {"D15": 0.01, "D85": 0.08}}
    expected = cpython("evaluate", sample=sample, base=base, rules={"criteria": "terzaghi"})["result"]
    assert page.get_attribute(".verdict-card .verdict", "data-verdict") == expected["verdict"]
    assert shown_checks(page) == ordered_checks(expected)
    want = sample_checks(expected)
    assert headline(page) == {k: want[k] for k in ("filter.retention", "filter.permeability")}
    assert want["filter.retention"] == "pass" and want["filter.permeability"] == "pass"  # 0.3/0.08 = 3.75 <= 4
    assert page.text_content("#view").count(expected["notice"]) == 1

    # NRCS 1994 without the base's category sizes: the core says what it needs, the screen shows it.
    page.get_by_label("Filter criteria").select_option("nrcs-1994")
    settle(page)
    expected = cpython("evaluate", sample=sample, base=base, rules={"criteria": "nrcs-1994"})["result"]
    assert sample_checks(expected)["filter.retention"] == "needs_data"
    assert headline(page)["filter.retention"] == "needs_data"
    assert shown_checks(page) == ordered_checks(expected)
    # With them (100 % passing 4.75 mm, 80 % passing 0.075 mm): category 2 (40 to 85 % fines), D15F <= 0.7 mm
    # (NRCS NEH 633 Ch. 26, 1994, table of criteria; from memory).
    page.fill(".typed-base input[aria-label='Passing at size 1, percent']", "100")
    page.fill(".typed-base input[aria-label='Passing at size 2, percent']", "80")
    settle(page)
    base = {"d_mm": {"D15": 0.01, "D85": 0.08},
            "passing": [{"opening_mm": 4.75, "passing_pct": 100.0}, {"opening_mm": 0.075, "passing_pct": 80.0}]}
    expected = cpython("evaluate", sample=sample, base=base, rules={"criteria": "nrcs-1994"})["result"]
    assert expected["base_category"] == 2 and expected["limits"]["d15_max_mm"] == 0.7
    assert page.get_attribute(".verdict-card .verdict", "data-verdict") == expected["verdict"]
    assert shown_checks(page) == ordered_checks(expected)
    assert headline(page)["filter.retention"] == sample_checks(expected)["filter.retention"] == "pass"

    # Saved as a record: the typed base soil becomes a base record the test points to.
    page.get_by_role("button", name="Save as a test record").click()
    page.wait_for_selector("#view[data-screen='entry']")
    settle(page)
    assert page.get_attribute(".verdict-bar", "data-verdict") == expected["verdict"]
    assert page.get_by_label("D-values (supplier's sheet)").is_checked()
    save_test(page)
    page.wait_for_selector("#view[data-screen='record']")
    rid = page.get_attribute(".detail", "data-id")
    rec = page.evaluate("async (id) => (await import('/src/storage/records.js')).getRecord(id)", rid)
    assert rec["test"] == sample
    stored_base = page.evaluate("async (id) => (await import('/src/storage/records.js')).getRecord(id)",
                                rec["meta"]["base_id"])
    assert stored_base["kind"] == "base" and stored_base["test"] == base
    page.wait_for_selector(".detail .verdict-card .verdict")
    assert page.get_attribute(".detail .verdict-card .verdict", "data-verdict") == expected["verdict"]


def test_size_axis_direction_is_a_setting(page, site):
    """Coarse-left (default) puts the largest sieve left of the finest; fine-left mirrors it."""
    open_app(page, site)
    enter_sample(page)

    def xs():
        return page.eval_on_selector_all("svg.chart .sample-curve circle", "cs => cs.map(c => Number(c.getAttribute('cx')))")

    coarse_left = xs()  # points come coarsest first
    assert coarse_left[0] < coarse_left[-1]
    go(page, "#/settings")
    page.get_by_label("Size axis of the chart").select_option("fine-left")
    go(page, "#/entry")
    settle(page)
    fine_left = xs()
    assert fine_left[0] > fine_left[-1]
    assert page.text_content("svg.chart desc").count("fine sizes on the left") == 1


def test_band_copied_from_the_core_examples_is_checked_like_cpython(page, site):
    open_app(page, site)
    fine = add_preset_band(page, "astm-c33-fine")
    enter_sample(page)
    page.get_by_label("Specification band").select_option(label=fine["name"])
    settle(page)
    band = {"name": fine["name"], "limits": [{k: l[k] for k in ("opening_mm", "min_pct", "max_pct")} for l in fine["limits"]]}
    expected = cpython("evaluate", sample=sample_test(), band=band, rules={"criteria": "nrcs-1994"})["result"]
    want = next(c for c in expected["checks"] if c["id"] == "band.compliance")
    shown = page.get_attribute(".verdict-card li.check[data-check='band.compliance']", "data-status")
    assert shown == want["status"]
    assert page.get_attribute(".verdict-card .verdict", "data-verdict") == expected["verdict"]
    assert page.locator("svg.chart .band-area").count() == 1
    assert_band_rows_shown(page, want)
    # 100 % passing 3/8 in against a band of 100 to 100 %: the smallest margin is 0 points there, which tells
    # nothing; the line names the nearest limit among the sieves whose band is a range.
    assert want["value"] == 0.0
    ranged = [(m, r["label"]) for r in want["sieves"] if r["min_pct"] != r["max_pct"]
              for m in (r["margin_min_pct"], r["margin_max_pct"]) if m is not None]
    text = page.text_content(BAND_CHECK + " .check-values")
    assert text.startswith(f"Nearest a band limit: {min(ranged)[1]}, ") and "3/8 in" not in text
    assert "must be" not in page.text_content(BAND_CHECK)  # not "0 % (must be ≥ 0 %)"

    # 17.6 g moved from No. 8 to No. 4: the sample leaves the band at No. 4; the failing sieve is named.
    page.fill("input[data-field='sample.sieves[1].retained_g']", "30")
    page.fill("input[data-field='sample.sieves[2].retained_g']", "62,4")
    settle(page)
    t = sample_test()
    t["sieves"][1]["retained_g"] = 30.0
    t["sieves"][2]["retained_g"] = 62.4
    want = next(c for c in cpython("evaluate", sample=t, band=band, rules={"criteria": "nrcs-1994"})["result"]["checks"]
                if c["id"] == "band.compliance")
    assert want["status"] == "fail"
    assert_band_rows_shown(page, want)
    worst = next(r for r in want["sieves"] if want["value"] in (r["margin_min_pct"], r["margin_max_pct"]))
    text = page.text_content(BAND_CHECK + " .check-values")
    assert text.startswith(f"Worst sieve: {worst['label']}, ")
    shown_pts = float(re.search(r", ([0-9.]+) percentage points", text).group(1))
    assert shown_pts == float(f"{abs(want['value']):.3g}")  # rounded for display only
    failing = [r["label"] for r in want["sieves"] if r["status"] == "fail"]
    shown_failing = page.eval_on_selector_all(BAND_CHECK + " .band-rows tr.status-fail",
                                              "rs => rs.map(r => [r.cells[0].textContent, r.cells[3].textContent])")
    assert [label for label, _ in shown_failing] == failing
    assert all(word.endswith("OUTSIDE") for _, word in shown_failing)


BAND_CHECK = ".verdict-card li.check[data-check='band.compliance']"


def assert_band_rows_shown(page, check: dict) -> None:
    """The band check's table: one row per band sieve, with the core's status, in the core's order."""
    rows = page.eval_on_selector_all(BAND_CHECK + " .band-rows tbody tr",
                                     "rs => rs.map(r => [Number(r.dataset.opening), r.dataset.status])")
    assert rows == [[r["opening_mm"], r["status"]] for r in check["sieves"]]


def test_value_and_limit_never_read_as_equal_when_they_differ(page, site):
    """Display only: a value that rounds to its limit is shown in full; the relation reads as the requirement."""
    open_app(page, site)
    shown = page.evaluate("""async () => {
        const v = await import('/src/ui/verdict.js');
        return [v.valueVsLimit({value: 0.7004, limit: 0.7, unit: 'mm', relation: '<='}),
                v.valueVsLimit({value: 0.7419, limit: 0.7, unit: 'mm', relation: '<='}),
                v.valueVsLimit({value: 0.652, limit: 1, unit: '-', relation: '<='})];
    }""")
    assert shown == ["0.7004 mm (must be ≤ 0.7 mm)", "0.742 mm (must be ≤ 0.7 mm)", "0.652 (must be ≤ 1)"]


def test_spot_check_does_not_store_a_base_soil_the_core_refuses(page, site):
    """One D-value is one point, not a curve: the core refuses it, the screen says so beside the field,
    and "Save as a test record" stores nothing."""
    open_app(page, site)
    go(page, "#/quick")
    page.fill("input[data-field='base.d_mm.D15']", "0,01")
    for i, (d, p) in enumerate(SPOT[:3]):
        page.fill(f"input[data-field='sample.passing[{i}].opening_mm']", str(d))
        page.fill(f"input[data-field='sample.passing[{i}].passing_pct']", p)
    settle(page)
    resp = cpython_error("evaluate", sample={"passing": [{"opening_mm": d, "passing_pct": float(p.replace(",", "."))}
                                                         for d, p in SPOT[:3]]},
                         base={"d_mm": {"D15": 0.01}}, rules={"criteria": "nrcs-1994"})
    # In plain words (the field's path stays in data-field, not in the message).
    path, rest = resp["error"]["message"].split(" ", 1)
    assert rest in page.text_content("#view") and path not in page.text_content("#view")
    page.get_by_role("button", name="Save as a test record").click()
    page.get_by_text("Not saved: the base soil's figures are refused").wait_for()
    assert page.evaluate("async () => (await import('/src/storage/records.js')).listRecords()") == []


def cpython_error(op: str, **fields) -> dict:
    import json
    from tamis.api import handle
    resp = json.loads(handle(json.dumps({"schema": 1, "op": op, "id": 1, **fields})))
    assert resp["ok"] is False, resp
    return resp
