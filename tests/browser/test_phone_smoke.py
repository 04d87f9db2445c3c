"""The app in a real phone-sized browser: log-in and the sites list."""

from __future__ import annotations

from playwright.sync_api import expect

from kit.phone import log_in


def test_log_in_on_a_phone_shows_the_sites(page, shoot):
    page.goto("/")
    expect(page.locator("h1")).to_have_text("Log in")
    assert page.viewport_size["width"] <= 450
    log_in(page, "engineer")
    expect(page.locator("h1")).to_have_text("Your sites")
    expect(page.locator(".card")).to_have_count(2)
    expect(page.locator("footer.caution")).to_contain_text("never replace")
    shoot("sites")


def test_wrong_password_is_refused_with_a_clear_message(page):
    page.goto("/login")
    page.fill("#email", "engineer@tanners-yard.example")
    page.fill("#password", "not the password")
    page.click("button[type=submit]")
    expect(page.locator(".error")).to_contain_text("do not match")
