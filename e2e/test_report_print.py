"""The report of a test as an inspector hands it over: opened from the test's screen, printed
to PDF by headless chromium (``page.pdf``, A4 and US letter), and read back with ``pdftotext``
(poppler-utils, Debian): the sieve table, the verdict, every failing check and the caution are
on the page, and the report fits one page.

The document the app shows is the core's (op ``report_html``): it is compared byte for byte
with what CPython writes for the same records (``python -m tamis report --html`` runs the same
function), so the office and the phone print the same report.
"""

from __future__ import annotations

import re
import shutil
import subprocess

import pytest

from tamis import demo
from tamis.exchange import record, report_html, wording
from tamis.lab.sieves import label_for

RECORDS = demo.load_records()
IDS = {r["meta"]["sample_id"]: r["record_id"] for r in RECORDS}
PDFTOTEXT = shutil.which("pdftotext")
PDFINFO = shutil.which("pdfinfo")
needs_poppler = pytest.mark.skipif(PDFTOTEXT is None or PDFINFO is None,
                                   reason="pdftotext/pdfinfo (poppler-utils) not installed; scripts/system-deps.sh "
                                          "installs them")


def open_demo(page, site) -> None:
    page.goto(site.url + "index.html")
    page.wait_for_selector("body[data-core-ready]")
    page.wait_for_selector("#view[data-screen='welcome']")
    page.get_by_role("button", name="Open the demo project").click()
    page.get_by_text("Imported the demo project").first.wait_for()


def open_report_from_test(page, sample_id: str) -> str:
    """From the test's screen, tap Report; the document the frame shows."""
    page.evaluate("(r) => { location.hash = r; }", f"#/record/{IDS[sample_id]}")
    page.wait_for_selector("#view[data-screen='record'] .verdict-card .verdict")
    page.get_by_role("link", name="Report", exact=True).click()
    page.wait_for_selector("#view[data-screen='report'][data-report='ready']")
    return page.get_attribute("#view iframe.report-frame", "srcdoc")


def cpython_report(sample_id: str, paper: str = "auto") -> str:
    recs = [record.check_record(r) for r in RECORDS]
    one = next(r for r in recs if r["meta"].get("sample_id") == sample_id)
    ctx = [r for r in recs if r["record_id"] in (one["meta"].get("band_id"), one["meta"].get("base_id"))]
    return report_html.build([one], ctx, ids=[one["record_id"]], paper=paper)["html"]


def pdf_of(browser, html: str, fmt: str, path) -> tuple[int, str, str]:
    """Print ``html`` to PDF in chromium at paper ``fmt``; (pages, text by ``pdftotext -layout``, which keeps
    each table row on its line, and by ``pdftotext -raw``, which keeps a wrapped cell's words in order)."""
    ctx = browser.new_context()
    try:
        pg = ctx.new_page()
        pg.set_content(html, wait_until="load")
        pg.pdf(path=str(path), format=fmt, print_background=True)  # the print style sheet and @page apply
    finally:
        ctx.close()
    info = subprocess.run([PDFINFO, str(path)], capture_output=True, text=True, check=True).stdout
    pages = int(re.search(r"^Pages:\s+(\d+)", info, re.M).group(1))
    text = subprocess.run([PDFTOTEXT, "-layout", str(path), "-"], capture_output=True, text=True, check=True).stdout
    raw = subprocess.run([PDFTOTEXT, "-raw", str(path), "-"], capture_output=True, text=True, check=True).stdout
    return pages, text, raw


def flat(text: str) -> str:
    return re.sub(r"\s+", " ", text)


@needs_poppler
@pytest.mark.parametrize("sample_id", ["Q-L11-CP", "D-0922-1"])
def test_the_report_of_a_demo_test_prints_on_one_page_with_what_decides_it(page, site, browser, tmp_path,
                                                                          sample_id):
    open_demo(page, site)
    html = open_report_from_test(page, sample_id)
    assert html == cpython_report(sample_id)  # one source: the phone shows the office's report
    rec = next(r for r in RECORDS if r["meta"]["sample_id"] == sample_id)
    by_id = {r["record_id"]: r for r in RECORDS}
    ev = demo.call(demo.evaluate_request(rec, by_id))["result"]
    failing = [c for c in ev["checks"] if c["status"] == "fail" and not c["advisory"]]
    assert failing and ev["verdict"] == "reject"
    for fmt in ("A4", "Letter"):
        pages, text, raw = pdf_of(browser, html, fmt, tmp_path / f"{sample_id}-{fmt}.pdf")
        assert pages == 1, (fmt, pages)
        t = flat(raw)
        assert f"Sample {sample_id}" in t
        assert "Sieve analysis" in t and "Passing %" in t and "Band %" in t
        # each sieve of the stack on its own line of the table: label, opening, mass retained
        for s in rec["test"]["sieves"]:
            label = label_for(s["opening_mm"])
            assert re.search(rf"{re.escape(label)}\s+{re.escape(wording.num(s['opening_mm'], 4))}\s+"
                             rf"{re.escape(wording.num(s['retained_g'], 6))}\s", text), (fmt, label)
        assert "Verdict: Fails a check (reject)" in t
        for c in failing:
            assert wording.title(c["id"]) in t, (fmt, c["id"])
            assert wording.reason_line(c) in t, (fmt, c["id"])
        assert "Screening check only. The project specification, local codes and the engineer of record govern" in t
        assert t.count("Signature:") == 3


def test_print_save_and_share_from_the_report_screen(page, site):
    page.add_init_script("""
        window.__shared = [];
        navigator.canShare = (d) => Boolean(d && d.files);
        navigator.share = async (d) => { window.__shared.push({title: d.title, files: (d.files || []).map((f) => [f.name, f.type, f.size])}); };
    """)
    violations = []
    page.on("console", lambda m: violations.append(m.text) if "Content Security Policy" in m.text else None)
    open_demo(page, site)
    html = open_report_from_test(page, "Q-L11-CP")
    # The report keeps its own style sheet inside the app's frame (its style blocks are allowed by hash).
    frame = page.frame_locator("iframe.report-frame")
    assert frame.locator("h1").evaluate("(e) => getComputedStyle(e).fontSize") == "17.3333px"  # 13 pt
    assert frame.locator("p.stamp").evaluate("(e) => getComputedStyle(e).borderTopStyle") == "solid"
    assert violations == []
    # Print: the browser's print of the report frame (the dialog is the device's; here it is counted).
    page.evaluate("() => { const w = document.querySelector('iframe.report-frame').contentWindow;"
                  " window.__printed = 0; w.print = () => { window.__printed += 1; }; }")
    page.get_by_role("button", name="Print or save as PDF").click()
    assert page.evaluate("() => window.__printed") == 1
    page.get_by_role("button", name="Share").click()
    page.wait_for_function("() => window.__shared.length === 1")
    shared = page.evaluate("() => window.__shared[0]")
    assert shared["title"] == "Test report Q-L11-CP"
    assert shared["files"] == [["Test-report-Q-L11-CP.html", "text/html", len(html.encode("utf-8"))]]
    with page.expect_download() as dl:
        page.get_by_role("button", name="Save as a file").click()
    assert dl.value.suggested_filename == "Test-report-Q-L11-CP.html"
    # The inspector prints on US letter: the choice is kept over a reload, and the page size follows.
    page.get_by_label("Paper").select_option("letter")
    page.wait_for_selector("#view[data-report='ready']")
    assert "@page{size:letter;" in page.get_attribute("#view iframe.report-frame", "srcdoc")
    page.reload()
    page.wait_for_selector("#view[data-screen='report'][data-report='ready']")
    assert page.locator("#report-paper").input_value() == "letter"
    assert page.get_attribute("#view iframe.report-frame", "srcdoc") == cpython_report("Q-L11-CP", "letter")


def test_lot_and_daily_reports_from_a_test(page, site):
    open_demo(page, site)
    page.evaluate("(r) => { location.hash = r; }", f"#/record/{IDS['Q-L11-CP']}")
    page.wait_for_selector("#view[data-screen='record'] .verdict-card .verdict")
    page.get_by_role("link", name="Lot report (L11)").click()
    page.wait_for_selector("#view[data-screen='report'][data-report='ready']")
    frame = page.frame_locator("iframe.report-frame")
    body = frame.locator("body").inner_text()
    assert "Lot report: L11" in body
    for sid in ("Q-L11-SP", "Q-L11-DL", "Q-L11-CP"):
        assert sid in body
    assert "3: 2 accept, 1 reject, 0 review, 0 without verdict" in flat(body)
    assert "Band: No. 200 passing 5.7 % > 5 %; Fines 5.7 % > 5 %" in flat(body)
    page.go_back()
    page.wait_for_selector("#view[data-screen='record'] .verdict-card .verdict")
    page.get_by_role("link", name="Daily report (2026-09-29)").click()
    page.wait_for_selector("#view[data-screen='report'][data-report='ready']")
    body = flat(page.frame_locator("iframe.report-frame").locator("body").inner_text())
    assert "Daily report: 2026-09-29" in body and "Q-L11-DL" in body and "Q-L11-CP" in body
    assert "Q-L11-SP" not in body  # sampled the day before


def test_the_report_screen_and_the_report_itself_have_no_axe_violations(page, site, browser):
    from helpers import axe_violations, run_axe
    page.set_viewport_size({"width": 360, "height": 780})
    open_demo(page, site)
    html = open_report_from_test(page, "S-0918-T")
    assert axe_violations(run_axe(page)) == []
    # The document alone, as the office opens it or a colleague receives it (axe-core default rules).
    ctx = browser.new_context()
    try:
        pg = ctx.new_page()
        pg.set_content(html, wait_until="load")
        assert axe_violations(run_axe(pg)) == []
    finally:
        ctx.close()


@needs_poppler
def test_a_heavy_report_still_fits_one_page(browser, tmp_path):
    """The heaviest demo test with every internal-stability method on (six advisory indicators and their
    warnings) and a long note: printed smaller (report_html.fit_class), still one page, still legible text."""
    import copy
    recs = [record.check_record(r) for r in RECORDS]
    heavy = copy.deepcopy(next(r for r in recs if r["meta"]["sample_id"] == "D-0922-1"))
    heavy["meta"]["rules"] = dict(heavy["meta"].get("rules") or {}, stability=True)
    heavy["meta"]["notes"] = "Sampled at the edge of the spread lift; coarse and fine pockets visible. " * 6
    others = [r for r in recs if r["record_id"] != heavy["record_id"]]
    html = report_html.build(others + [heavy], ids=[heavy["record_id"]])["html"]
    assert 'class="page fit' in html
    for fmt in ("A4", "Letter"):
        pages, _, raw = pdf_of(browser, html, fmt, tmp_path / f"heavy-{fmt}.pdf")
        t = flat(raw)
        assert pages == 1, (fmt, pages)
        assert "Verdict: Fails a check (reject)" in t and "Internal stability: Kezdi split test" in t
        assert "Screening check only." in t and t.count("Signature:") == 3


@needs_poppler
def test_a_corrected_mass_is_in_the_report_after_a_reload(page, site, browser, tmp_path):
    """The inspector finds the No. 200 mass of Q-L11-CP was read wrong (54.0 g, 57.0 g on the balance
    sheet), corrects it, saves, reloads and prints: the report holds the new mass, the figures the core
    gives for it and the new revision, and is still the office's document for the stored record."""
    from test_ui_common import save_test, settle
    open_demo(page, site)
    rid = IDS["Q-L11-CP"]
    page.evaluate("(r) => { location.hash = r; }", f"#/entry/{rid}")
    field = page.locator("input[data-field='sample.sieves[7].retained_g']")
    field.wait_for()
    assert field.input_value() == "54"
    field.fill("57")
    settle(page)
    save_test(page, "Save changes")
    page.get_by_text("Saved Q-L11-CP (revision 2).").first.wait_for()
    page.reload()
    page.wait_for_selector("body[data-core-ready]")
    html = open_report_from_test(page, "Q-L11-CP")
    stored = page.evaluate("async (id) => (await import('/src/storage/records.js')).getRecord(id)", rid)
    assert stored["rev"] == 2 and stored["test"]["sieves"][7]["retained_g"] == 57
    recs = [record.check_record(r) for r in RECORDS if r["record_id"] != rid] + [record.check_record(stored)]
    ctx = [r for r in recs if r["record_id"] in (stored["meta"]["band_id"], stored["meta"]["base_id"])]
    assert html == report_html.build([record.check_record(stored)], ctx, ids=[rid])["html"]
    pages, text, raw = pdf_of(browser, html, "Letter", tmp_path / "corrected.pdf")
    assert pages == 1
    # C136 section 9 by hand: cumulative 978.5 - 54.0 + 57.0 = 981.5 g; passing 100 x (1037.6 - 981.5) / 1037.6
    assert re.search(r"No\. 200\s+0\.075\s+57\s+981\.5\s+94\.6\s+5\.4\s+0–5\s+OUT", text), text[:3000]
    t = flat(raw)
    assert "rev 2" in t and "Band: No. 200 passing 5.4 % > 5 %" in t
