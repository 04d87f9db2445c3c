"""The verdict as the inspector types: the phone's mirror of the core re-checks the bearing
on the as-built form, marked provisional, and the server's re-check confirms it.

The demo bearing GF-B1-E is designed with a 440 x 215 x 140 mm padstone (invented demo
data); a 300 mm padstone as built is outside the site's tolerance and goes to the engineer.
"""

from __future__ import annotations

import json

from playwright.sync_api import Page, expect

from kit.phone import keep_site, log_in, open_site
from sitecheck import services, store
from sitecheck.bearing.remedy import remedy
from sitecheck.demo import SITE_NAME

REFERENCE = "GF-B1-E"


def _open_form(page: Page, live_server) -> dict:
    db = store.open_db(live_server.db_path)
    site = store.sites_named(db, SITE_NAME)[0]
    bearing = store.bearing_by_reference(db, site_id=site["id"], reference=REFERENCE)
    page.goto(f"/sites/{site['id']}/bearings/{bearing['id']}/record")
    expect(page.locator("[data-provisional-verdict]")).to_have_attribute("data-verdict-ready", "1")
    return {"db": db, "site": site, "bearing": bearing}


def _fill_as_designed(page: Page, bearing: dict) -> None:
    d = bearing["design_input"]
    page.fill("#bearing_length", f"{d['beam']['bearing_length']:g}")
    page.check("input[name=padstone_present][value=yes]")
    page.fill("#padstone_length", f"{d['padstone']['length']:g}")
    page.fill("#padstone_width", f"{d['padstone']['width']:g}")
    page.fill("#padstone_depth", f"{d['padstone']['depth']:g}")
    page.fill("#wall_thickness", f"{d['wall']['thickness']:g}")
    if d["wall"]["a1"] is not None:
        page.fill("#a1", f"{d['wall']['a1']:g}")
    page.select_option("#masonry_group", str(d["masonry"]["group"]))
    page.fill("#unit_strength", f"{d['masonry']['unit_strength']:g}")
    for name in ("bedded", "level"):
        page.check(f"input[name={name}][value=yes]")
    for name in ("cracks", "cut_units"):
        page.check(f"input[name={name}][value=no]")
    page.fill("#packing", "0")


def test_the_verdict_follows_the_typed_values_and_the_server_agrees(page: Page, live_server, shoot):
    log_in(page, "inspector")
    open_site(page, SITE_NAME)
    ctx = _open_form(page, live_server)
    panel = page.locator("[data-provisional-verdict]")
    expect(panel).to_contain_text("Provisional")

    _fill_as_designed(page, ctx["bearing"])
    expect(panel.locator(".verdict")).to_have_attribute("data-verdict", "pass")
    expect(panel.locator(".verdict")).to_contain_text("Within design")
    expect(page.locator("[data-verdict-bar]")).to_contain_text("within design")
    # One live region, read out when the verdict changes; the panel redraws silently.
    expect(page.locator("[data-verdict-bar]")).to_have_attribute("role", "status")
    assert page.locator("[data-provisional-verdict] [role=status], [aria-live]").count() == 0

    page.fill("#padstone_length", "300")
    expect(panel.locator(".verdict")).to_have_attribute("data-verdict", "review")
    expect(panel.locator("[data-code=padstone-length-off]")).to_contain_text(
        "Padstone length is 300 mm as built against 440 mm designed"
    )
    # The trace is there to show the contractor why: every check with its clause.
    panel.locator("[data-phone-trace] summary").tap()
    expect(panel.locator("[data-phone-trace]")).to_contain_text("6.1.3")
    shoot("provisional-verdict")

    sent = json.loads(page.input_value("input[name=provisional]"))
    assert "padstone-length-off" in sent["reasons"]
    # With JavaScript the record goes through the phone's outbox; the page then shows the
    # server's re-check, as it does without.
    page.locator("form.record-form button[type=submit]").tap()
    expect(page.locator("h2", has_text="Server's re-check")).to_be_visible()
    expect(page.locator("[data-code=padstone-length-off]")).to_be_visible()
    record_uuid = page.url.rsplit("/records/", 1)[1]

    # The server stored what it found itself, and found what the phone showed.
    record = store.get_record(ctx["db"], site_id=ctx["site"]["id"], uuid=record_uuid)
    assert [r["code"] for r in record["reasons"]] == sent["reasons"]
    assert record["passed"] == sent["passed"]
    differed = [
        e
        for e in store.events_for(ctx["db"], site_id=ctx["site"]["id"])
        if e["kind"] == services.PHONE_VERDICT_DIFFERED and record_uuid in str(e["detail"])
    ]
    assert differed == []


def test_a_value_that_is_not_a_number_is_named_and_left_out(page: Page, live_server):
    log_in(page, "inspector")
    _open_form(page, live_server)
    page.fill("#wall_thickness", "21o")
    panel = page.locator("[data-provisional-verdict]")
    expect(panel.locator(".field-error")).to_contain_text("Wall thickness")
    expect(panel.locator(".field-error")).to_contain_text("not a number")
    # The rest is still re-checked, with the design's value standing in.
    expect(panel.locator(".verdict")).to_be_visible()


def test_a_failing_bearing_shows_the_hint_the_server_would_give(page: Page, live_server):
    log_in(page, "inspector")
    ctx = _open_form(page, live_server)
    page.fill("#bearing_length", "60")
    panel = page.locator("[data-provisional-verdict]")
    expect(panel.locator(".verdict")).to_contain_text("Fails as built")
    # The same hint, in the same words, as `sitecheck check` prints from the Python core.
    rc = services.recheck(ctx["site"], ctx["bearing"], {"bearing_length": 60.0}, {})
    hint = remedy(rc.as_built, services.basis_for(ctx["site"]))
    assert not rc.result.passed and hint.bearing_length is not None
    expect(panel.locator("[data-remedy-hint]")).to_contain_text(hint.describe())


def test_with_no_signal_the_verdict_shows_and_the_server_confirms_it_later(
    page: Page, context, live_server, shoot
):
    db = store.open_db(live_server.db_path)
    site = store.sites_named(db, SITE_NAME)[0]
    keep_site(page, site["id"])
    context.set_offline(True)
    page.reload()
    expect(page.locator("body")).to_have_attribute("data-pack-ready", "1")

    page.locator("li[data-bearing]", has_text=REFERENCE).first.locator("button").tap()
    form = page.locator("form[data-offline-form]")
    expect(form.locator("[data-form-title]")).to_contain_text(REFERENCE)
    page.fill("#padstone_length", "300")
    panel = form.locator("[data-provisional-verdict]")
    expect(panel.locator(".verdict")).to_have_attribute("data-verdict", "review")
    expect(panel.locator("[data-code=padstone-length-off]")).to_be_visible()
    expect(panel).to_contain_text("Provisional")
    shoot("offline-verdict")
    form.get_by_role("button", name="Keep in unsent").tap()
    expect(form).to_be_hidden()
    record_uuid = page.locator("body").get_attribute("data-last-saved")

    context.set_offline(False)  # the outbox sends; the server's answer replaces the guess
    confirmed = page.locator(f'[data-confirmed="{record_uuid}"]')
    expect(confirmed).to_contain_text("server: ? needs the engineer", timeout=20_000)
    expect(confirmed).to_have_attribute("data-agrees", "true")
    expect(confirmed).to_contain_text("as the phone showed")
    shoot("offline-confirmed")

    stored = store.get_record(db, site_id=site["id"], uuid=record_uuid)
    assert "padstone-length-off" in [r["code"] for r in stored["reasons"]]
    assert not [
        e
        for e in store.events_for(db, site_id=site["id"])
        if e["kind"] == services.PHONE_VERDICT_DIFFERED and record_uuid in str(e["detail"])
    ]


def test_a_value_the_core_refuses_is_named_with_what_was_expected(page: Page, live_server):
    log_in(page, "inspector")
    _open_form(page, live_server)
    page.fill("#wall_thickness", "0.215")  # metres typed where millimetres are asked for
    panel = page.locator("[data-provisional-verdict]")
    verdict = panel.locator(".verdict")
    expect(verdict).to_have_attribute("data-verdict", "cannot")
    # The field's label, the value typed and what is expected; never the core's path.
    expect(verdict).to_contain_text(
        "Wall thickness: 0.215 mm is not accepted; expected millimetres"
    )
    expect(verdict).to_contain_text("did you mean 215 mm?")  # the core's hint, word for word
    expect(verdict).not_to_contain_text("wall.thickness")
    expect(page.locator("[data-verdict-bar]")).to_be_visible()
    expect(page.locator("[data-verdict-bar]")).to_contain_text("cannot re-check yet")
