"""Browser fixtures: the app served on 127.0.0.1 in a thread, and Debian's chromium driven
by Playwright. The tests skip, saying why, only where /usr/bin/chromium is absent."""

from __future__ import annotations

import re
import threading
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import pytest
from werkzeug.serving import make_server

CHROMIUM = Path("/usr/bin/chromium")
CHROMIUM_ARGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]
SCREENSHOTS = Path(__file__).resolve().parents[2] / "test-artifacts" / "screenshots"


@dataclass
class LiveServer:
    url: str
    app: object

    def at(self, path: str) -> str:
        return self.url + path


def serve(app) -> Iterator[LiveServer]:
    """Serve ``app`` on a free port of 127.0.0.1 from a thread until the generator closes."""
    server = make_server("127.0.0.1", 0, app, threaded=True)
    thread = threading.Thread(target=server.serve_forever, name="whyfired-live", daemon=True)
    thread.start()
    try:
        yield LiveServer(url=f"http://127.0.0.1:{server.server_port}", app=app)
    finally:
        server.shutdown()
        thread.join(timeout=5)


@pytest.fixture
def live_server(app) -> Iterator[LiveServer]:
    """The test app (``app`` from tests/conftest.py, an empty store) on 127.0.0.1."""
    yield from serve(app)


@pytest.fixture
def demo_live_server(demo_app) -> Iterator[LiveServer]:
    """A private copy of the demo store (``demo_app`` from tests/conftest.py) on 127.0.0.1."""
    yield from serve(demo_app)


@pytest.fixture(scope="session")
def chromium():
    if not CHROMIUM.exists():
        pytest.skip(f"browser tests need Debian's chromium at {CHROMIUM}, which is absent")
    from playwright.sync_api import sync_playwright

    with sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=str(CHROMIUM), args=CHROMIUM_ARGS)
        yield browser
        browser.close()


@pytest.fixture
def page(chromium):
    """A fresh browser tab (own cookies) that fails the test on any JavaScript error."""
    context = chromium.new_context(viewport={"width": 1360, "height": 900})
    tab = context.new_page()
    errors: list[str] = []
    tab.on("pageerror", lambda exc: errors.append(str(exc)))
    tab.set_default_timeout(15_000)
    yield tab
    context.close()
    assert not errors, f"JavaScript errors on the page: {errors}"


@pytest.fixture
def screenshot(request):
    """``screenshot(page, "name")`` saves test-artifacts/screenshots/<test>-<name>.png."""
    SCREENSHOTS.mkdir(parents=True, exist_ok=True)
    test_name = re.sub(r"[^A-Za-z0-9_.-]+", "_", request.node.name)

    def take(tab, name: str, full_page: bool = True) -> Path:
        path = SCREENSHOTS / f"{test_name}-{name}.png"
        tab.screenshot(path=str(path), full_page=full_page)
        return path

    return take


@pytest.fixture
def keyboard_reaches():
    """``keyboard_reaches(tab, selector)``: Tab until that element has the focus."""
    return tab_until


@pytest.fixture
def unlabelled():
    """``unlabelled(tab)``: the visible form controls that have no accessible name."""
    return unlabelled_controls


def tab_until(tab, selector: str, limit: int = 60) -> bool:
    """Press Tab until the element matching ``selector`` has the focus."""
    for _ in range(limit):
        tab.keyboard.press("Tab")
        if tab.evaluate(
            "sel => document.activeElement && document.activeElement.matches(sel)", selector
        ):
            return True
    return False


def unlabelled_controls(tab) -> list[str]:
    """Visible form controls without an accessible name (label, aria-label, aria-labelledby)."""
    return tab.evaluate(
        """() => [...document.querySelectorAll('input, select, textarea, button')]
              .filter(el => el.type !== 'hidden' && el.offsetParent !== null)
              .filter(el => {
                  if (el.tagName === 'BUTTON')
                      return !el.textContent.trim() && !el.getAttribute('aria-label');
                  return !(el.labels && el.labels.length) && !el.getAttribute('aria-label')
                         && !el.getAttribute('aria-labelledby');
              })
              .map(el => el.outerHTML.slice(0, 120))"""
    )
