"""Screenshots of the main screens at a phone-sized viewport, from the demo project.

Run by hand after ``make build``::

    .venv/bin/python e2e/screenshots.py            # writes docs/img/*.png
    .venv/bin/python e2e/screenshots.py --out DIR  # somewhere else

It serves the built app on 127.0.0.1 (``scripts/serve.py``), drives Debian's
chromium through Playwright's ``executable_path`` (never a downloaded
browser), opens the demo project from the welcome screen the way a person
would, and photographs the screens the tour in ``docs/tour.md`` shows. The
pictures are regenerated, never drawn by hand.

``e2e/test_demo_screens.py`` imports :func:`take` and runs it into a
temporary folder.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))

import helpers  # noqa: E402  (e2e/helpers.py: the served site, chromium)
from tamis import demo  # noqa: E402

#: The narrowest phone the app is built for (360 x 780 CSS pixels), at 2x for crisp pictures.
VIEWPORT = {"width": 360, "height": 780}
SCALE = 2
OUT = ROOT / "docs" / "img"

#: (file name, what it shows). The order is the tour's.
SHOTS = (
    ("01-welcome.png", "the welcome screen of an empty app, with 'Open the demo project'"),
    ("02-demo-import.png", "the demo project opened in one tap: what was added"),
    ("03-records.png", "the records list after the import"),
    ("04-rejected-retention.png", "a delivery rejected for retention against the core (S-0918-T)"),
    ("05-rejected-fines.png", "the compacted sample of lot L11, rejected for fines (Q-L11-CP)"),
    ("06-accepted.png", "an accepted delivery with its gradation chart (Q-0907-1)"),
    ("07-references.png", "bands and base soils of the demo project"),
    ("08-exchange.png", "CSV exchange, with 'Remove the demo'"),
    ("09-entry-fines.png", "a test typed from masses on the entry screen: the result's first screen and the bar"),
    ("10-entry-sunlight.png", "the same result in the sunlight theme"),
    ("11-report-screen.png", "the Report screen of Q-L11-CP: print, save, share, the paper, the report"),
    ("12-report-printed.png", "the printed report of Q-L11-CP: the PDF chromium prints (A4), drawn by pdftoppm"),
)


def _wait_screen(page) -> None:
    page.wait_for_selector("#view[data-rendered]")
    page.wait_for_selector("#view:not([data-busy])")
    page.wait_for_timeout(150)


def _go(page, route: str) -> None:
    before = page.get_attribute("#view", "data-rendered") or "0"
    page.evaluate("(r) => { location.hash = r; }", route)
    page.wait_for_function("(b) => { const v = document.getElementById('view');"
                           " return v.dataset.rendered && v.dataset.rendered !== b; }", arg=before)
    _wait_screen(page)


def _record_ids() -> dict:
    return {r["meta"]["sample_id"]: r["record_id"] for r in demo.load_records()}


def _open_record(page, record_id: str) -> None:
    _go(page, f"#/record/{record_id}")
    page.wait_for_selector("#view[data-screen='record'] .verdict-card *")
    page.wait_for_selector("#view[data-screen='record'] svg")
    _wait_screen(page)


def _scroll_to(page, selector: str, block: str = "start") -> None:
    """Bring ``selector`` to the top (or ``block``) of the viewport, past the header banners."""
    page.eval_on_selector(selector, "(el, block) => el.scrollIntoView({block})", block)
    page.wait_for_timeout(100)


def _quiet(page) -> None:
    """Wait until the toast line has cleared (it clears itself after a few seconds)."""
    page.wait_for_function("() => !document.getElementById('toast')?.textContent", timeout=10_000)


def take(out_dir: Path = OUT, *, browser=None, log=print) -> list[Path]:
    """Photograph every screen of :data:`SHOTS` into ``out_dir``; return the files.

    ``browser``: a Playwright chromium already launched (the e2e fixture);
    without it Debian's chromium is launched here.
    """
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    site = helpers.Site(with_test_pages=False)
    try:
        if browser is not None:
            return _take(browser, site, out_dir, log)
        from playwright.sync_api import sync_playwright
        with sync_playwright() as p:
            own = helpers.launch_chromium(p)
            try:
                return _take(own, site, out_dir, log)
            finally:
                own.close()
    finally:
        site.stop()


def _take(browser, site, out_dir: Path, log) -> list[Path]:
    written: list[Path] = []
    context = browser.new_context(viewport=VIEWPORT, device_scale_factor=SCALE,
                                  color_scheme="light", reduced_motion="reduce")
    guard = helpers.RequestGuard(context, site.origin)
    page = context.new_page()
    page.set_default_timeout(helpers.BOOT_TIMEOUT_MS)

    def shot(name: str, full_page: bool = False) -> None:
        path = out_dir / name
        page.screenshot(path=str(path), full_page=full_page)
        written.append(path)
        log(f"wrote {path}")

    page.goto(site.url + "index.html")
    page.wait_for_selector("body[data-core-ready]")
    page.wait_for_selector("#view[data-screen='welcome']")
    _wait_screen(page)
    shot(SHOTS[0][0])

    page.get_by_role("button", name="Open the demo project").click()
    page.get_by_text("Imported the demo project").first.wait_for()
    page.get_by_text("What was added").first.click()
    _quiet(page)
    _scroll_to(page, "#view .ok-line")
    shot(SHOTS[1][0])

    ids = _record_ids()
    _go(page, "#/records")
    _quiet(page)
    _scroll_to(page, "#view .record-link")
    shot(SHOTS[2][0])
    for (name, _), sid in zip(SHOTS[3:6], ("S-0918-T", "Q-L11-CP", "Q-0907-1")):
        _open_record(page, ids[sid])
        # What an inspector sees first of a result: the verdict, the reasons, the chart.
        _scroll_to(page, "#view .verdict-card")
        shot(name)
    _go(page, "#/refs")
    _scroll_to(page, "#view h1")
    shot(SHOTS[6][0])
    _go(page, "#/exchange")
    _scroll_to(page, "#view h1")
    shot(SHOTS[7][0])

    # A test typed from the masses as they come off the balance: the demo's compacted sample of lot L11.
    rec = next(r for r in demo.load_records() if r["meta"].get("sample_id") == "Q-L11-CP")
    _go(page, f"#/entry/{rec['record_id']}")
    _scroll_to(page, "#view .verdict-card")
    shot(SHOTS[8][0])
    _go(page, "#/settings")
    page.get_by_label("Theme").select_option("sunlight")
    _quiet(page)
    _go(page, f"#/entry/{rec['record_id']}")
    _scroll_to(page, "#view .verdict-card")
    shot(SHOTS[9][0])

    _go(page, "#/settings")
    page.get_by_label("Theme").select_option("standard")
    _quiet(page)
    _go(page, f"#/report/test/{rec['record_id']}")
    page.wait_for_selector("#view[data-report='ready']")
    _quiet(page)
    _scroll_to(page, "#view h1")
    shot(SHOTS[10][0])
    html = page.get_attribute("#view iframe.report-frame", "srcdoc")
    written.append(printed_page(browser, html, out_dir / SHOTS[11][0]))
    log(f"wrote {written[-1]}")

    context.close()
    guard.assert_clean()
    return written


def printed_page(browser, html: str, path: Path) -> Path:
    """The report printed to PDF by chromium (A4, the print style sheet), its page drawn as PNG by pdftoppm
    (poppler-utils) at 110 dpi."""
    import shutil
    import subprocess
    import tempfile
    tool = shutil.which("pdftoppm")
    if tool is None:
        raise RuntimeError("pdftoppm (poppler-utils) is missing: run `make setup` (scripts/system-deps.sh)")
    ctx = browser.new_context()
    try:
        pg = ctx.new_page()
        pg.set_content(html, wait_until="load")
        pdf = pg.pdf(format="A4", print_background=True)
    finally:
        ctx.close()
    with tempfile.TemporaryDirectory() as tmp:
        src = Path(tmp) / "report.pdf"
        src.write_bytes(pdf)
        subprocess.run([tool, "-png", "-r", "110", "-singlefile", str(src), str(Path(tmp) / "page")], check=True)
        path.write_bytes((Path(tmp) / "page.png").read_bytes())
    return path


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", type=Path, default=OUT, help="folder for the PNG files (default docs/img)")
    args = ap.parse_args(argv)
    take(args.out)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
