"""Entering a test through the UI gives the verdict and D-values CPython computes.

The oracle is ``tamis.api.handle`` on CPython with the same input: the app must
show exactly what the core computes (the UI computes no engineering number).
Invented data (see ``test_ui_common``).
"""

from __future__ import annotations

from test_ui_common import (add_base_soil, base_test, cpython, enter_sample, go, open_app, sample_test, settle,
                            SAMPLE_TYPED)


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
    # Every check the core emitted, with its status, in the core's order; those that
    # do not apply are listed last, in a collapsed list.
    shown = page.eval_on_selector_all(".verdict-card li.check", "els => els.map(e => [e.dataset.check, e.dataset.status])")
    pairs = [[c["id"], c["status"]] for c in expected["checks"]]
    assert shown == [p for p in pairs if p[1] != "not_applicable"] + [p for p in pairs if p[1] == "not_applicable"]
    assert any(p[1] == "not_applicable" for p in pairs)  # the collapsed list is exercised
    # The caution is shown with the verdict.
    assert expected["notice"] in page.text_content(".verdict-card")
    assert expected["notice"] in page.text_content(".verdict-bar")

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
    assert resp["error"]["message"] in page.text_content(".core-field-error")
    assert page.get_attribute(".verdict-bar", "data-verdict") == "none"


#: An invented delivery ticket: percent passing at a few sizes.
SPOT = [(9.5, "100"), (4.75, "97,5"), (1.18, "60"), (0.3, "16"), (0.075, "2,5")]


def test_spot_check_gives_cpython_verdict_and_saves_as_a_record(page, site):
    open_app(page, site)
    add_base_soil(page, "B-9")
    go(page, "#/quick")
    page.get_by_label("Base soil").select_option(label="B-9 · silty sand core")
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
    assert expected["notice"] in page.text_content(".verdict-card")

    page.get_by_role("button", name="Save as a test record").click()
    page.wait_for_selector("#view[data-screen='entry']")
    settle(page)
    assert page.get_attribute(".verdict-bar", "data-verdict") == expected["verdict"]
    page.get_by_role("button", name="Save test").click()
    page.wait_for_selector("#view[data-screen='record']")
    rid = page.get_attribute(".detail", "data-id")
    rec = page.evaluate("async (id) => (await import('/src/storage/records.js')).getRecord(id)", rid)
    assert rec["test"] == sample and rec["meta"]["base_id"]


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
    go(page, "#/refs")
    presets = cpython("band_presets")["result"]["presets"]
    fine = next(p for p in presets if p["id"] == "astm-c33-fine")
    page.get_by_label("Band from the core's examples").select_option(label=fine["name"])
    page.get_by_role("button", name="Copy into a new band").click()
    page.wait_for_selector("#view[data-screen='band']")
    page.get_by_role("button", name="Save band").click()
    page.wait_for_selector("#view[data-screen='record']")
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
