"""axe-core (default rules, injected from the local npm file) reports no
violations on the main screens, at phone width (360 px) and tablet width (800 px).

The screens are filled with invented data first, so the verdict, the chart,
the list and the detail view are all on the page when axe runs.
"""

from __future__ import annotations

import pytest

import helpers
from test_ui_common import add_base_soil, enter_sample, go, open_app, save_test, wait_screen


def assert_no_violations(page, where: str) -> None:
    results = helpers.run_axe(page)
    assert helpers.axe_violations(results) == [], where
    assert results["passes"], f"axe ran no rule on {where}"


def targets_too_small(page) -> list[str]:
    """Buttons, links, selects and text inputs smaller than 44 x 44 CSS px (WCAG 2.2 SC 2.5.5)."""
    return page.evaluate("""() => [...document.querySelectorAll(
        'button, a.btn, nav a, select, input[type=text], input[type=search], input[type=file]')]
        .filter(e => e.offsetParent !== null)
        .map(e => [e, e.getBoundingClientRect()])
        .filter(([, r]) => r.width < 44 || r.height < 44)
        .map(([e, r]) => `${e.tagName} ${e.textContent.trim().slice(0, 30) || e.getAttribute('aria-label') || e.name} ${r.width}x${r.height}`)""")


@pytest.mark.parametrize("width,height", [(360, 740), (800, 1200)])
@pytest.mark.parametrize("theme", ["standard", "sunlight"])
def test_main_screens_have_no_axe_violations(page, site, width, height, theme):
    page.set_viewport_size({"width": width, "height": height})
    open_app(page, site, "#/settings")
    page.get_by_label("Theme").select_option(theme)
    add_base_soil(page, "B-7")
    assert_no_violations(page, "base soil detail")
    enter_sample(page, base_label="B-7 · silty sand core")
    page.wait_for_selector(".verdict-card .verdict[data-verdict]")
    assert_no_violations(page, "entry with verdict")
    assert targets_too_small(page) == []
    save_test(page)
    page.wait_for_selector("#view[data-screen='record']")
    wait_screen(page)
    page.wait_for_selector(".detail .verdict-card .verdict")
    assert_no_violations(page, "test detail")
    for route in ("#/records", "#/refs", "#/exchange", "#/quick", "#/settings", "#/band", "#/welcome"):
        go(page, route)
        assert_no_violations(page, route)
        assert targets_too_small(page) == [], route


@pytest.mark.parametrize("width", [360, 390])
@pytest.mark.parametrize("theme", ["standard", "sunlight"])
def test_tab_labels_are_whole_and_screens_fit_the_width(page, site, width, theme):
    """Every tab label stays whole (no word broken over two lines, nothing cut off), each tab is at least
    44 x 44 px, and no screen is wider than the phone (the sieve table's passing column stays in view)."""
    page.set_viewport_size({"width": width, "height": 780})
    open_app(page, site, "#/settings")
    page.get_by_label("Theme").select_option(theme)
    tabs = page.evaluate("""() => [...document.querySelectorAll('nav.tabs a')].map(a => {
        const r = a.getBoundingClientRect();
        return {w: r.width, h: r.height, left: r.left, right: r.right, fits: a.scrollWidth <= a.clientWidth,
                words: [...a.querySelectorAll('span:not(.badge)')].map(s => [s.textContent, s.getClientRects().length,
                        s.getBoundingClientRect().width <= r.width + 0.5])};
    })""")
    assert len(tabs) == 6
    for t in tabs:
        assert t["w"] >= 44 and t["h"] >= 44, t
        assert t["left"] >= 0 and t["right"] <= width + 0.5 and t["fits"], t
        assert all(lines == 1 and inside for _, lines, inside in t["words"]), t
    enter_sample(page)
    for route in ("#/entry", "#/quick", "#/records", "#/refs", "#/exchange", "#/settings"):
        go(page, route)
        assert page.evaluate("() => document.documentElement.scrollWidth") <= width, route
