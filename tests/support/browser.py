"""Driving Debian's Chromium with Playwright in browser tests (never `playwright install`)."""

from collections.abc import Iterator
from contextlib import contextmanager

from django.db import connections
from playwright.sync_api import Page, sync_playwright

from tests.factories import PASSWORD

CHROMIUM = "/usr/bin/chromium"
# Without these, Chromium keeps trying to reach its vendor's services through this machine's closed network.
CHROMIUM_ARGS = ["--disable-background-networking", "--disable-component-update", "--disable-sync", "--no-first-run"]


@contextmanager
def chromium_page(*, timeout_ms: int = 20_000) -> Iterator[Page]:
    with sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        try:
            page = browser.new_context().new_page()
            page.set_default_timeout(timeout_ms)
            yield page
        finally:
            browser.close()
            # ORM calls made while Playwright's loop runs open their own connection; left open, it
            # keeps PostgreSQL from dropping the test database at the end of the session.
            connections.close_all()


def sign_in(page: Page, base_url: str, username: str) -> None:
    page.goto(f"{base_url}/accounts/login/")
    page.fill("input[name='username']", username)
    page.fill("input[name='password']", PASSWORD)
    page.get_by_role("button", name="Sign in").click()
