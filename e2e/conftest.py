"""Fixtures of the e2e suite: the served site, Debian's chromium, a fresh context per test.

- ``browser`` (session): Debian's chromium through Playwright's ``executable_path``.
- ``site``: ``scripts/serve.py`` on a free port (a new one per test, so every
  test starts with no service worker, no cache and an empty request log).
- ``context`` / ``page``: a fresh browser context per test; its ``guard``
  fails the test at teardown if any request left the site's origin.
- ``console_errors``: page errors and console errors seen by ``page``.

Run after ``make build`` (``make test-e2e`` does both).
"""

from __future__ import annotations

import pytest

import helpers


@pytest.fixture(scope="session")
def playwright_driver():
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        yield p


@pytest.fixture(scope="session")
def browser(playwright_driver):
    browser = helpers.launch_chromium(playwright_driver)
    yield browser
    browser.close()


@pytest.fixture
def site():
    site = helpers.Site()
    yield site
    site.stop()


@pytest.fixture
def context(browser, site):
    context = browser.new_context(viewport={"width": 390, "height": 844})
    context.guard = helpers.RequestGuard(context, site.origin)
    yield context
    context.close()
    context.guard.assert_clean()


@pytest.fixture
def guard(context):
    return context.guard


@pytest.fixture
def page(context):
    page = context.new_page()
    page.set_default_timeout(helpers.BOOT_TIMEOUT_MS)
    page.console_errors = []
    page.on("pageerror", lambda err: page.console_errors.append(f"pageerror: {err}"))
    page.on("console", lambda msg: msg.type == "error" and page.console_errors.append(f"console: {msg.text}"))
    yield page


@pytest.fixture
def console_errors(page):
    return page.console_errors
