"""Browser-test harness: the app served in-process on 127.0.0.1, driven by Debian's
headless Chromium through Playwright (``executable_path``; no browser download).

One server and one browser per test module; a fresh page (and context, so downloads
and storage never leak between tests) per test. Every page records console errors and
uncaught page errors; tests assert there are none.
"""

from __future__ import annotations

import logging
import threading
from pathlib import Path

import pytest

from appharness import CHROMIUM, FLAGS

ARTEFACTS = Path(__file__).resolve().parents[1] / "artefacts"
#: Console messages that are the software renderer talking, not the app failing.
BENIGN = ("GL Driver Message", "willReadFrequently", "GPU stall")


def pytest_collection_modifyitems(config, items):
    if Path(CHROMIUM).exists():
        return
    skip = pytest.mark.skip(reason=f"no Chromium at {CHROMIUM}: install Debian's chromium "
                                   "(make test does it as root)")
    for item in items:
        if "browser" in item.keywords:
            item.add_marker(skip)


@pytest.fixture(scope="module")
def server():
    """The app on a free loopback port (werkzeug, threaded, in a daemon thread)."""
    from werkzeug.serving import make_server
    from solsphere.app import fairshare
    from solsphere.app.server import create_app
    logging.getLogger("werkzeug").setLevel(logging.ERROR)  # no request log in test output
    with pytest.MonkeyPatch.context() as mp:
        # Background jobs run at the tests' own priority here. At nice +10, beside the
        # other test worker and the slow set's served load tests, a job that takes a
        # second could wait minutes for the processor, and the page tests would fail
        # for the design. The jobs' lower priority is tested in test_app_workers.
        mp.setattr(fairshare, "NICENESS", 0)
        dash_app = create_app()
        srv = make_server("127.0.0.1", 0, dash_app.server, threaded=True)
        thread = threading.Thread(target=srv.serve_forever, daemon=True)
        thread.start()
        yield f"http://127.0.0.1:{srv.server_port}/"
        srv.shutdown()
        thread.join(timeout=5)


@pytest.fixture(scope="module")
def browser():
    """Headless Chromium; Playwright gives it a fresh temporary profile of its own
    (it refuses a --user-data-dir flag on ``launch``)."""
    from playwright.sync_api import sync_playwright
    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, headless=True, args=FLAGS)
        yield b
        b.close()


class Page:
    """A Playwright page plus the console errors it has seen."""

    def __init__(self, page):
        self.page = page
        self.errors: list[str] = []
        page.on("console", self._console)
        page.on("pageerror", lambda exc: self.errors.append(f"page error: {exc}"))

    def _console(self, msg):
        if msg.type == "error" and not any(b in msg.text for b in BENIGN):
            self.errors.append(f"console error: {msg.text}")

    def __getattr__(self, name):
        return getattr(self.page, name)


@pytest.fixture
def page(browser, server):
    ctx = browser.new_context(viewport={"width": 1500, "height": 1000}, accept_downloads=True)
    pg = Page(ctx.new_page())
    pg.set_default_timeout(20_000)
    pg.goto(server)
    pg.wait_for_selector("#results-table")
    yield pg
    ctx.close()


@pytest.fixture(scope="session")
def artefacts() -> Path:
    """Folder for screenshots and downloads (gitignored)."""
    ARTEFACTS.mkdir(parents=True, exist_ok=True)
    return ARTEFACTS
