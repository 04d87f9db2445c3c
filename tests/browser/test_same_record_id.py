"""One record id, two sets of values: the server keeps the first and refuses the second with
a 409 and a sentence; the phone keeps the refused values on its refused list, where they can
be recorded again (a new id). Nothing is dropped without a word."""

from __future__ import annotations

import json
import sqlite3

from playwright.sync_api import Page, expect

from kit.phone import OUTBOX, REFUSED, keep_site, record_offline
from sitecheck.demo import BRICK_WING_NAME


def _site_id(live_server) -> str:
    with sqlite3.connect(live_server.db_path) as con:
        return con.execute("SELECT id FROM sites WHERE name = ?", [BRICK_WING_NAME]).fetchone()[0]


def test_values_sent_under_an_id_already_stored_stay_on_the_refused_list(
    page: Page, context, live_server, shoot
):
    site_id = _site_id(live_server)
    keep_site(page, site_id)
    context.set_offline(True)
    record_id = record_offline(page, "EX-B9", "150")
    (kept,) = [i for i in page.evaluate(OUTBOX) if i["uuid"] == record_id]

    # Meanwhile another set of values reached the server under the same id (a phone restored
    # from a copy of itself, say). It is sent with this phone's own session.
    with sqlite3.connect(live_server.db_path) as con:
        bearing_id, revision = con.execute(
            "SELECT id, revision FROM bearings WHERE site_id = ? AND reference = 'EX-B9'",
            [site_id],
        ).fetchone()
    # Hold the outbox back before the signal returns: coming online starts a send at once.
    context.route("**/api/records", lambda route: route.abort())
    context.set_offline(False)
    token = page.request.get("/api/csrf").json()["token"]
    first = page.request.post(
        "/api/records",
        headers={"X-CSRFToken": token, "Content-Type": "application/json"},
        data=json.dumps(
            {
                "uuid": record_id,
                "site_id": site_id,
                "bearing_id": bearing_id,
                "design_revision": revision,
                "measured_at": "2026-03-02T08:00:00Z",
                "measurements": {"bearing_length": 140},
                "checklist": {},
                "notes": "The other copy's values.",
            }
        ),
    )
    assert first.status == 201, first.text()
    context.unroute("**/api/records")

    page.evaluate("async () => (await import('/static/js/outbox.js')).sync('test')")
    page.goto("/refused")
    item = page.locator(f'[data-refused-item="{record_id}"]')
    expect(item).to_contain_text("already stored with other values", timeout=20_000)
    expect(item).not_to_contain_text("409")  # in words only, never a status code
    expect(item.locator(f'[data-record-again="{record_id}"]')).to_be_visible()
    assert kept["reference"] == "EX-B9"
    assert record_id not in [i["uuid"] for i in page.evaluate(OUTBOX)]
    (refused,) = [i for i in page.evaluate(REFUSED) if i["uuid"] == record_id]
    assert (refused["status"], refused["code"]) == (409, "same-id-other-values")
    shoot("same-id-refused")

    with sqlite3.connect(live_server.db_path) as con:
        stored = con.execute(
            "SELECT notes, json_extract(measurements, '$.bearing_length') FROM as_built_records "
            "WHERE uuid = ?",
            [record_id],
        ).fetchall()
    assert stored == [("The other copy's values.", 140)]
