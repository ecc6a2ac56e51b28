"""A real server and a real browser for end-to-end tests.

``LiveServer``: ``ohmpick``'s app under uvicorn in a thread on a random
loopback port, with its own temporary data folder.
``browser_page``: a Playwright page in Debian's Chromium that records every
request URL and every console error, so tests can assert that nothing left
127.0.0.1 and nothing failed.
"""

from __future__ import annotations

import socket
import threading
import time
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path

import uvicorn

from app.settings import Settings
from app.web import create_app
from tests.tools import require_binary

CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--no-first-run", "--disable-sync"]


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class LiveServer:
    def __init__(self, data_dir: Path, **settings):
        self.port = free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        self.app = create_app(Settings(data_dir=data_dir, **settings))
        config = uvicorn.Config(self.app, host="127.0.0.1", port=self.port, log_level="warning")
        self.server = uvicorn.Server(config)
        self.thread = threading.Thread(target=self.server.run, daemon=True)

    def __enter__(self) -> "LiveServer":
        self.thread.start()
        deadline = time.monotonic() + 20
        while not self.server.started:
            if time.monotonic() > deadline or not self.thread.is_alive():
                raise RuntimeError("test server did not start")
            time.sleep(0.02)
        return self

    def __exit__(self, *exc) -> None:
        self.server.should_exit = True
        self.thread.join(timeout=10)


@dataclass
class PageLog:
    requests: list[str] = field(default_factory=list)
    console_errors: list[str] = field(default_factory=list)
    page_errors: list[str] = field(default_factory=list)

    def outside(self) -> list[str]:
        """Requests that went anywhere but the loopback test server."""
        return [u for u in self.requests if not u.startswith(("http://127.0.0.1:", "data:", "blob:", "about:"))]


@contextmanager
def chromium():
    """A headless Debian Chromium driven by Playwright (skips or fails by CI rule)."""
    require_binary(CHROMIUM)
    from playwright.sync_api import sync_playwright

    with sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=CHROMIUM, headless=True, args=CHROMIUM_ARGS)
        try:
            yield browser
        finally:
            browser.close()


def open_page(browser, viewport=(1366, 768), context=None):
    """(page, log): a fresh context unless one is given, with request and error logging."""
    ctx = context or browser.new_context(viewport={"width": viewport[0], "height": viewport[1]}, accept_downloads=True)
    page = ctx.new_page()
    log = PageLog()
    page.on("request", lambda r: log.requests.append(r.url))
    page.on("console", lambda m: log.console_errors.append(m.text) if m.type == "error" else None)
    page.on("pageerror", lambda e: log.page_errors.append(str(e)))
    return page, log
