"""Lots on a 360 px phone: the demo's lot L11 with its fines creep warning and trend chart, lot L12 behind on
testing shown as due on the Records screen, a test linked to its lot, the lot editor (a mistyped quantity
corrected, the page reloaded), and the same figures in the app as in ``python -m tamis lots`` for the demo.

The figures compared are the CLI's own output (``--json`` for the numbers, formatted by the CLI's display
functions, and the text lines), so the app and the office tool are held to one answer.
"""

from __future__ import annotations

import json
import subprocess
import sys
from datetime import datetime, timezone
from pathlib import Path

import pytest

import helpers
from test_demo_screens import open_demo
from test_ui_a11y import assert_no_violations, targets_too_small
from test_ui_common import go, wait_screen
from tamis.exchange import lots_office as cli

ROOT = Path(__file__).resolve().parent.parent
DEMO_CSV = ROOT / "demo_data" / "demo_project.csv"


@pytest.fixture
def phone(browser, site):
    context = browser.new_context(viewport={"width": 360, "height": 740})
    context.guard = helpers.RequestGuard(context, site.origin)
    page = context.new_page()
    page.set_default_timeout(helpers.BOOT_TIMEOUT_MS)
    errors = []
    page.on("pageerror", lambda err: errors.append(f"pageerror: {err}"))
    yield page
    context.close()
    context.guard.assert_clean()
    assert errors == []


def office_lots() -> dict:
    today = datetime.now(timezone.utc).strftime("%Y-%m-%d")
    js = subprocess.run([sys.executable, "-m", "tamis", "lots", str(DEMO_CSV), "--json", "--as-of", today],
                        capture_output=True, text=True, cwd=ROOT, check=True)
    txt = subprocess.run([sys.executable, "-m", "tamis", "lots", str(DEMO_CSV), "--as-of", today],
                         capture_output=True, text=True, cwd=ROOT, check=True)
    return {"result": json.loads(js.stdout)["result"], "text": txt.stdout}


def open_lot(page, code: str) -> None:
    go(page, "#/lots")
    page.locator(f"#view .lot-list li[data-lot='{code}'] a").click()
    page.wait_for_selector(f"#view .lot-page[data-lot='{code}']")
    wait_screen(page)


def test_lot_l11_creep_and_chart_and_l12_due_on_records(phone, site):
    page = phone
    open_demo(page, site)

    # Records: lot L12 (testing fell behind) is flagged, with what is missing; the others are not.
    go(page, "#/records")
    warn = page.locator("#view .lot-due-warning")
    warn.locator("li[data-lot='L12']").wait_for()
    assert warn.locator("li").count() == 1
    assert warn.locator("li[data-lot='L12']").get_attribute("data-status") == "overdue"
    text = warn.inner_text()
    assert "Lot L12" in text and "6 tests needed" in text and "2026-10-06" in text

    # The inspector follows the warning's link, then opens lot L11 from the list of lots.
    warn.get_by_role("link", name="Open lot L12").click()
    page.wait_for_selector("#view .lot-page[data-lot='L12'][data-status='overdue']")
    open_lot(page, "L11")
    creep = page.locator("#view .lot-warnings li[data-code='creep']")
    assert "Fines creep" in creep.inner_text() and "compacted" in creep.inner_text()
    chart = page.locator("#view svg.trend-chart")
    chart.wait_for()
    box = chart.bounding_box()
    assert box["width"] <= 360 and box["x"] >= 0
    points = page.eval_on_selector_all("#view svg.trend-chart .trend-point",
                                       "(gs) => gs.map((g) => [g.dataset.sample, g.dataset.failed])")
    assert points == [["Q-L11-SP", "0"], ["Q-L11-DL", "0"], ["Q-L11-CP", "1"]]
    assert page.locator("#view svg.trend-chart .trend-limit").count() == 1  # the 5 % fines limit
    # the chart follows the measure chosen: D15 against D15F max and min
    page.get_by_label("Show").select_option("d15_mm")
    assert page.locator("#view svg.trend-chart .trend-limit").count() == 2
    assert page.evaluate("() => document.documentElement.scrollWidth") <= 360
    pwl_n = page.locator("#view .lot-pwl-table tr[data-measure='fines_pct'] td").first.inner_text()
    assert pwl_n == "2"  # the sample size is shown beside the (not estimated) PWL

    # From a test to its lot.
    page.locator("#view .lot-tests tr[data-sample='Q-L11-CP'] a").click()
    page.wait_for_selector("#view[data-screen='record'] .lot-link")
    assert "represents 140 m³" in page.locator("#view .lot-link").inner_text()
    page.locator("#view .lot-link a").click()
    page.wait_for_selector("#view .lot-page[data-lot='L11']")


def test_app_and_cli_show_the_same_figures_for_the_demo(phone, site):
    page = phone
    office = office_lots()
    open_demo(page, site)
    go(page, "#/lots")
    listed = page.eval_on_selector_all("#view .lot-list li", "(ls) => ls.map((l) => [l.dataset.lot, l.dataset.status])")
    assert listed == [[lot["lot"], lot["frequency"]["status"]] for lot in office["result"]["lots"]]
    materials = page.eval_on_selector_all("#view .lot-materials .material-line", "(ls) => ls.map((l) => l.textContent)")
    assert materials == [cli.material_line(m) for m in office["result"]["materials"]]
    assert all(line in office["text"] for line in materials)
    n = office["result"]["unassigned_tests"]
    assert f"; {n} tests in no lot." in page.locator("#view .screen > p[role='status']").inner_text()
    assert f", {n} tests in no lot." in office["text"].splitlines()[0]
    for lot in office["result"]["lots"]:
        open_lot(page, lot["lot"])
        rows = page.eval_on_selector_all("#view .lot-tests tbody tr", """(trs) => trs.map((tr) =>
            [...tr.children].map((c) => c.querySelector('a') ? c.querySelector('a').textContent : c.textContent))""")
        want = [[str(i + 1), t["sample_id"], (t["sampled_at"] or "")[:10], cli.STAGE_WORDS[t["stage"]],
                 cli.pct(t["fines_pct"]), cli.mm(t["d15_mm"]), cli.mm(t["d85_mm"]), cli.num2(t["cu"]),
                 (f"✗ {t['verdict']}" if t["failed"] else t["verdict"])] for i, t in enumerate(lot["tests"])]
        assert rows == want, lot["lot"]
        for t in lot["tests"]:  # the CLI's text line of each test holds the same figures
            line = next(x for x in office["text"].splitlines() if x.strip().startswith(t["sample_id"] + " "))
            words = [w for w in line.replace("(not counted)", "").split() if w != "*"]
            assert words[-5:] == [cli.pct(t["fines_pct"]), cli.mm(t["d15_mm"]), cli.mm(t["d85_mm"]),
                                  cli.num2(t["cu"]), t["verdict"]], line
        pwl = page.eval_on_selector_all("#view .lot-pwl-table tbody tr",
                                        "(trs) => trs.map((tr) => [...tr.children].map((c) => c.textContent))")
        want_pwl = [[p["label"], str(p["n"])] + ([p["note"]] if p["pwl_pct"] is None else
                    [cli.num2(p["mean"]), cli.num2(p["sd"]),
                     f"{cli.pct(p['lower']) if p['lower'] is not None else ''}–"
                     f"{cli.pct(p['upper']) if p['upper'] is not None else ''}", cli.pct(p["pwl_pct"])])
                    for p in lot["pwl"]]
        assert pwl == want_pwl, lot["lot"]
        f = lot["frequency"]
        quantity = page.locator("#view .lot-quantity").inner_text()
        assert f"Placed {cli.qty(lot['placed_quantity'])} " in quantity
        assert f"tests counted {f['tests_counted']}" in quantity
        if f["tests_required"] is not None:
            assert f"tests counted {f['tests_counted']}, {f['tests_required']} needed" in quantity
        assert page.get_attribute("#view .lot-page", "data-status") == f["status"]
        shown = page.eval_on_selector_all("#view .lot-warnings li", "(ls) => ls.map((l) => l.textContent)")
        assert shown == [w["message"] for w in lot["warnings"]]
        for w in lot["warnings"]:
            assert f"WARNING: {w['message']}" in office["text"]


def test_lot_editor_mistyped_placement_corrected_and_kept_after_reload(phone, site):
    page = phone
    open_demo(page, site)
    open_lot(page, "L12")
    before = page.locator("#view .lot-quantity").inner_text()
    assert "Placed 770 m3" in before.replace("m³", "m3")
    page.get_by_role("link", name="Edit the lot").click()
    page.wait_for_selector("#view .lot-editor")
    page.get_by_role("button", name="Add a day's placement").click()
    qty = page.get_by_label("Quantity placed").last
    qty.fill("12O")  # a letter O typed for a zero
    page.get_by_role("button", name="Save the lot").click()
    page.wait_for_selector("#view .lot-editor .core-error:has-text('Type a number')")
    qty.fill("120")
    page.get_by_label("Day placed").last.fill("2026-10-14")
    page.get_by_role("button", name="Save the lot").click()
    # the first save on this device asks who is saving, once
    page.get_by_label("Your name or initials").fill("R. Okafor")
    page.get_by_role("button", name="Save with this name").click()
    page.wait_for_selector("#view .lot-page[data-lot='L12']")
    wait_screen(page)
    assert "Placed 890 " in page.locator("#view .lot-quantity").inner_text()
    page.reload()
    page.wait_for_selector("body[data-core-ready]")
    page.wait_for_selector("#view .lot-page[data-lot='L12']")
    wait_screen(page)
    text = page.locator("#view .lot-frequency").inner_text()
    assert "Placed 890 " in text and ", 6 needed" in text  # ceil(890 / 150) = 6, still 2 done
    assert "2026-10-14" in text  # the new day has no test either


def test_lot_screens_pass_axe_and_have_large_targets_at_360(phone, site):
    page = phone
    open_demo(page, site)
    go(page, "#/lots")
    page.wait_for_selector("#view .lot-materials:not([hidden])")
    assert_no_violations(page, "lots")
    assert targets_too_small(page) == []
    open_lot(page, "L11")
    assert_no_violations(page, "lot L11")
    assert targets_too_small(page) == []
    page.get_by_role("link", name="Edit the lot").click()
    page.wait_for_selector("#view .lot-editor")
    assert_no_violations(page, "lot editor")
    assert targets_too_small(page) == []
    assert page.evaluate("() => document.documentElement.scrollWidth") <= 360


def test_a_missing_test_taken_for_lot_l12_counts_toward_it(phone, site):
    """The inspector sees L12 behind, sieves a sample of it, gives the lot, the quantity (a slip corrected)
    and the ticket in the test's details, saves, and the lot counts one test more."""
    from test_ui_common import enter_sample, save_test

    page = phone
    open_demo(page, site)
    # an existing test shows its lot, quantity and ticket in the editor
    open_lot(page, "L12")
    assert "tests counted 2, 6 needed" in page.locator("#view .lot-quantity").inner_text()
    page.locator("#view .lot-tests tr[data-sample='Q-1005-1'] a").click()
    page.wait_for_selector("#view[data-screen='record']")
    page.get_by_role("link", name="Edit").click()
    page.wait_for_selector("#view[data-screen='entry']")
    page.locator("summary", has_text="Sample details").click()
    assert page.get_by_label("Lot", exact=True).locator("option:checked").inner_text().startswith("Lot L12")
    assert page.get_by_label("Quantity it represents").input_value() == "150"
    assert page.get_by_label("Delivery ticket or truck").input_value() == "QB-40502"

    enter_sample(page)  # a new test, typed from the balance
    page.locator("summary", has_text="Sample details").click()
    page.get_by_label("Lot", exact=True).select_option(label="Lot L12 · Zone 2 fine filter sand")
    page.get_by_label("Sampling point").select_option("delivery")
    qty = page.get_by_label("Quantity it represents")
    qty.fill("14O")
    assert "Type a number" in page.locator(f"#{qty.get_attribute('id')}-err").inner_text()
    qty.fill("140")
    page.get_by_label("Delivery ticket or truck").fill("QB-40611")
    save_test(page)
    page.wait_for_selector("#view[data-screen='record'] .lot-link")
    assert "represents 140 m³ · ticket QB-40611" in page.locator("#view .lot-link").inner_text()
    page.locator("#view .lot-link a").click()
    page.wait_for_selector("#view .lot-page[data-lot='L12']")
    wait_screen(page)
    assert "tests counted 3, 6 needed" in page.locator("#view .lot-quantity").inner_text()
    assert page.get_attribute("#view .lot-page", "data-status") == "overdue"  # still 3 short
