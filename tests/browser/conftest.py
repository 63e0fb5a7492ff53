"""Fixtures of the browser tests: the demo plant in a temporary SQLite file, the real
app served by waitress on 127.0.0.1 in a background thread, and Debian's Chromium
driven through Playwright's own driver (the one bundled in the pip wheel).

No browser is ever downloaded: Playwright is pointed at the system Chromium. When
that binary is missing the tests fail and say how to install it."""

from __future__ import annotations

import os
import shutil
import threading
from collections.abc import Iterator
from pathlib import Path

import pytest
from playwright.sync_api import (
    Browser,
    BrowserContext,
    Page,
    Playwright,
    expect,
    sync_playwright,
)

from riskreg import create_app, migrate
from riskreg.db import make_engine, session_factory
from riskreg.services import audit
from seed_demo import build

ROOT = Path(__file__).resolve().parents[2]
ARTIFACTS = ROOT / "test-artifacts" / "browser"
PHONE = {"width": 390, "height": 844}
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
# A shared machine can be slow: give the page and the assertions room.
ACTION_TIMEOUT_MS = 15_000
expect.set_options(timeout=10_000)
INSTALL_HINT = (
    "Install it with 'apt-get install -y chromium' (as root; 'make system-deps' does "
    "this when run as root), or point RISKREG_CHROMIUM at a Chromium binary."
)


def find_chromium() -> str | None:
    """The Chromium binary: $RISKREG_CHROMIUM, else `chromium` on PATH, else /usr/bin/chromium."""
    named = os.environ.get("RISKREG_CHROMIUM")
    if named:
        return named if os.access(named, os.X_OK) else None
    found = shutil.which("chromium")
    if found:
        return found
    fallback = Path("/usr/bin/chromium")
    return str(fallback) if os.access(fallback, os.X_OK) else None


@pytest.fixture(scope="session")
def chromium_path() -> str:
    path = find_chromium()
    if path is None:
        named = os.environ.get("RISKREG_CHROMIUM")
        where = (
            f"RISKREG_CHROMIUM={named} is not an executable file"
            if named
            else "no 'chromium' on PATH and no /usr/bin/chromium"
        )
        pytest.fail(
            f"The browser tests need Chromium, and it is missing ({where}). {INSTALL_HINT}",
            pytrace=False,
        )
    return path


@pytest.fixture(scope="session")
def live_server(tmp_path_factory: pytest.TempPathFactory) -> Iterator[str]:
    """The base URL of the real app, serving a fresh demo plant."""
    from waitress import create_server

    base = tmp_path_factory.mktemp("browser-server")
    url = f"sqlite:///{base / 'demo.sqlite'}"
    engine = make_engine(url)
    migrate.upgrade(engine)
    factory = session_factory(engine)
    audit.install(factory)
    with factory() as session:
        build.build(session)
    engine.dispose()

    with pytest.MonkeyPatch.context() as mp:
        # The factory takes its instance folder from the environment only; it is
        # read once, so the variable is put back as soon as the app exists.
        mp.setenv("RISKREG_INSTANCE", str(base / "instance"))
        app = create_app({"DATABASE_URL": url, "SECRET_KEY": "x"})
    assert Path(app.instance_path) == base / "instance"
    server = create_server(app, host="127.0.0.1", port=0, threads=4, ident="riskreg-test")
    thread = threading.Thread(target=server.run, name="riskreg-browser-server", daemon=True)
    thread.start()
    try:
        yield f"http://127.0.0.1:{server.effective_port}"
    finally:
        server.close()
        thread.join(timeout=10)
        app.extensions["riskreg.engine"].dispose()


@pytest.fixture(scope="session")
def playwright_session() -> Iterator[Playwright]:
    """Playwright with the Node.js bundled in its wheel, never another one."""
    with pytest.MonkeyPatch.context() as mp:
        mp.delenv("PLAYWRIGHT_NODEJS_PATH", raising=False)
        pw = sync_playwright().start()
    try:
        yield pw
    finally:
        pw.stop()


@pytest.fixture(scope="session")
def browser(playwright_session: Playwright, chromium_path: str) -> Iterator[Browser]:
    b = playwright_session.chromium.launch(executable_path=chromium_path, args=CHROMIUM_ARGS)
    yield b
    b.close()


@pytest.fixture
def artifacts() -> Path:
    """Where the screenshots go (gitignored)."""
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    return ARTIFACTS


def _context(browser: Browser, live_server: str, *, javascript: bool) -> BrowserContext:
    ctx = browser.new_context(
        base_url=live_server,
        viewport=PHONE,
        java_script_enabled=javascript,
    )
    ctx.set_default_timeout(ACTION_TIMEOUT_MS)
    return ctx


@pytest.fixture
def page_js(browser: Browser, live_server: str) -> Iterator[Page]:
    """A 390 × 844 page with JavaScript on."""
    ctx = _context(browser, live_server, javascript=True)
    yield ctx.new_page()
    ctx.close()


@pytest.fixture
def page_no_js(browser: Browser, live_server: str) -> Iterator[Page]:
    """A 390 × 844 page with JavaScript off."""
    ctx = _context(browser, live_server, javascript=False)
    yield ctx.new_page()
    ctx.close()
