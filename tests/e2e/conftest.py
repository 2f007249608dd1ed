"""Browser fixtures: Debian's Chromium driven by Playwright (never a downloaded browser).

One browser per session, a fresh context per test, the app served by werkzeug's
threaded server in a daemon thread. A browser that cannot start FAILS the tests
(pytest.fail), it never skips them: a skipped browser test would turn CI green for
nothing (/work/shared/CI.md).
"""

from __future__ import annotations

import os
import shutil
import threading
from pathlib import Path

import pytest

CHROMIUM = os.environ.get("SHOWOPS_CHROMIUM", "/usr/bin/chromium")
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run"]
#: Playwright waits 30 s per action by default; a screen that needs more is broken.
ACTION_TIMEOUT_MS = 5000


@pytest.fixture(scope="session")
def browser():
    if not shutil.which(CHROMIUM) and not os.path.exists(CHROMIUM):
        pytest.fail(f"Chromium not found at {CHROMIUM}: install it with "
                    "`apt-get install -y --no-install-recommends chromium` (scripts/test.sh does)")
    try:
        from playwright.sync_api import sync_playwright
    except ImportError as exc:  # the test extra was not installed
        pytest.fail(f"playwright is not installed ({exc}); run pip install -e '.[test]'")
    manager = sync_playwright().start()
    try:
        chromium = manager.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
    except Exception as exc:  # noqa: BLE001 - any launch failure must fail loudly
        manager.stop()
        pytest.fail(f"Chromium at {CHROMIUM} did not start: {exc}")
    yield chromium
    chromium.close()
    manager.stop()


@pytest.fixture
def live_server(app):
    """Serve ``app`` on a free loopback port; yield its base URL."""
    from werkzeug.serving import make_server

    server = make_server("127.0.0.1", 0, app, threaded=True)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    yield f"http://127.0.0.1:{server.server_port}"
    server.shutdown()
    thread.join(timeout=5)


@pytest.fixture
def new_page(browser):
    """Make pages in fresh contexts (one per person: cookies are not shared)."""
    contexts = []

    def make(*, width: int = 412, height: int = 860):
        context = browser.new_context(viewport={"width": width, "height": height}, color_scheme="dark")
        context.set_default_timeout(ACTION_TIMEOUT_MS)
        contexts.append(context)
        return context.new_page()

    yield make
    for context in contexts:
        context.close()


def sign_in(page, base_url: str, username: str, password: str):
    page.goto(f"{base_url}/sign-in")
    page.fill("input[name=username]", username)
    page.fill("input[name=password]", password)
    page.click("#sign-in-form button[type=submit]")


@pytest.fixture
def ready_demo(demo, db):
    """The demo with its care records (inspections, rehearsals, briefings, releases) and
    sign-ins: at the next performance the orchard lift's "Windfall" is ready to run."""
    from datetime import date

    from showops.store.care import seed_demo_care

    ids, made = demo
    seed_demo_care(db, ids, date.today())
    return ids, made


@pytest.fixture
def screenshots(tmp_path):
    """Where screenshots go: $SHOWOPS_SCREENSHOTS, or the test's temporary folder."""
    folder = os.environ.get("SHOWOPS_SCREENSHOTS")
    path = Path(folder) if folder else tmp_path / "screens"
    path.mkdir(parents=True, exist_ok=True)
    return path


def open_as(new_page, base_url: str, username: str, path: str, *, password: str | None = None,
            width: int = 412, height: int = 860):
    """A person's own device: a fresh context, signed in, on ``path``."""
    from showops.store.users import DEMO_PASSWORD

    page = new_page(width=width, height=height)
    errors = []
    page.on("pageerror", lambda exc: errors.append(str(exc)))
    page.js_errors = errors
    sign_in(page, base_url, username, password or DEMO_PASSWORD)
    page.wait_for_url(lambda url: "/sign-in" not in url)
    page.goto(base_url + path)
    page.wait_for_selector("#link-status.link-ok")
    return page
