"""Browser fixtures: a real server on 127.0.0.1 over a demo database, and Debian's
chromium driven by Playwright on a phone-sized, touch viewport (kit/chromium.py).
"""

from __future__ import annotations

from pathlib import Path

import pytest
from playwright.sync_api import expect

from kit.chromium import CHROMIUM, CHROMIUM_ARGS, phone
from kit.servers import LiveServer
from sitecheck.demo import build_demo
from sitecheck.web import create_app

ARTEFACTS = Path(__file__).resolve().parents[2] / "test-results"
expect.set_options(timeout=10_000)  # 2-core CI under load


def pytest_collection_modifyitems(items):
    for item in items:
        if "tests/browser/" in str(item.fspath):
            item.add_marker(pytest.mark.browser)


@pytest.fixture(scope="session")
def live_server(tmp_path_factory):
    if not CHROMIUM:
        pytest.fail("chromium not found: apt-get install -y chromium (scripts/test does this)")
    db_path = tmp_path_factory.mktemp("live") / "demo.db"
    build_demo(db_path)
    server = LiveServer(create_app(db_path))
    server.db_path = db_path
    yield server
    server.stop()


@pytest.fixture(scope="session")
def base_url(live_server):
    return live_server.url


@pytest.fixture(scope="session")
def browser_type_launch_args(browser_type_launch_args):
    return {
        **browser_type_launch_args,
        "executable_path": CHROMIUM,
        "args": CHROMIUM_ARGS,
        "timeout": 60_000,
    }


@pytest.fixture(scope="session")
def browser_context_args(browser_context_args, playwright):
    return {**browser_context_args, **phone(playwright)}


@pytest.fixture
def shoot(page, request):
    """shoot("name") saves a full-page screenshot under test-results/ to look at."""
    ARTEFACTS.mkdir(exist_ok=True)

    def take(name: str):
        page.screenshot(path=str(ARTEFACTS / f"{request.node.name}-{name}.png"), full_page=True)

    return take
