"""The hold point walked through by its three people on a phone-sized touch screen:
the inspector records a bearing with a photo and sees the verdict, the engineer decides,
the contractor releases. Screenshots land in test-results/ to be looked at."""

from __future__ import annotations

import re
import sqlite3

from playwright.sync_api import expect

from kit.phone import log_in, log_out, open_site
from kit.photo_samples import make_test_jpeg
from sitecheck.demo import SITE_NAME


def _state(live_server, reference: str) -> str:
    with sqlite3.connect(live_server.db_path) as con:
        return con.execute(
            "SELECT state FROM bearings WHERE reference = ?", [reference]
        ).fetchone()[0]


def test_inspector_records_engineer_decides_contractor_releases(page, live_server, shoot, tmp_path):
    photo = tmp_path / "padstone.jpg"
    photo.write_bytes(make_test_jpeg(1200, 900))

    # Inspector: the lintel GF-L1 has not been surveyed. Measure it short of the 150 mm the
    # trade asks of a lintel, with a photo.
    log_in(page, "inspector")
    open_site(page, SITE_NAME)
    page.get_by_role("link", name="Survey list").tap()
    expect(page.locator("h1")).to_have_text("Record as built")
    shoot("inspector-list")
    page.locator("li", has_text="GF-L1").get_by_role("link", name="Record as built").tap()
    expect(page.locator("h1")).to_contain_text("GF-L1")
    page.fill("#bearing_length", "130")
    page.locator("#field-padstone_present").get_by_label("no", exact=True).check()
    page.fill("#wall_thickness", "100")
    page.select_option("#masonry_group", "1")
    page.fill("#a1", "0")
    page.locator("#field-bedded").get_by_label("yes", exact=True).check()
    page.set_input_files("#photos", str(photo))
    shoot("inspector-form")
    page.get_by_role("button", name="Send and re-check").tap()
    # Through the phone's outbox, with its photo, then the server's re-check.
    page.wait_for_url("**/records/**")
    verdict = page.locator("[data-verdict]")
    expect(verdict).to_have_attribute("data-verdict", "fails")
    expect(page.locator(".reasons")).to_contain_text("Minimum lintel end bearing")
    expect(page.locator(".photos img")).to_have_count(1)
    shoot("inspector-verdict")
    assert _state(live_server, "GF-L1") == "engineer to decide"
    log_out(page)

    # Engineer: the bearing is in the queue; accept it with a written reason.
    log_in(page, "engineer")
    # The header's link counts what waits: "To decide 5 (1 new)".
    to_decide = page.get_by_role("link", name=re.compile(r"^To decide \d+"))
    expect(to_decide).to_contain_text("new")
    to_decide.tap()
    page.get_by_role("link", name="GF-L1").first.tap()
    expect(page.locator("h1")).to_contain_text("GF-L1")
    shoot("engineer-review")
    page.locator("#kind-accept").check()
    page.fill(
        "#reason",
        "130 mm end bearing on a lightly loaded lintel; masonry check passes. Accept as built.",
    )
    # It fails as built (the lintel's end bearing): accepting it needs its confirmation.
    page.get_by_role("button", name="Keep this decision").tap()
    expect(page.locator("[data-error-for=confirm_failing]")).to_contain_text(
        "tick the confirmation"
    )
    expect(page.locator("#reason")).to_have_value(
        "130 mm end bearing on a lightly loaded lintel; masonry check passes. Accept as built."
    )
    page.locator("#kind-accept").check()
    page.locator("label[for=confirm_failing]").tap()
    shoot("engineer-accept-failing")
    page.get_by_role("button", name="Keep this decision").tap()
    # Kept, and straight on to the next bearing to decide.
    expect(page.locator("h1")).not_to_contain_text("GF-L1")
    expect(page.locator("h1")).to_contain_text("engineer to decide")
    assert _state(live_server, "GF-L1") == "accepted"
    log_out(page)

    # Contractor: GF-L1 may now be closed up; release it.
    log_in(page, "contractor")
    open_site(page, SITE_NAME)
    page.get_by_role("link", name="Release for closing up").first.tap()
    page.locator("label", has_text="GF-L1").tap()
    page.fill("#contractor_name", "Lena Varga, Varga Build Ltd")
    shoot("contractor-release")
    page.get_by_role("button", name="Release the ticked bearings").tap()
    # "Signed and final": the contractor sees what they sign, then signs it.
    step = page.locator("[data-confirm-release]")
    expect(step).to_contain_text("GF-L1")
    expect(step).to_contain_text("Lena Varga, Varga Build Ltd")
    shoot("contractor-confirm")
    assert _state(live_server, "GF-L1") == "accepted"
    step.get_by_role("button", name="Sign and release 1 bearing").tap()
    expect(page.locator("[data-outcome=released]")).to_contain_text("GF-L1")
    assert _state(live_server, "GF-L1") == "released"
    shoot("contractor-released")


def test_contractor_cannot_release_a_bearing_the_engineer_has_not_decided(page, live_server):
    log_in(page, "contractor")
    open_site(page, SITE_NAME)
    page.get_by_role("link", name="Release for closing up").first.tap()
    # FF-B4 lost its spreader as built: it waits for the engineer and has no tick box.
    waiting = page.locator("li", has_text="FF-B4")
    expect(waiting).to_contain_text("engineer")
    expect(waiting.locator("input[type=checkbox]")).to_have_count(0)
    assert _state(live_server, "FF-B4") == "engineer to decide"
