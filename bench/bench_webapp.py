"""Web platform figures, printed (never asserted).

    .venv/bin/python bench/bench_webapp.py [--runs 5] [--batch 3]

1. Navigation -> Python worker ready, warm cache and offline (service worker),
   median / min / max over ``--runs`` reloads, for both ways of installing the
   tamis wheel (``pyodide.unpackArchive`` and ``micropip.install`` from a
   same-origin URL); plus one cold first visit of each (online, empty cache).
2. Bytes precached: total and gzip -9 compressed, from the build manifest.
3. The same batch of requests (every ``ok`` golden request of the evaluate,
   zones, design_band and gradation ops, ``--batch`` times) in the worker
   (through the bridge) and in CPython (the same wheel), as a ratio, measured
   side by side in one run.

Needs ``make build`` and Debian's chromium (env ``CHROMIUM``).
"""

from __future__ import annotations

import argparse
import gzip
import json
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "e2e"))

import helpers  # noqa: E402  (the e2e harness: server, chromium, wait helpers)

BATCH_OPS = ("evaluate", "zones", "design_band", "gradation")


def ready_ms(page) -> float:
    helpers.wait_worker_ready(page)
    return page.evaluate("() => window.tamisTest.statuses.find(s => s.ready).at_ms")


def boot_figures(browser, runs: int, modes: tuple[str, ...]) -> dict:
    """First visit, then offline reloads alternating between the install modes (one context each)."""
    site = helpers.Site()
    figures = {}
    try:
        pages = {}
        for mode in modes:
            context = browser.new_context()
            page = context.new_page()
            page.goto(site.page_url(query=f"install={mode}"))
            cold = ready_ms(page)
            figures[mode] = {"cold_ms": cold, "warm_ms": [], "cold_timings": page.evaluate(
                "() => window.tamisTest.statuses.find(s => s.ready).timings")}
            helpers.wait_precached(page)
            helpers.wait_controlled(page)
            context.set_offline(True)
            pages[mode] = page
        for _ in range(runs):
            for mode, page in pages.items():
                response = page.reload()
                assert response.from_service_worker
                figures[mode]["warm_ms"].append(ready_ms(page))
                timings = page.evaluate("() => window.tamisTest.statuses.find(s => s.ready).timings")
                figures[mode].setdefault("install_ms", []).append(
                    timings["core_installed_ms"] - timings["python_started_ms"])
                figures[mode]["warm_timings"] = timings
        for page in pages.values():
            page.context.close()
        return figures
    finally:
        site.stop()


def precache_bytes() -> tuple[int, int, int]:
    manifest = helpers.read_manifest()
    total = packed = 0
    for entry in manifest["files"]:
        data = (helpers.WEBAPP / entry["path"]).read_bytes()
        total += len(data)
        packed += len(gzip.compress(data, 9, mtime=0))
    return len(manifest["files"]), total, packed


def batch_requests(repeat: int) -> list[str]:
    reqs = []
    for name, req, resp in helpers.golden_cases():
        if name.split("-", 1)[0] in BATCH_OPS and resp and json.loads(resp).get("ok"):
            reqs.append(req)
    return reqs * repeat


def cpython_batch_ms(requests: list[str]) -> float:
    wheel = helpers.WEBAPP / helpers.read_manifest()["wheel"]
    code = (f"import sys, json, time; sys.path.insert(0, {str(wheel)!r}); import tamis.api as a; "
            "reqs = json.load(sys.stdin); a.handle(reqs[0]); t = time.perf_counter(); "
            "[a.handle(r) for r in reqs]; print((time.perf_counter() - t) * 1000)")
    out = subprocess.run([sys.executable, "-I", "-S", "-c", code], input=json.dumps(requests),
                         capture_output=True, text=True, check=True)
    return float(out.stdout)


def worker_batch_ms(browser, requests: list[str]) -> float:
    site = helpers.Site()
    try:
        context = browser.new_context()
        page = context.new_page()
        page.goto(site.page_url())
        helpers.wait_worker_ready(page)
        ms = page.evaluate("""async (reqs) => {
            const b = window.tamisTest.bridge;
            await b.callJSON(reqs[0]);
            const t = performance.now();
            for (const r of reqs) await b.callJSON(r);
            return performance.now() - t;
        }""", requests)
        context.close()
        return ms
    finally:
        site.stop()


def fmt(values: list[float]) -> str:
    return (f"median {statistics.median(values):.0f} ms (min {min(values):.0f}, max {max(values):.0f}, "
            f"n={len(values)})")


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--runs", type=int, default=5, help="offline reloads per install mode (default 5)")
    parser.add_argument("--batch", type=int, default=3, help="repetitions of the golden batch (default 3)")
    args = parser.parse_args(argv)
    from playwright.sync_api import sync_playwright

    count, total, packed = precache_bytes()
    print(f"precache: {count} files, {total:,} bytes, {packed:,} bytes gzip -9 ({packed / total:.0%})")
    with sync_playwright() as p:
        browser = helpers.launch_chromium(p)
        print(f"browser: {browser.version}")
        print(f"load average before: {os.getloadavg()[0]:.1f} on {os.cpu_count()} CPUs")
        t0 = time.perf_counter()
        figures = boot_figures(browser, args.runs, ("unpack", "micropip"))
        for mode, fig in figures.items():
            print(f"install={mode}: first visit (online, empty cache) ready at {fig['cold_ms']:.0f} ms; "
                  f"offline reload, warm cache: {fmt(fig['warm_ms'])}; install step alone: {fmt(fig['install_ms'])}")
            print(f"  worker stage timings, first visit: {fig['cold_timings']}")
            print(f"  worker stage timings, last offline reload: {fig['warm_timings']}")
        print(f"  [{time.perf_counter() - t0:.0f} s; load average after: {os.getloadavg()[0]:.1f}]")
        requests = batch_requests(args.batch)
        if not requests:
            print("batch: no ok golden requests of " + ", ".join(BATCH_OPS) + " found; skipped")
        else:
            worker = worker_batch_ms(browser, requests)
            cpython = cpython_batch_ms(requests)
            print(f"batch of {len(requests)} requests: worker {worker:.0f} ms "
                  f"({worker / len(requests):.1f} ms each, bridge round trip included), "
                  f"CPython {cpython:.0f} ms ({cpython / len(requests):.1f} ms each); "
                  f"ratio worker/CPython {worker / cpython:.2f}")
        browser.close()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
