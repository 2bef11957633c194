"""An inspector on a 360 x 780 phone, in both themes: a delivery of fine filter sand typed from the
masses on the sieves, checked against a silty clay core, reaches a clean verdict; the same sand with
8.9 % fines shows why it fails in the first screen of the result and in the bottom bar; untouched
cells and an empty row show no error; nothing is wider than the screen; a mistyped mass is corrected.

The figures are an invented scenario of our own (a realistic fine filter sand and clay core, not a
real project). The oracle is CPython's ``tamis.api.handle`` with the same input: the screens must show
the verdict the core computes; the UI computes no engineering number. Criteria: the default rule set
(NRCS NEH 633 Ch. 26, 1994); the fines limit is its design step 8 (at most 5 % passing 0.075 mm).
"""

from __future__ import annotations

import pytest

from test_ui_common import PHONE, cpython, go, phone_session, scroll_width, settle, shown_errors, wait_screen


#: The silty clay core: percent passing from its laboratory sheet, hydrometer points down to 0.002 mm.
CORE_PASSING = [(4.75, 100), (2, 99), (0.425, 96), (0.075, 88), (0.02, 60), (0.005, 38), (0.002, 24)]
CORE_LL, CORE_PI = 38, 18
#: The core's "Fine aggregate" stack, opening [mm] in the order shown.
STACK = [9.5, 4.75, 2.36, 1.18, 0.6, 0.3, 0.15, 0.075]
#: A clean fine filter sand: grams retained on each sieve, pan, dry mass before and after washing
#: (about 1.9 % fines, D15 about 0.32 mm; mass check after sieving 0.02 %).
CLEAN = {"masses": ["0", "18,4", "91.9", "147", "153.1", "122.5", "55.1", "12.9"], "pan": "0.8", "dry": "612.4",
         "washed": "601.6"}
#: The same sand with more silt: 8.9 % passing 0.075 mm.
DIRTY = {"masses": ["0", "17.1", "85.6", "136.9", "142.6", "114.1", "51.3", "10.3"], "pan": "0.9", "dry": "612.4",
         "washed": "559.1"}


def num(text: str) -> float:
    return float(text.replace(",", "."))


def core_test() -> dict:
    return {"passing": [{"opening_mm": float(d), "passing_pct": float(p)} for d, p in CORE_PASSING],
            "plasticity": {"liquid_limit": float(CORE_LL), "plasticity_index": float(CORE_PI)}, "dispersive": False}


def sand_test(s: dict) -> dict:
    return {"sieves": [{"opening_mm": d, "retained_g": num(m)} for d, m in zip(STACK, s["masses"])],
            "pan_g": num(s["pan"]), "dry_mass_g": num(s["dry"]), "washed_dry_mass_g": num(s["washed"]),
            "plasticity": {"nonplastic": True}}


@pytest.fixture(params=["standard", "sunlight"])
def phone(request, browser, site):
    yield from phone_session(browser, site, request.param)


def add_clay_core(page) -> None:
    go(page, "#/base")
    page.get_by_label("Sample id").fill("B-CORE")
    page.get_by_label("Description").fill("silty clay core")
    for i, (d, p) in enumerate(CORE_PASSING):
        page.get_by_role("button", name="Add a size").click()
        # The new row's size field has the focus.
        assert page.evaluate("() => document.activeElement.dataset.field") == f"test.passing[{i}].opening_mm"
        page.keyboard.type(str(d))
        page.fill(f"input[data-field='test.passing[{i}].passing_pct']", str(p))
    page.get_by_label("Liquid limit LL (%)").fill(str(CORE_LL))
    page.get_by_label("Plasticity index PI (%)").fill(str(CORE_PI))
    page.get_by_role("radio", name="No", exact=True).check()
    page.get_by_role("button", name="Save base soil").click()
    page.wait_for_selector("#view[data-screen='record']")
    wait_screen(page)
    assert "LL 38 %, PI 18 %; not dispersive" in page.text_content(".fines-line")


def start_test(page) -> None:
    go(page, "#/entry")
    page.get_by_label("Base soil it protects").select_option(label="B-CORE · silty clay core")
    page.get_by_label("Sieve stack").select_option(label=next(
        o for o in page.locator("select option").all_text_contents() if o.startswith("Fine aggregate")))
    page.get_by_role("button", name="Use this stack").click()
    settle(page)


def type_sand(page, s: dict) -> None:
    for i, m in enumerate(s["masses"]):
        page.fill(f"input[data-field='sample.sieves[{i}].retained_g']", m)
    page.fill("input[data-field='sample.pan_g']", s["pan"])
    page.fill("input[data-field='sample.dry_mass_g']", s["dry"])
    page.fill("input[data-field='sample.washed_dry_mass_g']", s["washed"])
    settle(page)


def expected(s: dict) -> dict:
    return cpython("evaluate", sample=sand_test(s), base=core_test(), rules={"criteria": "nrcs-1994"})["result"]


def test_clean_sand_on_a_clay_core_typed_from_masses_is_accepted(phone):
    page = phone
    add_clay_core(page)
    start_test(page)
    # Untouched cells and the empty rows of a fresh stack: no error, nothing wider than the screen.
    assert shown_errors(page) == []
    assert scroll_width(page) <= PHONE["width"]
    # Sieve labels give the designation and the opening.
    assert page.text_content("tr[data-opening='1.18'] th") == "No. 16 · 1.18 mm"

    type_sand(page, CLEAN)
    page.get_by_label("Nonplastic").check()
    settle(page)
    want = expected(CLEAN)
    assert want["verdict"] == "accept"  # the case: the permeability floor decides
    assert page.get_attribute(".verdict-card .verdict", "data-verdict") == "accept"
    assert page.get_attribute(".verdict-bar", "data-verdict") == "accept"
    assert "Meets the checks" in page.text_content(".bar-verdict")
    perm = next(c for c in want["checks"] if c["id"] == "filter.permeability")
    assert perm["status"] == "pass"
    assert page.get_attribute(".verdict-card li.check[data-check='filter.permeability']", "data-status") == "pass"
    # No stability alarm beside the verdict: advisory indicators are one tap away, folded.
    assert page.locator(".verdict-card .advisory-group[open]").count() == 0
    assert not page.locator(".verdict-card .advisory-group li.check").first.is_visible()
    assert scroll_width(page) <= PHONE["width"]
    assert page.console_errors == []


def test_too_many_fines_shows_the_reason_first(phone):
    page = phone
    add_clay_core(page)
    start_test(page)
    # A mass mistyped with both marks, then corrected.
    page.fill("input[data-field='sample.sieves[4].retained_g']", "142,6.0")
    settle(page)
    field = page.locator("input[data-field='sample.sieves[4].retained_g']")
    assert field.get_attribute("aria-invalid") == "true"
    assert any("not both" in e for e in shown_errors(page))
    assert scroll_width(page) <= PHONE["width"]  # with an error shown
    type_sand(page, DIRTY)
    page.get_by_label("Nonplastic").check()
    settle(page)
    assert field.get_attribute("aria-invalid") == "false"
    assert shown_errors(page) == []

    want = expected(DIRTY)
    fines = next(c for c in want["checks"] if c["id"] == "filter.fines")
    assert fines["status"] == "fail" and f"{fines['value']:.3g}" == "8.9"
    assert page.get_attribute(".verdict-card .verdict", "data-verdict") == want["verdict"] == "reject"
    # The bar: the verdict and the first reason, in two lines at most.
    bar = page.locator(".verdict-bar")
    assert "Fines 8.9 % > 5 %" in bar.text_content()
    line = page.evaluate("() => parseFloat(getComputedStyle(document.querySelector('.bar-verdict')).lineHeight)")
    assert bar.bounding_box()["height"] <= 2 * line + 16
    # The reason is in the first screen of the result: the verdict card scrolled to the top, the
    # reason line lies inside the viewport above the bar, without scrolling further.
    page.locator(".verdict-card").evaluate("n => n.scrollIntoView({block: 'start'})")
    reason = page.locator(".verdict-card .reasons li.check[data-check='filter.fines'] .reason-line")
    assert "Fines 8.9 % > 5 %" in reason.text_content()
    box = reason.bounding_box()
    bar_top = bar.bounding_box()["y"]
    assert 0 <= box["y"] and box["y"] + box["height"] <= bar_top, (box, bar_top)
    # The first reason listed under the verdict is the failing fines.
    first = page.eval_on_selector(".verdict-card .reasons li.check", "n => n.dataset.check")
    assert first == "filter.fines"
    # The screening caution once on the screen, not in the bar.
    notice = want["notice"]
    assert page.text_content(".verdict-card").count(notice) == 1
    assert notice not in bar.text_content()
    # The chart against the D15 window sits near the top of the result, above the passes.
    assert page.evaluate("() => { const c = document.querySelector('.verdict-card svg.chart');"
                         " const p = document.querySelector('.verdict-card .passes');"
                         " return !!c && !!p && (c.compareDocumentPosition(p) & Node.DOCUMENT_POSITION_FOLLOWING) > 0; }")
    assert scroll_width(page) <= PHONE["width"]
    assert page.console_errors == []


def test_an_empty_row_in_the_stack_is_left_out_without_error(phone):
    """A sieve of the stack left empty between two masses is not an error: it is left out, with a note."""
    page = phone
    add_clay_core(page)
    start_test(page)
    s = dict(CLEAN, masses=list(CLEAN["masses"]))
    type_sand(page, s)
    page.fill("input[data-field='sample.sieves[0].retained_g']", "")  # the 9.5 mm sieve, empty at the top
    page.get_by_label("Custom sieve opening (mm)").fill("0.425")
    page.get_by_role("button", name="Add sieve").click()
    # The new (empty) row has the focus, between 0.6 and 0.3 mm.
    assert page.evaluate("() => document.activeElement.closest('tr')?.dataset.opening") == "0.425"
    settle(page)
    assert shown_errors(page) == []
    assert "Left out" in page.text_content("tr[data-opening='0.425']")
    assert scroll_width(page) <= PHONE["width"]
    t = sand_test(s)
    t["sieves"] = t["sieves"][1:]  # what the screen sends: the empty rows left out
    want = cpython("evaluate", sample=t, base=core_test(), rules={"criteria": "nrcs-1994"})["result"]
    assert page.get_attribute(".verdict-card .verdict", "data-verdict") == want["verdict"]
    assert page.console_errors == []
