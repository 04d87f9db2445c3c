"""What a person does on the phone, step by step, for the browser tests."""

from __future__ import annotations

from playwright.sync_api import Page, expect

from sitecheck.demo import DEMO_PEOPLE


def log_in(page: Page, role: str) -> None:
    email, _name, password = DEMO_PEOPLE[role]
    page.goto("/login")
    page.fill("#email", email)
    page.fill("#password", password)
    page.tap("button[type=submit]")
    expect(page.locator("h1")).not_to_have_text("Log in")


def log_out(page: Page) -> None:
    page.tap("form[data-logout] button")
    expect(page.locator("h1")).to_have_text("Log in")


def open_site(page: Page, name: str) -> None:
    page.goto("/")
    page.get_by_role("link", name=name).tap()
    expect(page.locator("h1")).to_have_text(name)
