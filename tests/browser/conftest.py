"""Real-browser fixtures: the app on a free loopback port, Debian's Chromium driven by Playwright.

Outside CI a missing Chromium skips these tests with the reason shown; with
TALLYROOM_REQUIRE_BROWSER=1 (set by .ci/run) it fails them instead.
"""

import os
import shutil
import socket
import threading
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
import uvicorn
from playwright.sync_api import Browser, BrowserContext, Page, expect
from sqlalchemy import Engine

from app.main import create_app
from tests.conftest import empty_database
from tests.helpers import OTHER_AUTHOR

CHROMIUM = os.environ.get("TALLYROOM_CHROMIUM", "/usr/bin/chromium")
ARTIFACTS = Path(__file__).resolve().parents[2] / "test-artifacts"
SCREEN = {"width": 1920, "height": 1080}
PAIR_SCREEN = {"width": 1400, "height": 900}  # each of two people's windows


def pytest_collection_modifyitems(items: list[pytest.Item]) -> None:
    """Mark every test here as a browser test, and skip or fail them when Chromium is absent."""
    here = Path(__file__).parent
    for item in items:
        if here in Path(str(item.fspath)).parents:
            item.add_marker(pytest.mark.browser)
    if shutil.which(CHROMIUM) or Path(CHROMIUM).exists():
        return
    reason = f"Chromium not found at {CHROMIUM}: apt-get install chromium to run browser tests"
    if os.environ.get("TALLYROOM_REQUIRE_BROWSER") == "1":
        raise pytest.UsageError(reason + " (TALLYROOM_REQUIRE_BROWSER=1 makes this a failure)")
    for item in items:
        if here in Path(str(item.fspath)).parents:
            item.add_marker(pytest.mark.skip(reason=reason))


@pytest.fixture(scope="session")
def browser_type_launch_args(browser_type_launch_args: dict[str, Any]) -> dict[str, Any]:
    """Use Debian's Chromium, quiet on a closed network; never download a browser."""
    return {
        **browser_type_launch_args,
        "executable_path": CHROMIUM,
        "args": ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
                 "--no-first-run", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync"],
    }


@pytest.fixture(scope="session")
def browser_context_args(browser_context_args: dict[str, Any]) -> dict[str, Any]:
    """A projector-sized window."""
    return {**browser_context_args, "viewport": SCREEN}


@pytest.fixture(scope="session")
def live_server(db_engine: Engine) -> Iterator[str]:
    """The real app under uvicorn in a thread, on a free port; yields its base URL."""
    yield from serve_in_thread(create_app())


def serve_in_thread(app: Any) -> Iterator[str]:
    """Serve `app` under uvicorn on a free loopback port until the generator closes."""
    sock = socket.socket()
    sock.bind(("127.0.0.1", 0))
    port = sock.getsockname()[1]
    server = uvicorn.Server(uvicorn.Config(app, log_level="warning"))
    thread = threading.Thread(target=server.run, kwargs={"sockets": [sock]}, daemon=True)
    thread.start()
    deadline = time.monotonic() + 15
    while not server.started:
        if time.monotonic() > deadline:
            raise RuntimeError("the test server did not start within 15 s")
        time.sleep(0.05)
    yield f"http://127.0.0.1:{port}"
    server.should_exit = True
    thread.join(timeout=10)
    sock.close()


def named_person(browser: Browser, live_server: str, name: str) -> Iterator[Page]:
    """A browser context of one's own (own cookies), with a name for the change log."""
    context: BrowserContext = browser.new_context(viewport=PAIR_SCREEN)  # type: ignore[arg-type]
    page = context.new_page()
    page.goto(f"{live_server}/")
    page.locator("#author-name").fill(name)
    page.locator("#author-form button[type=submit]").click()
    expect(page.locator("#author-name")).to_have_value(name)
    yield page
    context.close()


@pytest.fixture
def ada(browser: Browser, live_server: str) -> Iterator[Page]:
    """The first of two people working on one study at once."""
    yield from named_person(browser, live_server, "Ada Scribe (invented)")


@pytest.fixture
def ben(browser: Browser, live_server: str) -> Iterator[Page]:
    """The second of two people working on one study at once."""
    yield from named_person(browser, live_server, OTHER_AUTHOR)


@pytest.fixture
def artifacts() -> Path:
    """Where browser tests write screenshots (kept as test artifacts)."""
    ARTIFACTS.mkdir(exist_ok=True)
    return ARTIFACTS


@pytest.fixture(autouse=True)
def _empty_after(db_engine: Engine) -> Iterator[None]:
    yield
    empty_database(db_engine)
