"""A large site on the phone: the survey list a page at a time online, the whole site in
the site pack, searched and recorded from with no signal, and the pack brought up to date
with only what changed. Debian's chromium on a phone-sized viewport, a real server."""

from __future__ import annotations

import dataclasses
import sqlite3
import uuid
from datetime import UTC, datetime

import pytest
from playwright.sync_api import Page, expect

from kit.phone import log_in_as, record_offline, wait_for_worker
from sitecheck import credentials, services, store
from sitecheck.demo import schedule_csv
from sitecheck.schedule import parse_schedule

BEARINGS = 2000
LEVELS = 20
EMAIL, PASSWORD = "large.inspector@invented-large-site.example", "large site inspector pass"

# The pack as IndexedDB holds it: how many bearings and designs, its version, one's state.
HELD = """async (id) => {
  const db = await new Promise((ok, no) => {
    const r = indexedDB.open("sitecheck");
    r.onsuccess = () => ok(r.result);
    r.onerror = () => no(r.error);
  });
  const pack = await new Promise((ok) => {
    const r = db.transaction("packs").objectStore("packs").get(id.site);
    r.onsuccess = () => ok(r.result);
  });
  db.close();
  const b = pack.bearings.find((x) => x.reference === id.reference);
  return {bearings: pack.bearings.length, designs: Object.keys(pack.designs).length,
    version: pack.version, state: b && b.state};
}"""


@pytest.fixture(scope="module")
def large(live_server):
    """A site of 2,000 bearings (the demo's designs over twenty levels) with its own
    inspector, beside the demo sites on the same server."""
    db = store.open_db(live_server.db_path)
    try:
        # People of its own, so the demo's people see nothing of it.
        engineer = store.create_user(
            db,
            email="large.engineer@invented-large-site.example",
            name="Mira Engineer",
            password_hash=credentials.hash_password(PASSWORD),
            may_make_sites=True,
        )["id"]
        inspector = store.create_user(
            db,
            email=EMAIL,
            name="Lars Inspector",
            password_hash=credentials.hash_password(PASSWORD),
        )
        basis, review = services.default_site_settings()
        site = store.create_site(
            db,
            name="Riverside Works (invented large site)",
            address="",
            code_basis=basis,
            review_settings=review,
            created_by=engineer,
        )
        store.add_membership(
            db, user_id=inspector["id"], site_id=site["id"], role="inspector", invited_by=engineer
        )
        rows = [r for r in parse_schedule(schedule_csv()).rows if r.basis_name is None]
        with store.transaction(db):
            for n in range(BEARINGS):
                row = rows[n % len(rows)]
                level = n // (BEARINGS // LEVELS)
                design = dataclasses.replace(
                    row.design,
                    load=dataclasses.replace(
                        row.design.load, reaction=round(row.design.load.reaction * 0.97**level)
                    ),
                )
                services.add_bearing(
                    db,
                    site=site,
                    reference=f"L{level:02d}-{n:04d}-{row.reference}",
                    location=f"Level {level}, {row.location}",
                    design=design,
                    user_id=engineer,
                )
        return {"site": site, "inspector": inspector["id"], "engineer": engineer}
    finally:
        db.close()


def _state(live_server, site_id: str, reference: str) -> str:
    con = sqlite3.connect(live_server.db_path)
    try:
        return con.execute(
            "SELECT state FROM bearings WHERE site_id = ? AND reference = ?", [site_id, reference]
        ).fetchone()[0]
    finally:
        con.close()


def test_a_large_site_on_the_phone_online_and_with_no_signal(
    page: Page, context, live_server, large, shoot
):
    site_id = large["site"]["id"]
    log_in_as(page, EMAIL, PASSWORD)
    page.goto(f"/sites/{site_id}/inspect")
    wait_for_worker(page)
    # Online: a page of the list, and the server searching the whole site.
    expect(page.locator("[data-survey-list] li[data-bearing]")).to_have_count(50)
    expect(page.locator("[data-search-count]")).to_contain_text("2000 bearings in survey order")
    expect(page.locator("[data-pager]")).to_contain_text("1–50 of 2000")
    page.fill("#survey-search", "L17-1777")
    page.get_by_role("button", name="Find").tap()
    expect(page.locator("[data-survey-list] li[data-bearing]")).to_have_count(1)
    expect(page.locator("[data-search-count]")).to_contain_text("1 of 2000 bearings match")
    shoot("online-search")
    page.goto(f"/sites/{site_id}?page=2")
    expect(page.locator("table.schedule tbody tr")).to_have_count(100)
    expect(page.locator("[data-pager]")).to_contain_text("101–200 of 2000")
    shoot("site-page-2")
    page.goto(f"/sites/{site_id}/inspect")

    page.get_by_role("button", name="Keep for offline").tap()
    expect(page.locator("body")).to_have_attribute("data-pack-kept", site_id)
    expect(page.locator(f'[data-pack-age="{site_id}"]')).to_contain_text(
        "Kept for offline use: 2000 bearings"
    )
    held = page.evaluate(HELD, {"site": site_id, "reference": "L00-0000-GF-B1-E"})
    # Bearings of one design share it: the demo's designs on twenty levels.
    assert held["bearings"] == 2000 and held["designs"] <= 11 * LEVELS
    page.goto(f"/sites/{site_id}/offline")
    expect(page.locator("body")).to_have_attribute("data-pack-ready", "1")

    # No signal: the whole site from the pack, drawn a hundred at a time.
    context.set_offline(True)
    page.reload()
    expect(page.locator("body")).to_have_attribute("data-pack-ready", "1")
    cards = page.locator("[data-pack-bearings] li[data-bearing]")
    expect(cards).to_have_count(100)
    expect(page.locator("[data-search-count]")).to_contain_text("2000 bearings in survey order")
    page.locator("[data-show-more]").tap()
    expect(cards).to_have_count(200)
    page.fill("#survey-search", "l19- gf-b1-e")
    # The demo's GF-B1-E is one of its 11 designs: every 11th bearing of level 19's 100.
    expect(page.locator("[data-search-count]")).to_have_text(
        "9 of 2000 bearings match “l19- gf-b1-e”."
    )
    expect(cards).to_have_count(9)
    for reference in cards.locator(".reference").all_inner_texts():
        assert reference.startswith("L19-") and reference.endswith("GF-B1-E")
    shoot("offline-search")
    page.fill("#survey-search", "L18-1804")
    expect(cards).to_have_count(1)
    reference = cards.first.locator(".reference").inner_text()
    record_offline(page, reference, "150")
    assert _state(live_server, site_id, reference) == "awaiting survey"

    # Signal again: sent, and the kept pack says so.
    context.set_offline(False)
    expect(page.locator("[data-unsent-count]")).to_have_text("0", timeout=30_000)
    after = _state(live_server, site_id, reference)
    assert after != "awaiting survey"
    expect(
        page.locator(f'[data-pack-bearings] li[data-bearing] .reference:text-is("{reference}")')
    ).to_have_count(1)

    # Someone else records another bearing; opening the list with signal brings the pack up
    # to date with only that change.
    db = store.open_db(live_server.db_path)
    try:
        other = store.bearing_by_reference(db, site_id=site_id, reference="L01-0102-GF-B2-S")
        design = other["design_input"]
        services.record_as_built(
            db,
            site=store.get_site(db, site_id),
            bearing=other,
            uuid=str(uuid.uuid4()),
            measured_at=datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
            design_revision=1,
            measurements={"bearing_length": 90, "padstone_present": design["padstone"] is not None},
            checklist={},
            notes="Recorded from another phone.",
            inspector_id=large["inspector"],
        )
    finally:
        db.close()
    before = page.evaluate(HELD, {"site": site_id, "reference": "L01-0102-GF-B2-S"})
    page.goto(f"/sites/{site_id}/inspect")
    expect(page.locator(f'[data-pack-age="{site_id}"]')).to_contain_text("changed", timeout=20_000)
    now = page.evaluate(HELD, {"site": site_id, "reference": "L01-0102-GF-B2-S"})
    assert now["version"] != before["version"] and now["bearings"] == 2000
    assert now["state"] == _state(live_server, site_id, "L01-0102-GF-B2-S") != before["state"]
