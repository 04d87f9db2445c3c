"""The hand-offs on a phone-sized touch screen: the engineer sees how many bearings wait and
which are new, filters the queue, chooses which notices come by e-mail, and signs off the
site record. Screenshots land in test-results/ to be looked at.

The demo site is shared by the browser tests: nothing here changes a bearing's state.
"""

from __future__ import annotations

import re
import sqlite3

from playwright.sync_api import expect

from kit.phone import keep_site, log_in, open_site
from sitecheck.demo import SITE_NAME


def test_the_engineer_sees_what_waits_filters_it_and_signs_the_record_off(page, live_server, shoot):
    log_in(page, "engineer")
    # The header counts what waits for the engineer.
    to_decide = page.get_by_role("link", name=re.compile(r"^To decide \d+"))
    expect(to_decide).to_be_visible()
    shoot("home")
    to_decide.tap()
    expect(page.locator("h1")).to_have_text("Bearings for the engineer to decide")
    items = page.locator("li.queue-item")
    expect(items.first).to_be_visible()
    # The most serious first: every failing bearing before any that only has blocking reasons.
    tiers = [int(t) for t in items.evaluate_all("els => els.map(e => e.dataset.tier)")]
    assert tiers == sorted(tiers) and tiers[0] == 0
    shoot("queue")
    page.select_option("#filter-reason", "check-fails")
    page.get_by_role("button", name="Show").tap()
    expect(page).to_have_url(re.compile(r"reason=check-fails"))
    for text in items.all_inner_texts():
        assert "fails" in text
    shoot("queue-filtered")
    items.first.get_by_role("link").first.tap()
    expect(page.locator("form.decision")).to_have_attribute(
        "action", re.compile(r"reason=check-fails")
    )

    # Notices: turn "to decide" off, and on again.
    page.goto("/notices")
    box = page.locator("#notice-to-decide")
    expect(box).to_be_checked()
    page.locator("label[for=notice-to-decide]").tap()
    page.get_by_role("button", name="Keep these choices").tap()
    expect(page.locator(".flash")).to_contain_text("kept")
    expect(box).not_to_be_checked()
    shoot("notices")
    page.locator("label[for=notice-to-decide]").tap()
    page.get_by_role("button", name="Keep these choices").tap()
    expect(box).to_be_checked()

    # The site record page: sign it off.
    open_site(page, SITE_NAME)
    page.get_by_role("link", name="Site record").tap()
    section = page.locator("[data-sign-off]")
    expect(section).to_contain_text("Signing now covers the site record as it stands now")
    page.fill("#engineer_name", "Priya Okafor CEng")
    shoot("record-before-sign-off")
    section.get_by_role("button", name="Sign off the site record").tap()
    expect(page.locator(".flash")).to_contain_text("Signed off by Priya Okafor CEng")
    expect(section).to_contain_text("Nothing has changed since.")
    shoot("record-signed-off")
    with sqlite3.connect(live_server.db_path) as con:
        names = [r[0] for r in con.execute("SELECT engineer_name FROM sign_offs")]
    assert "Priya Okafor CEng" in names


def test_the_contractor_and_inspector_see_since_they_last_looked_and_their_next_step(
    page, live_server, shoot
):
    log_in(page, "inspector")
    open_site(page, SITE_NAME)
    next_step = page.locator("[data-next-for-you]")
    expect(next_step).to_contain_text("to measure")
    shoot("inspector-site")
    next_step.get_by_role("link").tap()
    expect(page).to_have_url(re.compile(r"/inspect$"))


def test_the_inspector_reads_the_engineers_words_on_the_form_online_and_offline(
    page, context, live_server, shoot
):
    """GF-B2-S is waiting for remedial work, in the engineer's words (the demo's decision)."""
    with sqlite3.connect(live_server.db_path) as con:
        site_id, bearing_id = con.execute(
            "SELECT b.site_id, b.id FROM bearings b JOIN sites s ON s.id = b.site_id "
            "WHERE s.name = ? AND b.reference = 'GF-B2-S'",
            [SITE_NAME],
        ).fetchone()
        (words,) = con.execute(
            "SELECT reason FROM decisions WHERE bearing_id = ? ORDER BY id DESC LIMIT 1",
            [bearing_id],
        ).fetchone()
    keep_site(page, site_id)
    page.goto(f"/sites/{site_id}/bearings/{bearing_id}/record")
    online = page.locator("[data-engineer-words]")
    expect(online).to_contain_text("Remedial work: the engineer's words")
    expect(online).to_contain_text(words)
    shoot("online-form")

    page.goto(f"/sites/{site_id}/offline")
    expect(page.locator("body")).to_have_attribute("data-pack-ready", "1")
    context.set_offline(True)
    page.reload()
    expect(page.locator("body")).to_have_attribute("data-pack-ready", "1")
    page.locator("li[data-bearing]", has_text="GF-B2-S").first.locator("button").tap()
    offline = page.locator("form[data-offline-form] [data-engineer-words]")
    expect(offline).to_be_visible()
    expect(offline).to_contain_text(words)
    expect(offline).to_contain_text("(as of the site pack)")
    shoot("offline-form")
    # Another bearing, with nothing asked of it: no box.
    page.locator("form[data-offline-form] [data-form-cancel]").tap()
    page.locator("li[data-bearing]", has_text="FF-B6").first.locator("button").tap()
    expect(offline).to_be_hidden()
    context.set_offline(False)
