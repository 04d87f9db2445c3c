"""An invitation as its two people live it, on phone-sized touch screens: the engineer
invites a new address, a real SMTP server on 127.0.0.1 (started here) receives the e-mail,
the newcomer opens its link, makes an account, and accepts. The engineer never sees the
link. Screenshots land in test-results/ to be looked at."""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from playwright.sync_api import expect

from kit.phone import log_in, open_site
from kit.servers import LiveServer, free_port
from kit.smtp_server import LocalMailServer
from sitecheck.demo import SITE_NAME, build_demo
from sitecheck.mail import MailSettings
from sitecheck.web import create_app

ARTEFACTS = Path(__file__).resolve().parents[2] / "test-results"
NEWCOMER = "rosa.newcomer@example.test"


@pytest.fixture
def mailed_server(tmp_path):
    """The demo on a server of its own, with mail through a local SMTP server."""
    smtp = LocalMailServer().start()
    db_path = tmp_path / "demo.db"
    build_demo(db_path)
    port = free_port()
    url = f"http://127.0.0.1:{port}"
    mail = MailSettings(
        host="127.0.0.1", port=smtp.port, sender="sitecheck@tanners-yard.example", base_url=url
    )
    app = create_app(db_path, MAIL=mail)
    server = LiveServer(app, port=port)
    yield {"url": url, "smtp": smtp}
    server.stop()
    app.extensions["mail_sender"].stop()
    smtp.stop()


def test_a_newcomer_joins_through_the_e_mailed_link(browser, browser_context_args, mailed_server):
    phone_args = {**browser_context_args, "base_url": mailed_server["url"]}
    engineer = browser.new_context(**phone_args)
    page = engineer.new_page()
    log_in(page, "engineer")
    open_site(page, SITE_NAME)
    page.get_by_role("link", name="Members").first.tap()
    page.fill("#email", NEWCOMER)
    page.select_option("#role", "inspector")
    page.get_by_role("button", name="Invite").tap()
    expect(page.locator(".flash")).to_contain_text("An e-mail telling them what to do next")
    expect(page.locator("table.invitations")).to_contain_text(NEWCOMER)
    assert "/join/" not in page.content()
    shoot(page, "engineer-invited")

    (message,) = mailed_server["smtp"].inbox.wait_for(1)
    link = re.search(r"http://127\.0\.0\.1:\d+/join/\S+", message.get_content()).group(0)

    newcomer = browser.new_context(**phone_args)
    phone = newcomer.new_page()
    phone.goto(link)
    expect(phone.locator("h1")).to_have_text("Invitation")
    expect(phone.locator(".notice")).to_contain_text(SITE_NAME)
    phone.fill("#name", "Rosa Newcomer")
    phone.fill("#new", "steel beam on a concrete pad")
    phone.fill("#again", "steel beam on a concrete pad")
    shoot(phone, "newcomer-join")
    phone.get_by_role("button", name="Make my account").tap()
    card = phone.locator(".invitations-for-you li", has_text=SITE_NAME)
    expect(card).to_contain_text("inspector")
    expect(phone.get_by_role("link", name=SITE_NAME)).to_have_count(0)  # not before accepting
    shoot(phone, "newcomer-invitations")
    card.get_by_role("button", name="Accept").tap()
    expect(phone.locator("h1")).to_have_text(SITE_NAME)
    expect(phone.locator(".flash")).to_contain_text("You are on")

    # The link worked once.
    phone.goto(link)
    expect(phone.locator("h1")).to_have_text("This link no longer works")
    engineer.close()
    newcomer.close()


def shoot(page, name: str) -> None:
    """Other contexts' pages than the test's own, so not the shoot fixture."""
    ARTEFACTS.mkdir(exist_ok=True)
    page.screenshot(path=str(ARTEFACTS / f"invitation-by-mail-{name}.png"), full_page=True)
