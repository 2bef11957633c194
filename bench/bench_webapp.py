"""Web platform figures, printed (never asserted), each beside its target (issue 17) and, with
``--baseline REV``, beside that revision's app built in a temporary directory and measured in the same run.

    .venv/bin/python bench/bench_webapp.py [--runs 5] [--batch 3] [--baseline REV] [--no-throttled]

1. Navigation -> Python worker ready, warm cache and offline (service worker),
   median / min / max over ``--runs`` reloads, for each boot path: ``snapshot``
   (the default: restored from the memory snapshot the first visit made on the
   device), ``plain`` (``snapshot=off``: CPython started, the wheel unpacked by
   ``pyodide.unpackArchive``) and ``micropip`` (plain, the wheel installed by
   ``micropip.install`` from a same-origin URL); plus one cold first visit of
   each (online, empty cache), how many reloads really used the snapshot, how
   long after navigation the page created the worker, and the bytes the snapshot
   takes on the device. A ``--baseline`` build (no snapshot boot) is measured on
   its plain paths, and each path of this checkout is printed beside them.
2. Bytes precached: total and gzip -9 compressed, from the build manifest.
3. The same batch of requests (every ``ok`` golden request of the evaluate,
   zones, design_band and gradation ops, ``--batch`` times) in the worker
   (through the bridge, one round trip per request, once the precache is done
   and each op has been used once) and in CPython (the same wheel, warm), as
   a ratio, measured side by side in one run; beside it the first pass of
   each, the batch in one bridge call, and the core alone in Node Pyodide
   (``bench/bench_pyodide_core.mjs``).
4. A first visit on a throttled link (5 Mbit/s, 100 ms per response, one link
   shared by every response of the server, ``serve.SlowLink``, so the page, its
   Python worker and the service worker's precache all wait on it): the time to a ready calculator and to "ready offline", how many
   times the server sent each big runtime file (200 responses), and how many
   distinct progress figures the boot status showed before ready.

Targets: offline warm boot <= 0.5 s; precache <= 9 MB gzip; worker/CPython <= 3; each big file downloaded
once on a first visit.

Needs ``make build`` and Debian's chromium (env ``CHROMIUM``).
"""

from __future__ import annotations

import argparse
import contextlib
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
    """Navigation -> ready (the bridge's ready status on the test page; on the app page, the moment its boot line
    says the calculator is ready, performance mark "tamis-calculator-ready" in src/main.js)."""
    if page.app:
        page.wait_for_function("() => performance.getEntriesByName('tamis-calculator-ready').length",
                               timeout=helpers.BOOT_TIMEOUT_MS)
        return page.evaluate("() => performance.getEntriesByName('tamis-calculator-ready')[0].startTime")
    helpers.wait_worker_ready(page)
    return page.evaluate("() => window.tamisTest.statuses.find(s => s.ready).at_ms")


def ready_status(page) -> dict:
    if page.app:
        return page.evaluate("async () => (await import('/src/bridge.js')).currentStatus()")
    return page.evaluate("() => window.tamisTest.statuses.find(s => s.ready)")


#: The boot paths measured: the page query of each. "snapshot" is the default boot (from the memory snapshot
#: the first visit made on the device); "plain" and "micropip" never use one (``snapshot=off``); "app" is the
#: default boot of the app itself (index.html, its screens loading beside the boot), the others the e2e test
#: page (the bridge and the service worker only).
PATHS = {"snapshot": "install=unpack", "plain": "install=unpack&snapshot=off",
         "micropip": "install=micropip&snapshot=off", "app": ""}
SETTLE_MS = 1500
SNAPSHOT_DONE = "() => window.tamisTest.snapshots.some(s => ['saved', 'failed', 'skipped'].includes(s.state))"


def boot_figures(browser, runs: int, paths: dict[str, tuple[str, ...]], webapps: dict[str, Path]) -> dict:
    """First visit of each build and boot path (one context each; for the snapshot path, until the snapshot is
    saved), then offline reloads alternating between all of them, so a machine loaded by other work slows each
    alike. ``paths``: build name -> the paths measured on it (a build before the snapshot boot has none)."""
    sites = {name: helpers.Site(webapp=w) for name, w in webapps.items()}
    figures = {}
    try:
        pages = {}
        for name, site in sites.items():
            for path in paths[name]:
                context = browser.new_context()
                page = context.new_page()
                page.app = path == "app"
                page.goto(site.url if page.app else site.page_url(query=PATHS[path]))
                cold = ready_ms(page)
                figures[(name, path)] = {"cold_ms": cold, "warm_ms": [], "boots": [], "after_nav_ms": [],
                                         "cold_timings": ready_status(page)["timings"]}
                if page.app:
                    page.wait_for_function("() => document.getElementById('offline-status').dataset.state === 'ready'",
                                           timeout=120_000)
                    # the app shows nothing of the snapshot: wait for its entry to be complete in Cache Storage
                    page.wait_for_function("""() => caches.open('tamis.snapshot').then((c) => c.match(
                        '/__tamis_snapshot__/python.bin')).then((r) => r ? r.arrayBuffer().then((b) => b.byteLength ==
                        Number(r.headers.get('content-length'))) : false)""", timeout=120_000, polling=500)
                    page.wait_for_timeout(1000)
                else:
                    helpers.wait_precached(page)
                helpers.wait_controlled(page)
                if path == "snapshot":
                    page.wait_for_function(SNAPSHOT_DONE, timeout=120_000)
                    figures[(name, path)]["made"] = page.evaluate(
                        "() => window.tamisTest.snapshots.filter(s => s.state !== 'waiting' && s.state !== 'making').pop()")
                context.set_offline(True)
                pages[(name, path)] = page
        for _ in range(runs):
            for key, page in pages.items():
                response = page.reload()
                assert response.from_service_worker
                figures[key]["warm_ms"].append(ready_ms(page))
                ready = ready_status(page)
                timings = ready["timings"]
                figures[key]["boots"].append(ready.get("boot", "plain"))
                if ready.get("worker_time_origin"):
                    figures[key]["after_nav_ms"].append(
                        ready["worker_time_origin"] - page.evaluate("() => performance.timeOrigin"))
                figures[key].setdefault("install_ms", []).append(
                    timings["core_installed_ms"] - timings["python_started_ms"])
                figures[key]["warm_timings"] = timings
                # Let this page finish what follows its boot (the worker's warm-up imports, the offline check of
                # every cached file) before the next context reloads, so one boot is not measured against
                # another page's background work (2 CPUs).
                page.wait_for_timeout(SETTLE_MS)
        if any("snapshot" in p for p in paths.values()):
            figures["device_storage"] = {key: page.evaluate(
                "() => navigator.storage.estimate().then(e => e.usage)") for key, page in pages.items()}
        for page in pages.values():
            page.context.close()
        return figures
    finally:
        for site in sites.values():
            site.stop()


BIG = ("/vendor/pyodide/pyodide.asm.wasm", "/vendor/pyodide/python_stdlib.zip", "/vendor/pyodide/pyodide.asm.mjs")
LINK = {"mbit_s": 5.0, "latency_ms": 100.0}


def throttled_first_visit(browser, webapp: Path) -> dict:
    """First visit (empty cache) on the emulated slow link: ready, ready offline, downloads of the big files."""
    # The server sends every response through one shared slow link (serve.SlowLink): the page, its Python
    # worker and the service worker's precache all wait on it. (Chromium's CDP network emulation of the page
    # covered the page and its worker but not the service worker, whose precache then ran at full speed.)
    site = helpers.Site(webapp=webapp, link=helpers.serve.SlowLink(LINK["mbit_s"] * 1e6 / 8, LINK["latency_ms"] / 1000))
    try:
        context = browser.new_context()
        page = context.new_page()
        t0 = time.perf_counter()
        page.goto(site.page_url())
        helpers.wait_worker_ready(page, timeout_ms=600_000)
        ready_s = time.perf_counter() - t0
        helpers.wait_precached(page, timeout_ms=600_000)
        offline_s = time.perf_counter() - t0
        statuses = page.evaluate("() => window.tamisTest.statuses")
        before_ready = [s for s in statuses if not s.get("ready")]
        figures = len({(s.get("detail"), s.get("progress")) for s in before_ready})
        longest = max((b["at_ms"] - a["at_ms"] for a, b in zip(before_ready, before_ready[1:])), default=0.0)
        context.close()
        sent = {p: sum(1 for q, code in site.server.statuses if q == p and code == 200) for p in BIG}
        return {"ready_s": ready_s, "offline_s": offline_s, "sent": sent, "figures": figures,
                "longest_still_s": longest / 1000.0}
    finally:
        site.stop()


def precache_bytes(webapp: Path = helpers.WEBAPP) -> tuple[int, int, int]:
    manifest = helpers.read_manifest(webapp)
    total = packed = 0
    for entry in manifest["files"]:
        data = (webapp / entry["path"]).read_bytes()
        total += len(data)
        packed += len(gzip.compress(data, 9, mtime=0))
    return len(manifest["files"]), total, packed


def batch_requests(repeat: int) -> list[str]:
    reqs = []
    for name, req, resp in helpers.golden_cases():
        if name.split("-", 1)[0] in BATCH_OPS and resp and json.loads(resp).get("ok"):
            reqs.append(req)
    return reqs * repeat


#: Warm passes of the batch after the first, in the worker and in CPython alike; the fastest is kept (a machine
#: loaded by other work slows some passes).
WARM_PASSES = 3


def cpython_batch_ms(requests: list[str], webapp: Path = helpers.WEBAPP) -> dict:
    """``{"first_ms", "ms"}``: the batch in CPython on the built wheel, in a fresh process: its first pass
    (each op's module imported at its first request, as in a fresh worker) and the fastest of
    :data:`WARM_PASSES` passes after it (warm)."""
    wheel = webapp / helpers.read_manifest(webapp)["wheel"]
    code = (f"import sys, json, time; sys.path.insert(0, {str(wheel)!r}); import tamis.api as a; "
            "reqs = json.load(sys.stdin); a.handle(reqs[0]); out = []\n"
            f"for _ in range(1 + {WARM_PASSES}):\n"
            "    t = time.perf_counter(); [a.handle(r) for r in reqs]; out.append((time.perf_counter() - t) * 1000)\n"
            "print(json.dumps(out))")
    out = subprocess.run([sys.executable, "-I", "-S", "-c", code], input=json.dumps(requests),
                         capture_output=True, text=True, check=True)
    first, *warm = json.loads(out.stdout)
    return {"first_ms": first, "ms": min(warm)}


def worker_batch_ms(browser, requests: list[str], webapp: Path = helpers.WEBAPP) -> dict:
    """The batch in the worker of a fresh context, once its service worker has precached the whole site (so
    the background download and the cache writes of a first visit do not share the measurement):

    - ``first_ms``: the first pass, one bridge call awaited after the other, each op's module imported at
      its first request (what a user's first asks of a session wait);
    - ``ms`` (the headline): the fastest of :data:`WARM_PASSES` passes after it, the same way, each request a
      bridge round trip awaited before the next, as the entry screen asks (what a user waits per ask once the
      session is warm);
    - ``one_call_ms``: the same requests sent in one bridge batch call, answered one after the other in the
      worker: the time spent in the worker plus a single round trip (not a figure any user waits for;
      beside the headline it shows what the per-request round trips cost);
    - ``version_ms``: one round trip of the ``version`` op (next to nothing to compute), the mean of 100: what
      the seam alone costs per request (bridge, postMessage both ways, the worker's call of handle).
    """
    site = helpers.Site(webapp=webapp)
    try:
        context = browser.new_context()
        page = context.new_page()
        page.goto(site.page_url())
        helpers.wait_worker_ready(page)
        helpers.wait_precached(page)
        figures = page.evaluate("""async ([reqs, WARM_PASSES]) => {
            const b = window.tamisTest.bridge;
            await b.callJSON(reqs[0]);
            const pass = async () => {
                const t = performance.now();
                for (const r of reqs) await b.callJSON(r);
                return performance.now() - t;
            };
            const first_ms = await pass();
            let ms = Infinity;
            for (let i = 0; i < WARM_PASSES; i += 1) ms = Math.min(ms, await pass());
            let t = performance.now();
            await b.callBatch(reqs);
            const one_call_ms = performance.now() - t;
            const version = '{"schema":1,"op":"version","id":0}';
            t = performance.now();
            for (let i = 0; i < 100; i += 1) await b.callJSON(version);
            const version_ms = (performance.now() - t) / 100;
            return { first_ms, ms, one_call_ms, version_ms };
        }""", [requests, WARM_PASSES])
        context.close()
        return figures
    finally:
        site.stop()


def node_pyodide_core() -> str:
    """The closing lines of ``bench/bench_pyodide_core.mjs`` (the core alone in Node Pyodide beside CPython,
    on the golden evaluate requests), or why they are missing."""
    r = subprocess.run(["node", str(ROOT / "bench" / "bench_pyodide_core.mjs")], capture_output=True, text=True)
    if r.returncode != 0:
        return f"bench_pyodide_core.mjs failed: {r.stderr.strip()[-300:]}"
    return "\n".join("  " + line for line in r.stdout.strip().splitlines())


def batch_figures(browser, webapps: dict[str, Path], repeat: int) -> None:
    """Part 3: the batch in the worker and in CPython, alternating rounds with the fastest of each kept (a
    loaded machine slows both alike), printed with the core-only Node Pyodide figures beside them."""
    requests = batch_requests(repeat)
    if not requests:
        print("batch: no ok golden requests of " + ", ".join(BATCH_OPS) + " found; skipped")
        return
    best: dict[str, dict] = {}
    for _ in range(3):
        for name, webapp in webapps.items():
            w, c = worker_batch_ms(browser, requests, webapp), cpython_batch_ms(requests, webapp)
            old = best.setdefault(name, {})
            for k, v in [(f"worker {k}", v) for k, v in w.items()] + [(f"cpython {k}", v) for k, v in c.items()]:
                old[k] = min(old.get(k, float("inf")), v)
    n = len(requests)
    for name, f in best.items():
        worker, cpython = f["worker ms"], f["cpython ms"]
        print(f"{name}: batch of {n} requests ({', '.join(BATCH_OPS)}), precache done, warm: worker {worker:.0f} ms "
              f"({worker / n:.2f} ms each, bridge round trip included), CPython {cpython:.0f} ms "
              f"({cpython / n:.2f} ms each); ratio worker/CPython {worker / cpython:.2f} (target <= 3)")
        print(f"  first pass (each op imported at its first request): worker {f['worker first_ms']:.0f} ms, "
              f"CPython {f['cpython first_ms']:.0f} ms, ratio {f['worker first_ms'] / f['cpython first_ms']:.2f}; "
              f"the same requests in one bridge call (time in the worker plus one round trip): "
              f"{f['worker one_call_ms']:.0f} ms ({f['worker one_call_ms'] / n:.2f} ms each), ratio to CPython "
              f"{f['worker one_call_ms'] / cpython:.2f}; one round trip of the version op (the seam alone): "
              f"{f['worker version_ms']:.2f} ms")
    print("the core alone in Node Pyodide (no browser, worker or bridge):\n" + node_pyodide_core())


def fmt(values: list[float]) -> str:
    return (f"median {statistics.median(values):.0f} ms (min {min(values):.0f}, max {max(values):.0f}, "
            f"n={len(values)})")


def print_boot_figures(figures: dict, paths: dict) -> None:
    storage = figures.pop("device_storage", {})
    for (name, path), fig in figures.items():
        beside = ""
        base = figures.get(("baseline", BASELINE_PATH[path]))
        if base and name == "now":
            beside = f"; baseline {BASELINE_PATH[path]}: {fmt(base['warm_ms'])}"
        boots = fig["boots"]
        where = "the app page" if path == "app" else f"test page, {PATHS[path]}"
        print(f"{name}, boot path {path} ({where}): offline reload, warm cache, navigation -> ready: "
              f"{fmt(fig['warm_ms'])} (target <= 500 ms){beside}")
        print(f"  boots that used the snapshot: {boots.count('snapshot')} of {len(boots)}; first visit (online, "
              f"empty cache, always plain) ready at {fig['cold_ms']:.0f} ms; install or restore step alone: "
              f"{fmt(fig['install_ms'])}")
        if fig["after_nav_ms"]:
            print(f"  the page created the worker {fmt(fig['after_nav_ms'])} after navigation")
        if "made" in fig:
            made = fig["made"] or {}
            if made.get("state") == "saved":
                print(f"  snapshot on the device: {made['stored_bytes']:,} bytes stored (sparse; "
                      f"{made['raw_bytes']:,} bytes raw), made in the background in {made['ms']} ms; "
                      f"origin's storage in use: {storage.get((name, path), 0):,} bytes "
                      f"(plain path's context: {storage.get((name, 'plain'), 0):,})")
            else:
                print(f"  no snapshot on the device: {made}")
        print(f"  worker stage timings, first visit: {fig['cold_timings']}")
        print(f"  worker stage timings, last offline reload: {fig['warm_timings']}")


#: The baseline's figure each boot path is printed beside (the baseline has no snapshot boot).
BASELINE_PATH = {"snapshot": "plain", "plain": "plain", "micropip": "micropip", "app": None}


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--runs", type=int, default=5, help="offline reloads per install mode (default 5)")
    parser.add_argument("--batch", type=int, default=3, help="repetitions of the golden batch (default 3)")
    parser.add_argument("--baseline", metavar="REV", help="git revision measured beside this checkout")
    parser.add_argument("--no-throttled", action="store_true", help="skip the first visit on the slow link")
    args = parser.parse_args(argv)
    from playwright.sync_api import sync_playwright

    sys.path.insert(0, str(ROOT / "bench"))
    import baseline_site

    with contextlib.ExitStack() as stack:
        webapps = {"now": helpers.WEBAPP}
        if args.baseline:
            webapps["baseline"] = stack.enter_context(baseline_site.built(args.baseline))
        for name, webapp in webapps.items():
            count, total, packed = precache_bytes(webapp)
            print(f"{name}: precache {count} files, {total:,} bytes, {packed:,} bytes gzip -9 ({packed / total:.0%}); "
                  f"target <= 9,000,000 bytes gzip")
        with sync_playwright() as p:
            browser = helpers.launch_chromium(p)
            print(f"browser: {browser.version}")
            print(f"load average before: {os.getloadavg()[0]:.1f} on {os.cpu_count()} CPUs")
            t0 = time.perf_counter()
            paths = {name: tuple(PATHS) if name == "now" else ("plain", "micropip") for name in webapps}
            figures = boot_figures(browser, args.runs, paths, webapps)
            print_boot_figures(figures, paths)
            print(f"  [{time.perf_counter() - t0:.0f} s; load average after: {os.getloadavg()[0]:.1f}]")
            batch_figures(browser, webapps, args.batch)
            if not args.no_throttled:
                print(f"first visit on a throttled link ({LINK['mbit_s']:g} Mbit/s, {LINK['latency_ms']:g} ms, "
                      "the server's link, shared by the page, its worker and the service worker):")
                for name, webapp in webapps.items():
                    f = throttled_first_visit(browser, webapp)
                    sent = ", ".join(f"{p.rsplit('/', 1)[-1]} x{n}" for p, n in f["sent"].items())
                    print(f"  {name}: calculator ready at {f['ready_s']:.1f} s, ready offline at {f['offline_s']:.1f} s; "
                          f"big files sent by the server: {sent} (target x1 each); {f['figures']} distinct boot "
                          f"status figures before ready, the longest without a change {f['longest_still_s']:.1f} s")
            browser.close()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
