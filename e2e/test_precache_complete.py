"""The precache holds everything the core needs: with the network cut and the server stopped, the Python
worker boots from the service worker's cache in both install modes (the tamis wheel unpacked, or installed
by micropip, which imports more of the stdlib) and answers every golden request byte for byte.

The stdlib in the precache is trimmed (bytecode only, development and server modules left out:
scripts/pyodide_bytecode.py ``STDLIB_LEFT_OUT``, docs/decisions.md); ``tests/pyodide/stdlib_complete.mjs``
checks module by module that nothing the core, its self-test, Pyodide's start or micropip imports is
missing, and this test checks the same in the browser, from the cache alone.
"""

from __future__ import annotations

import pytest

import helpers

pytestmark = pytest.mark.e2e


@pytest.mark.parametrize("mode", ["unpack", "micropip"])
def test_offline_from_the_precache_alone_every_op_answers(page, site, context, mode):
    # snapshot=off: the plain boot in this install mode, whether or not the background snapshot was saved before
    # the reload (the snapshot boot from the cache alone: e2e/test_boot_snapshot.py)
    page.goto(site.page_url(query=f"install={mode}&snapshot=off"))
    helpers.wait_worker_ready(page)
    helpers.wait_precached(page)
    helpers.wait_controlled(page)
    context.set_offline(True)
    site.stop()
    response = page.reload()
    assert response.from_service_worker
    ready = helpers.wait_worker_ready(page)
    assert ready["install"] == mode
    cases = helpers.golden_cases()
    answers = page.evaluate("(reqs) => Promise.all(reqs.map((r) => window.tamisTest.bridge.callJSON(r)))",
                            [req for _, req, _ in cases])
    differing = [name for (name, _, want), got in zip(cases, answers) if got != want]
    assert not differing, differing
    assert len(cases) >= 20
    assert page.console_errors == []
