"""Shared steps of the UI e2e tests (imported by the other ``test_ui_*`` files),
and the tests of typed decimal entry.

All data here is invented for the tests: a silty-sand base soil and a filter
sand, masses chosen to give a mass balance inside the ASTM C136 0.3 % check.
"""

from __future__ import annotations

import json

import helpers

from tamis.api import handle

#: An invented base soil given as percent passing (with two hydrometer points).
BASE_PASSING = [(4.75, 100), (2.0, 96), (0.85, 88), (0.425, 75), (0.25, 62), (0.15, 50), (0.075, 38),
                (0.02, 20), (0.005, 8)]
#: An invented filter sand on the core's "fine_aggregate" stack: opening [mm] -> mass typed.
#: The 4.75 mm mass is typed with a comma as decimal mark.
SAMPLE_TYPED = [(9.5, "0"), (4.75, "12,4"), (2.36, "80"), (1.18, "120"), (0.6, "130"), (0.3, "90"),
                (0.15, "50"), (0.075, "15")]
PAN_G, DRY_G, WASHED_G = "1", "512", "498,7"
STACK_NAME = "Fine aggregate"


def as_number(typed: str) -> float:
    return float(typed.replace(",", "."))


def sample_test() -> dict:
    """The same sample as the core request CPython gets."""
    return {"sieves": [{"opening_mm": d, "retained_g": as_number(m)} for d, m in SAMPLE_TYPED],
            "pan_g": as_number(PAN_G), "dry_mass_g": as_number(DRY_G), "washed_dry_mass_g": as_number(WASHED_G)}


def base_test() -> dict:
    return {"passing": [{"opening_mm": float(d), "passing_pct": float(p)} for d, p in BASE_PASSING]}


def cpython(op: str, **fields) -> dict:
    resp = json.loads(handle(json.dumps({"schema": 1, "op": op, "id": 1, **fields})))
    assert resp["ok"], resp
    return resp


def open_app(page, site, route: str = "#/entry") -> None:
    page.goto(site.url + "index.html" + route)
    page.wait_for_selector("body[data-core-ready]")
    wait_screen(page)


def go(page, route: str) -> None:
    """Navigate to a screen by its hash and wait until it is drawn (a no-op if it is showing)."""
    if page.evaluate("() => location.hash") == route:
        wait_screen(page)
        return
    before = page.get_attribute("#view", "data-rendered") or "0"
    page.evaluate("(r) => { location.hash = r; }", route)
    page.wait_for_function("(b) => { const v = document.getElementById('view');"
                           " return v.dataset.rendered && v.dataset.rendered !== b; }", arg=before)
    wait_screen(page)


def wait_screen(page) -> None:
    page.wait_for_selector("#view[data-rendered]")
    page.wait_for_selector("#view:not([data-busy])")


def settle(page) -> None:
    """Wait until the last edit's evaluation is on screen."""
    page.wait_for_timeout(50)
    page.wait_for_selector("#view:not([data-busy])")


def add_base_soil(page, site_id: str = "B-1") -> None:
    """Enter the invented base soil under References > New base soil, and save it."""
    go(page, "#/base")
    page.get_by_label("Sample id").fill(site_id)
    page.get_by_label("Description").fill("silty sand core")
    for i, (d, p) in enumerate(BASE_PASSING):
        page.get_by_role("button", name="Add a size").click()
        page.fill(f"input[data-field='test.passing[{i}].opening_mm']", str(d))
        page.fill(f"input[data-field='test.passing[{i}].passing_pct']", str(p))
    page.get_by_role("button", name="Save base soil").click()
    page.wait_for_selector("#view[data-screen='record']")
    wait_screen(page)


def add_preset_band(page, preset_id: str = "astm-c33-fine") -> dict:
    """Copy one of the core's example bands into a band record and save it; returns the core's preset."""
    go(page, "#/refs")
    preset = next(p for p in cpython("band_presets")["result"]["presets"] if p["id"] == preset_id)
    page.get_by_label("Start from a published band").select_option(label=preset["name"])
    page.get_by_role("button", name="Copy into a new band").click()
    page.wait_for_selector("#view[data-screen='band']")
    page.get_by_role("button", name="Save band").click()
    page.wait_for_selector("#view[data-screen='record']")
    return preset


def enter_sample(page, base_label: str | None = None) -> None:
    """Type the invented sample on the entry screen (stack preset, masses, totals)."""
    go(page, "#/entry")
    if base_label:
        page.get_by_label("Base soil it protects").select_option(label=base_label)
    page.get_by_label("Sieve stack").select_option(label=[o for o in page.locator("select option").all_text_contents()
                                                         if o.startswith(STACK_NAME)][0])
    page.get_by_role("button", name="Use this stack").click()
    for i, (_, m) in enumerate(SAMPLE_TYPED):
        page.fill(f"input[data-field='sample.sieves[{i}].retained_g']", m)
    page.fill("input[data-field='sample.pan_g']", PAN_G)
    page.fill("input[data-field='sample.dry_mass_g']", DRY_G)
    page.fill("input[data-field='sample.washed_dry_mass_g']", WASHED_G)
    settle(page)


# ---- tests of typed decimal entry ---------------------------------------------------------------

def test_comma_and_point_give_the_same_percent_passing(page, site):
    """Typing 12,4 or 12.4 must give the same core result; a string with both marks is refused."""
    open_app(page, site)
    enter_sample(page)
    comma = page.text_content("tr[data-opening='4.75'] .pass")
    page.fill("input[data-field='sample.sieves[1].retained_g']", "12.4")
    settle(page)
    assert page.text_content("tr[data-opening='4.75'] .pass") == comma
    expected = cpython("gradation", test=sample_test())["result"]
    row = next(r for r in expected["table"] if r["opening_mm"] == 4.75)
    assert abs(float(comma) - row["passing_pct"]) <= 0.05 + 1e-9

    field = page.locator("input[data-field='sample.sieves[1].retained_g']")
    field.fill("1,2.4")
    settle(page)
    assert field.get_attribute("aria-invalid") == "true"
    assert "not both" in page.text_content(f"#{field.get_attribute('id')}-err")
    assert "fix the highlighted entry" in page.text_content(".bar-verdict")


def test_enter_moves_to_the_next_mass(page, site):
    open_app(page, site)
    enter_sample(page)
    page.focus("input[data-field='sample.sieves[2].retained_g']")
    page.keyboard.press("Enter")
    assert page.evaluate("() => document.activeElement.dataset.field") == "sample.sieves[3].retained_g"


def test_typed_masses_survive_a_reload_before_saving(page, site):
    """The form is kept on the device as it is typed (an app update reloads the page)."""
    open_app(page, site)
    enter_sample(page)
    page.wait_for_timeout(300)
    page.reload()
    page.wait_for_selector("body[data-core-ready]")
    wait_screen(page)
    values = [page.input_value(f"input[data-field='sample.sieves[{i}].retained_g']") for i in range(len(SAMPLE_TYPED))]
    assert values == [m.replace(",", ".") for _, m in SAMPLE_TYPED]  # restored with a point as the mark
    assert page.get_attribute(".verdict-bar", "data-verdict") in ("accept", "reject", "review")


#: The name typed when the app asks for the tester's name (once, at the first save of a test).
TESTER = "E2E"


def save_test(page, button: str = "Save test") -> None:
    """Tap a save button of the test screen; answer the one-time question for the tester's name."""
    page.get_by_role("button", name=button).click()
    page.wait_for_function("() => document.querySelector('.tester-ask') || document.querySelector('.save-status')?.textContent"
                           " || document.getElementById('view').dataset.screen === 'record'")
    if page.locator(".tester-ask").count():
        page.get_by_label("Your name or initials").fill(TESTER)
        page.get_by_role("button", name="Save with this name").click()


def open_filters(page) -> None:
    """Unfold the records list's search and filters (folded under one line, the records first)."""
    if not page.locator("#view details.filters[open]").count():
        page.get_by_text("Search and filters").click()


PHONE = {"width": 360, "height": 780}


def phone_session(browser, site, theme: str = "standard", tester: str = "", **context_options):
    """A 360 x 780 phone on Settings in the given theme (and the tester's name, when given);
    yields the page, then closes the phone and asserts no request left the site."""
    context = browser.new_context(viewport=PHONE, **context_options)
    guard = helpers.RequestGuard(context, site.origin)
    page = context.new_page()
    page.set_default_timeout(helpers.BOOT_TIMEOUT_MS)
    page.console_errors = []
    page.on("pageerror", lambda err: page.console_errors.append(f"pageerror: {err}"))
    page.goto(site.url + "index.html#/settings")
    page.wait_for_selector("body[data-core-ready]")
    wait_screen(page)
    if tester:
        page.get_by_label("Your name or initials (recorded with each save)").fill(tester)
    page.get_by_label("Theme").select_option(theme)
    page.wait_for_function("(t) => document.documentElement.dataset.theme === t", arg=theme)
    yield page
    context.close()
    guard.assert_clean()


def scroll_width(page) -> int:
    return page.evaluate("() => document.documentElement.scrollWidth")


def shown_errors(page) -> list[str]:
    """The error lines a person sees (empty ones are not displayed)."""
    return page.eval_on_selector_all(".field-error, .core-error", "ns => ns.filter(n => n.textContent.trim()"
                                     " && n.getClientRects().length).map(n => n.textContent)")
