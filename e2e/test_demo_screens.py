"""The demo project in the built app: one tap from an empty app, the intended
verdicts on screen, removal in one tap, and the screenshot script.

The verdicts shown are compared with the ones CPython computes for the same
records through ``tamis.api.handle`` (and ``tests/test_demo.py`` checks those
against the scenario's intent and an independent computation).
"""

from __future__ import annotations

import struct

import pytest

import screenshots
from tamis import demo

RECORDS = demo.load_records()
BY_ID, _ = demo.index(RECORDS)


def cpython_verdicts() -> dict:
    out = {}
    for rec in demo.deliveries(RECORDS):
        resp = demo.call(demo.evaluate_request(rec, BY_ID))
        assert resp["ok"], resp
        out[rec["record_id"]] = resp["result"]["verdict"]
    return out


def open_demo(page, site) -> None:
    page.goto(site.url + "index.html")
    page.wait_for_selector("body[data-core-ready]")
    page.wait_for_selector("#view[data-screen='welcome']")
    page.get_by_role("button", name="Open the demo project").click()  # one tap: nothing to review on an empty app
    page.get_by_text("Imported the demo project").first.wait_for()
    assert page.get_by_role("button", name="Apply the import").count() == 0


def test_demo_opens_with_its_verdicts_and_is_removed_in_one_tap(page, site):
    open_demo(page, site)
    page.evaluate("() => { location.hash = '#/records'; }")
    page.wait_for_selector("#view[data-screen='records'] .record-item")
    want = cpython_verdicts()
    page.wait_for_function("(n) => document.querySelectorAll("
                           "\"#view .record-verdict:not([data-verdict='none'])\").length >= n", arg=len(want))
    shown = page.eval_on_selector_all(
        "#view .record-item[data-kind='test']",
        "(items) => items.map((li) => [li.dataset.id, li.querySelector('.record-verdict').dataset.verdict])")
    assert dict(shown) == want
    assert sorted(set(want.values())) == ["accept", "reject"]

    # the reason is on the record's screen: the scenario's check fails there
    ids = {r["meta"]["sample_id"]: r["record_id"] for r in RECORDS}
    for sid, cid in (("S-0918-T", "filter.retention"), ("Q-L11-CP", "filter.fines"), ("Q-0916-1", "qa.mass_balance"),
                     ("D-0922-1", "filter.segregation")):
        page.evaluate("(r) => { location.hash = r; }", f"#/record/{ids[sid]}")
        page.wait_for_selector(f"#view .verdict-card li[data-check='{cid}'][data-status='fail']")
        assert page.get_attribute("#view .verdict-card .verdict", "data-verdict") == "reject"

    page.evaluate("() => { location.hash = '#/exchange'; }")
    page.once("dialog", lambda d: d.accept())
    page.get_by_role("button", name=f"Remove the demo ({len(RECORDS)} records)").click()
    page.get_by_text("Demo removed.").first.wait_for()
    page.evaluate("() => { location.hash = '#/records'; }")
    page.wait_for_selector("#view[data-screen='records']")
    page.wait_for_timeout(300)
    assert page.locator("#view .record-item").count() == 0


def _png_size(path) -> tuple[int, int]:
    data = path.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n", f"{path.name} is not a PNG"
    return struct.unpack(">II", data[16:24])


@pytest.mark.slow
def test_screenshot_script_writes_every_screen(tmp_path, browser):
    files = screenshots.take(tmp_path, browser=browser, log=lambda *_: None)
    assert [f.name for f in files] == [name for name, _ in screenshots.SHOTS]
    w, h = screenshots.VIEWPORT["width"] * screenshots.SCALE, screenshots.VIEWPORT["height"] * screenshots.SCALE
    for f in files:
        if f.name == "12-report-printed.png":  # the printed A4 page at 110 dpi: 210 x 297 mm
            pw, ph = _png_size(f)
            assert abs(pw - 210 / 25.4 * 110) < 3 and abs(ph - 297 / 25.4 * 110) < 3, (pw, ph)
        else:
            assert _png_size(f) == (w, h)
        assert f.stat().st_size > 20_000, f"{f.name} looks blank"
