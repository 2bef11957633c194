"""The Records screen with many records on the device, figures printed (never asserted).

    .venv/bin/python bench/bench_records.py [--sizes 5000 20000] [--baseline COMMIT] [--cap 300]

For each size, invented test records are written to the app's IndexedDB, then
the Records screen is opened twice (first visit: no verdict cached; second
visit: all cached) and the search box is typed into. Printed per visit:

- usable: navigation to the first rows on screen (the list can be scrolled,
  searched and opened from then on, while verdicts are still being worked out);
- verdicts: navigation to every test's verdict known (capped at --cap seconds);
- longest block: the longest the page's main thread did not answer during the
  visit (a message-channel probe pinging itself), and during each keystroke;
- per keystroke: keystroke to the list showing the new query (for the current
  app this includes its one-frame pause for more typing, printed apart).

``--baseline COMMIT`` builds that commit's web app in a temporary directory
(``git archive``, this checkout's node_modules and build cache, no network)
and measures it side by side in the same run, in the same browser.
Needs ``make build`` and Debian's chromium (env ``CHROMIUM``).
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "e2e"))

import helpers  # noqa: E402  (the e2e harness: server, chromium)
from playwright.sync_api import TimeoutError as PlaywrightTimeout  # noqa: E402

#: Invented records written into the app's IndexedDB (shared with the e2e test of the list).
MAKE_RECORDS = helpers.SEED_TEST_RECORDS

#: How long a visit waits for the background snapshot to be made before its records are written (ms).
SNAPSHOT_WAIT_MS = 15_000

#: Installed once per page: a probe that measures the longest main-thread block.
PROBE = """() => {
  const ch = new MessageChannel();
  const p = { last: performance.now(), max: 0, on: false };
  ch.port1.onmessage = () => {
    const now = performance.now();
    if (p.on) p.max = Math.max(p.max, now - p.last);
    p.last = now;
    setTimeout(() => ch.port2.postMessage(0), 0);
  };
  ch.port2.postMessage(0);
  window.__probe = p;
}"""

START_VISIT = """() => {
  window.__probe.max = 0; window.__probe.last = performance.now(); window.__probe.on = true;
  window.__t0 = performance.now();
  location.hash = '#/records';
}"""

USABLE = "() => document.querySelector('#view[data-screen=records] li.record-item') !== null"
#: The current app marks the list when every verdict is known; an older one shows no "pending" line once done.
VERDICTS_DONE = """() => {
  const list = document.querySelector('#view[data-screen=records] ul.record-list');
  if (!list || !list.querySelector('li.record-item')) return false;
  if (list.dataset.verdicts !== undefined) return list.dataset.verdicts === 'done';
  return ![...list.querySelectorAll('.record-verdict')].some((s) => s.textContent.includes('pending'));
}"""

KEYSTROKE = """async (q) => {
  const input = document.querySelector('#view input[type=search]');
  const list = document.querySelector('#view ul.record-list');
  const probe = window.__probe;
  const want = q.trim().toLowerCase();
  const before = list.dataset.draws;
  probe.max = 0; probe.last = performance.now(); probe.on = true;
  const t0 = performance.now();
  input.value = q;
  input.dispatchEvent(new InputEvent('input', { bubbles: true }));
  const handler = performance.now() - t0;
  // Current app: the list is redrawn after a pause (dataset.query); an older one redraws inside the handler.
  while (list.dataset.draws !== undefined && (list.dataset.query !== want || list.dataset.draws === before)) {
    await new Promise((r) => setTimeout(r, 1));
  }
  await new Promise((r) => requestAnimationFrame(() => setTimeout(r, 0)));
  const total = performance.now() - t0;
  probe.on = false;
  return { handler, total, block: probe.max, debounced: list.dataset.draws !== undefined };
}"""


def build_baseline(commit: str) -> Path:
    """That commit's web app, built in a temporary directory; returns its webapp/ path."""
    tmp = Path(tempfile.mkdtemp(prefix="tamis-baseline-"))
    archive = subprocess.run(["git", "-C", str(ROOT), "archive", commit], check=True, capture_output=True).stdout
    subprocess.run(["tar", "-x", "-C", str(tmp)], input=archive, check=True)
    (tmp / "node_modules").symlink_to(ROOT / "node_modules")
    if (ROOT / "build" / "webapp").is_dir():
        shutil.copytree(ROOT / "build" / "webapp", tmp / "build" / "webapp")
    subprocess.run([sys.executable, str(tmp / "scripts" / "build_webapp.py")], check=True, capture_output=True)
    return tmp / "webapp"


def wait_ms(page, predicate: str, cap_s: float) -> float | None:
    """ms from the visit's start until predicate holds, or None past the cap."""
    try:
        page.wait_for_function(predicate, timeout=cap_s * 1000, polling="raf")
    except Exception:  # noqa: BLE001  (a timeout: the figure is "over the cap")
        return None
    return page.evaluate("() => performance.now() - window.__t0")


def visit(page, cap_s: float) -> dict:
    page.evaluate("() => { location.hash = '#/settings'; }")
    page.wait_for_selector("#view[data-screen=settings][data-rendered]")
    page.evaluate(START_VISIT)
    usable = wait_ms(page, USABLE, cap_s)
    done = wait_ms(page, VERDICTS_DONE, cap_s)
    block = page.evaluate("() => { window.__probe.on = false; return window.__probe.max; }")
    return {"usable": usable, "verdicts": done, "block": block}


def measure(browser, webapp: Path, n: int, cap_s: float, query: str) -> dict:
    server = helpers.serve.StaticServer(webapp, "127.0.0.1", 0).start()
    context = browser.new_context(viewport={"width": 390, "height": 844})
    try:
        page = context.new_page()
        page.set_default_timeout(max(120_000, int(cap_s * 1000)))
        page.goto(server.url + "index.html#/settings")
        page.wait_for_selector("body[data-core-ready]")
        # After a first plain boot the worker makes its memory snapshot in the background (about a second of
        # one CPU, once per build and device): measured after it, as a device that has run this build before.
        # (A build without snapshots, e.g. an older baseline, never says: it is waited for as long, then measured.)
        try:
            page.wait_for_function("() => ['saved', 'failed', 'skipped'].includes(document.body.dataset.snapshot)",
                                   timeout=SNAPSHOT_WAIT_MS)
        except PlaywrightTimeout:
            pass
        page.evaluate(MAKE_RECORDS, n)
        page.evaluate(PROBE)
        first = visit(page, cap_s)
        second = visit(page, cap_s)
        keys = [page.evaluate(KEYSTROKE, query[: i + 1]) for i in range(len(query))]
        shown = page.text_content("#view p.hint[role=status]")
        return {"first": first, "second": second, "keys": keys, "shown": shown}
    finally:
        context.close()
        server.stop()


def ms(v: float | None, cap_s: float) -> str:
    return f"> {cap_s:.0f} s (cap)" if v is None else f"{v:,.0f} ms"


def report(label: str, n: int, fig: dict, cap_s: float) -> None:
    for name in ("first", "second"):
        v = fig[name]
        what = "first visit, no verdict cached" if name == "first" else "second visit, verdicts cached"
        print(f"  {label:<9} {n:>6,} records, {what}: usable list {ms(v['usable'], cap_s)}; "
              f"all verdicts {ms(v['verdicts'], cap_s)}; longest main-thread block {v['block']:,.0f} ms")
    keys = fig["keys"]
    total = [k["total"] for k in keys]
    block = [k["block"] for k in keys]
    handler = [k["handler"] for k in keys]
    extra = " (includes the one-frame pause the app waits for more typing)" if keys and keys[0]["debounced"] else ""
    print(f"  {label:<9} {n:>6,} records, search, {len(keys)} keystrokes: keystroke to list updated median "
          f"{statistics.median(total):,.0f} ms (max {max(total):,.0f}){extra}; input handler median "
          f"{statistics.median(handler):.1f} ms; longest block per keystroke median {statistics.median(block):,.0f} ms "
          f"(max {max(block):,.0f}); then: {fig['shown']}")


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[5000, 20000])
    parser.add_argument("--baseline", metavar="COMMIT", help="also measure this commit's web app, side by side")
    parser.add_argument("--cap", type=float, default=300.0, help="seconds to wait for a visit's verdicts (default 300)")
    parser.add_argument("--query", default="b-0001", help="typed into the search box, one key at a time")
    args = parser.parse_args(argv)
    from playwright.sync_api import sync_playwright

    apps = [("current", helpers.WEBAPP)]
    tmp = None
    if args.baseline:
        base = build_baseline(args.baseline)
        tmp = base.parent
        apps.append((f"{args.baseline[:9]}", base))
    try:
        with sync_playwright() as p:
            browser = helpers.launch_chromium(p)
            print(f"browser: {browser.version}; load average before: {os.getloadavg()[0]:.1f} on {os.cpu_count()} CPUs")
            for n in args.sizes:
                for label, webapp in apps:
                    t0 = time.perf_counter()
                    fig = measure(browser, webapp, n, args.cap, args.query)
                    report(label, n, fig, args.cap)
                    print(f"  [{time.perf_counter() - t0:.0f} s wall; load average {os.getloadavg()[0]:.1f}]", flush=True)
            browser.close()
    finally:
        if tmp:
            shutil.rmtree(tmp, ignore_errors=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
