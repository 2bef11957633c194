"""Keystroke -> updated verdict in the field app, printed (never asserted).

    .venv/bin/python bench/bench_typing.py [--edits 200]

The entry screen is filled with an invented filter sand and an invented base
soil; then one sieve mass is edited ``--edits`` times. Each edit is a real
``input`` event on the mass field; the time runs until the screen shows the
verdict for that edit (the entry screen clears ``#view[data-busy]`` once the
last edit's evaluation is drawn). The figure includes the screen's debounce
(120 ms, ``DEBOUNCE_MS`` in ``webapp/src/ui/entry.js``), the bridge, the
worker's ``evaluate`` and ``gradation`` calls and the redraw (verdict, table,
chart). Median and 95th percentile, in ms, headless Debian chromium.

Needs ``make build`` and Debian's chromium (env ``CHROMIUM``).
"""

from __future__ import annotations

import argparse
import statistics
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "e2e"))

import helpers  # noqa: E402  (the e2e harness: server, chromium)
from test_ui_common import add_base_soil, enter_sample, open_app  # noqa: E402  (the UI steps)

EDIT_JS = """async ([field, value]) => {
  const input = document.querySelector(`input[data-field='${field}']`);
  const view = document.getElementById('view');
  const t0 = performance.now();
  input.value = value;
  input.dispatchEvent(new Event('input', {bubbles: true}));
  await new Promise((resolve) => {
    const check = () => { if (!view.dataset.busy) { obs.disconnect(); resolve(); } };
    const obs = new MutationObserver(check);
    obs.observe(view, {attributes: true, attributeFilter: ['data-busy']});
    check();
  });
  return performance.now() - t0;
}"""


def percentile(values: list[float], q: float) -> float:
    """Nearest-rank percentile (q in 0..100)."""
    s = sorted(values)
    k = max(0, min(len(s) - 1, int(round(q / 100 * len(s) + 0.5)) - 1))
    return s[k]


def main(argv: list[str]) -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--edits", type=int, default=200)
    args = ap.parse_args(argv)
    from playwright.sync_api import sync_playwright

    site = helpers.Site()
    try:
        with sync_playwright() as p:
            browser = helpers.launch_chromium(p)
            page = browser.new_context(viewport={"width": 360, "height": 740}).new_page()
            page.set_default_timeout(helpers.BOOT_TIMEOUT_MS)
            open_app(page, site)
            add_base_soil(page, "BENCH-B")
            enter_sample(page, base_label="BENCH-B · silty sand core")
            times = []
            for i in range(args.edits):
                value = f"{80 + (i % 20) / 10:.1f}".replace(".", ",")  # typed with a comma, as on a phone
                times.append(page.evaluate(EDIT_JS, ["sample.sieves[2].retained_g", value]))
            verdict = page.get_attribute(".verdict-bar", "data-verdict")
            browser.close()
    finally:
        site.stop()
    print(f"keystroke -> updated verdict over {len(times)} edits (headless chromium, 360 px, base soil set):")
    print(f"  median {statistics.median(times):.0f} ms, 95th percentile {percentile(times, 95):.0f} ms, "
          f"min {min(times):.0f} ms, max {max(times):.0f} ms (includes the 120 ms debounce)")
    print(f"  last verdict shown: {verdict}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
