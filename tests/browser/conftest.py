"""Real-browser fixtures: a uvicorn server on 127.0.0.1 and Debian's Chromium via playwright.

In CI (CI=true) a missing Chromium or playwright fails the tests instead of skipping them.
Every request the page makes is checked: anything not to 127.0.0.1 is blocked and fails.
"""

import os
import shutil
from pathlib import Path

import pytest

from tests.liveserver import LiveServer

CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
                 "--disable-sync", "--no-first-run", "--disable-quic"]


def _unavailable(reason: str):
    if os.environ.get("CI", "").lower() == "true":
        pytest.fail(f"browser tests must run in CI: {reason}")
    pytest.skip(reason)


@pytest.fixture(scope="session")
def live_server(tmp_path_factory):
    server = LiveServer(tmp_path_factory.mktemp("db") / "browser.sqlite3").start()
    yield server.url
    server.stop()


@pytest.fixture(scope="session")
def browser():
    if not Path(CHROMIUM).exists():
        _unavailable("Chromium is not installed (make test installs Debian's chromium when it can)")
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        _unavailable("the playwright package is not installed")
    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, headless=True, args=CHROMIUM_ARGS)
        yield b
        b.close()


class PageWatch:
    """Console errors, failed responses and requests that tried to leave the machine."""

    def __init__(self):
        self.console_errors, self.bad_responses, self.outside = [], [], []


@pytest.fixture
def page(browser, live_server):
    # playwright evaluates the tests' own predicates as strings, which the app's CSP (no eval)
    # forbids: the tests' context bypasses it; test_csp.py drives the pages under the real CSP
    context = browser.new_context(viewport={"width": 1440, "height": 1000}, accept_downloads=True, bypass_csp=True)
    pg = context.new_page()
    watch = PageWatch()

    def route(r):
        url = r.request.url
        if url.startswith(live_server) or url.startswith("blob:") or url.startswith("data:"):
            r.continue_()
        else:
            watch.outside.append(url)
            r.abort()

    pg.route("**/*", route)
    pg.on("console", lambda m: watch.console_errors.append(m.text) if m.type == "error" else None)
    pg.on("pageerror", lambda e: watch.console_errors.append(str(e)))
    pg.on("response", lambda resp: watch.bad_responses.append((resp.status, resp.url))
          if resp.status >= 400 and "/ui/results" not in resp.url else None)
    pg.watch = watch
    pg.base = live_server
    yield pg
    context.close()
    assert watch.outside == [], f"requests left the machine: {watch.outside}"
