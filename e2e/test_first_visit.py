"""A first visit on a slow link: each file of the build is downloaded once, though the Python worker's
boot and the service worker's precache both need the big runtime files at the same time, and the boot
status moves with the bytes received.

The link is emulated through the DevTools protocol (``Network.emulateNetworkConditions`` on the page,
which the page's Python worker shares; 40 Mbit/s and 20 ms here, so the test stays short while the 18 MB
of the runtime still take seconds). Downloads are counted by the server: a 200 is a download, a 304 a
confirmation of the browser's HTTP cache.
"""

from __future__ import annotations

from collections import Counter

import pytest

import helpers

pytestmark = pytest.mark.e2e

BIG = ("/vendor/pyodide/pyodide.asm.wasm", "/vendor/pyodide/python_stdlib.zip", "/vendor/pyodide/pyodide.asm.mjs")


def _throttle(context, page, mbit_s: float, latency_ms: float) -> None:
    cdp = context.new_cdp_session(page)
    cdp.send("Network.enable")
    cdp.send("Network.emulateNetworkConditions", {"offline": False, "latency": latency_ms,
                                                  "downloadThroughput": mbit_s * 1e6 / 8,
                                                  "uploadThroughput": mbit_s * 1e6 / 8})


def test_first_visit_downloads_each_file_once_and_shows_the_bytes(page, site, context):
    _throttle(context, page, 40, 20)
    page.goto(site.page_url())
    helpers.wait_worker_ready(page, timeout_ms=120_000)
    helpers.wait_precached(page)
    downloads = Counter(path for path, code in site.server.statuses if code == 200)
    for path in BIG:
        assert downloads[path] == 1, f"{path} downloaded {downloads[path]} times"
    manifest_paths = {"/" + f["path"] for f in site.manifest["files"]}
    twice = {p: n for p, n in downloads.items() if n > 1 and p in manifest_paths}
    assert not twice, f"files of the build downloaded more than once: {twice}"
    assert all(downloads["/" + f["path"]] <= 1 for f in site.manifest["files"])

    # The boot status counted the bytes: several figures on the way, rising, ending at the whole runtime.
    runtime = page.evaluate("() => window.tamisTest.statuses.filter(s => typeof s.bytes === 'number')")
    figures = [s["bytes"] for s in runtime]
    assert len(set(figures)) >= 4, figures
    assert figures == sorted(figures)
    sizes = {"/" + f["path"]: f["size"] for f in site.manifest["files"]}
    assert runtime[-1]["bytes"] == runtime[-1]["total_bytes"] == sum(sizes[p] for p in BIG)
    assert " of " in runtime[0]["detail"] and "MB" in runtime[0]["detail"]
    progress = [s["progress"] for s in page.evaluate("() => window.tamisTest.statuses")]
    assert progress == sorted(progress)
    # The offline state counted bytes too, up to the whole site.
    states = page.evaluate("() => window.tamisTest.offlineStates.filter(s => typeof s.bytes === 'number')")
    assert len({s["bytes"] for s in states}) >= 4
    assert states[-1]["precached"] and states[-1]["bytes"] == states[-1]["total_bytes"] == sum(sizes.values())

    # Everything the boot read is in the cache of this build: an offline reload boots from it.
    context.set_offline(True)
    page.reload()
    helpers.wait_worker_ready(page)


def test_a_boot_the_service_worker_does_not_control_reads_the_cache(page, site, context):
    # After a full first visit, a page that no service worker controls (as after a forced reload, or once the
    # worker is gone) still boots its Python worker from the cache of this build, with no new download of
    # the runtime, even with the browser's HTTP cache cleared.
    page.goto(site.page_url())
    helpers.wait_worker_ready(page)
    helpers.wait_precached(page)
    other = context.new_page()
    other.goto(site.page_url(query="fresh=1"))
    other.evaluate("() => navigator.serviceWorker.getRegistrations().then((rs) => Promise.all(rs.map((r) => r.unregister())))")
    cdp = context.new_cdp_session(other)
    cdp.send("Network.clearBrowserCache")   # the HTTP cache cannot answer: only Cache Storage can
    before = len(site.server.statuses)
    other.reload()
    assert other.evaluate("() => navigator.serviceWorker.controller") is None
    helpers.wait_worker_ready(other)
    after = Counter(path for path, code in site.server.statuses[before:] if code == 200)
    # The wasm runtime and the stdlib (16.7 MB) come from the cache; pyodide.asm.mjs (1.3 MB) is a module
    # import, which only the service worker or the HTTP cache can answer, so here it is downloaded again.
    assert not any(after[p] for p in BIG[:2]), dict(after)
    other.close()
