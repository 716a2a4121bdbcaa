"""A headless Chromium (Debian's package, driven by Playwright) for the viewer's tests.

`.ci/run` installs the browser; where it is missing these tests fail and say how to install it.
Playwright is used with ``executable_path`` only: it never downloads a browser of its own.
"""

from __future__ import annotations

import os
import shutil
import tempfile
from pathlib import Path

import pytest

CHROMIUM = os.environ.get("CLEARWAY_CHROMIUM", "/usr/bin/chromium")
#: Chromium switches: headless, nothing fetched, nothing remembered between runs.
CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
                 "--no-first-run", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync"]


def launch(playwright, user_data_dir, *, width=1400, height=900):
    """A fresh Chromium context (own profile folder) with a `width` x `height` CSS px window."""
    return playwright.chromium.launch_persistent_context(
        str(user_data_dir), executable_path=CHROMIUM, headless=True, args=CHROMIUM_ARGS,
        viewport={"width": width, "height": height}, device_scale_factor=1)


@pytest.fixture(scope="session")
def browser_context():
    if not os.access(CHROMIUM, os.X_OK):
        pytest.fail(f"no Chromium at {CHROMIUM}: install Debian's `chromium` package "
                    "(.ci/run does) or set CLEARWAY_CHROMIUM", pytrace=False)
    from playwright import sync_api   # in the [test] extra
    profile = tempfile.mkdtemp(prefix="clearway-chromium-")
    try:
        with sync_api.sync_playwright() as playwright:
            context = launch(playwright, profile)
            try:
                yield context
            finally:
                context.close()
    finally:
        shutil.rmtree(profile, ignore_errors=True)


class Viewer:
    """One page of the viewer, with the console messages and page errors it produced."""

    def __init__(self, context, path: Path):
        self.page = context.new_page()
        self.messages: list[str] = []
        self.page.on("console", lambda message: self.messages.append(
            f"{message.type}: {message.text}"))
        self.page.on("pageerror", lambda error: self.messages.append(f"pageerror: {error}"))
        self.page.goto(Path(path).resolve().as_uri())
        self.page.wait_for_selector("body[data-ready='1']", timeout=20_000)

    def evaluate(self, script, argument=None):
        return self.page.evaluate(script, argument)

    def view(self) -> dict:
        return self.evaluate("window.clearwayViewer.view()")

    def settle(self) -> None:
        """Wait until the frame asked for has been drawn."""
        self.evaluate("new Promise(r => requestAnimationFrame(() => requestAnimationFrame(r)))")

    def click_drawing_point(self, x: float, y: float) -> None:
        """Click the plan at drawing point (x, y), metres."""
        px, py = self.evaluate("([x, y]) => window.clearwayViewer.toScreen(x, y)", [x, y])
        self.page.mouse.click(px, py)

    def canvas_png(self) -> bytes:
        self.settle()
        return self.page.locator("#plan").screenshot()

    def close(self):
        self.page.close()


@pytest.fixture
def open_viewer(browser_context):
    pages = []

    def opener(path):
        viewer = Viewer(browser_context, path)
        pages.append(viewer)
        return viewer
    yield opener
    for viewer in pages:
        viewer.close()
