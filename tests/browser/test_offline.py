"""Offline on site: the phone keeps a site pack, records with no signal for real
(``context.set_offline``), keeps records and photos in the unsent outbox, and sends each
exactly once when the signal returns. A 500 keeps the item; a 403 moves it to the refused
list with the server's reason. Uses the demo's brick wing, which no other browser test
changes."""

from __future__ import annotations

import json
import sqlite3

from playwright.sync_api import Page, expect

from phone import log_in
from photo_samples import make_test_jpeg
from sitecheck.demo import BRICK_WING_NAME

SW_CONTROLLED = "() => navigator.serviceWorker && navigator.serviceWorker.controller !== null"
OUTBOX = """async () => {
  const db = await new Promise((ok, no) => {
    const r = indexedDB.open("sitecheck");
    r.onsuccess = () => ok(r.result);
    r.onerror = () => no(r.error);
  });
  const all = await new Promise((ok) => {
    const r = db.transaction("outbox").objectStore("outbox").index("created").getAll();
    r.onsuccess = () => ok(r.result);
  });
  db.close();
  return all.map((i) => ({uuid: i.uuid, reference: i.reference, record_sent: i.record_sent,
    attempts: i.attempts, photos: i.photos.map((p) => ({uuid: p.uuid, size: p.blob.size,
    bytes_before: p.bytes_before, bytes_after: p.bytes_after, width: p.width, height: p.height,
    captured_at: p.captured_at}))}));
}"""


def _site_id(live_server) -> str:
    with sqlite3.connect(live_server.db_path) as con:
        return con.execute("SELECT id FROM sites WHERE name = ?", [BRICK_WING_NAME]).fetchone()[0]


def _query(live_server, sql, params=()):
    con = sqlite3.connect(live_server.db_path)
    try:
        return con.execute(sql, params).fetchall()
    finally:
        con.close()


def _keep_site(page: Page, site_id: str) -> None:
    """Online: open the survey list, wait for the service worker, keep the site pack, then
    open the site's offline page once so the worker holds it."""
    log_in(page, "inspector")
    page.goto(f"/sites/{site_id}/inspect")
    page.wait_for_function(SW_CONTROLLED, timeout=15_000)
    page.get_by_role("button", name="Keep for offline").tap()
    expect(page.locator("body")).to_have_attribute("data-pack-kept", site_id)
    expect(page.locator(f'[data-pack-age="{site_id}"]')).to_contain_text("Kept for offline use")
    page.goto(f"/sites/{site_id}/offline")
    expect(page.locator("body")).to_have_attribute("data-pack-ready", "1")


def _record(page: Page, reference: str, length: str, photo: bytes | None = None) -> str:
    before = page.locator("body").get_attribute("data-last-saved")
    page.locator("li[data-bearing]", has_text=reference).locator("button").tap()
    form = page.locator("form[data-offline-form]")
    expect(form).to_be_visible()
    expect(form.locator("h2")).to_contain_text(reference)
    page.fill("#bearing_length", length)
    form.locator("#field-bedded").get_by_label("yes", exact=True).check()
    page.fill("#notes", f"{reference} measured with no signal.")
    if photo is not None:
        page.set_input_files(
            "#photos", files=[{"name": "IMG_0001.jpg", "mimeType": "image/jpeg", "buffer": photo}]
        )
    form.get_by_role("button", name="Keep in unsent").tap()
    page.wait_for_function(
        "(before) => document.body.dataset.lastSaved && document.body.dataset.lastSaved !== before",
        arg=before,
    )
    expect(form).to_be_hidden()
    return page.locator("body").get_attribute("data-last-saved")


def test_records_made_with_no_signal_arrive_once_with_their_photos(
    page: Page, context, live_server, shoot
):
    site_id = _site_id(live_server)
    _keep_site(page, site_id)
    shoot("kept")

    context.set_offline(True)
    assert page.evaluate("navigator.onLine") is False
    response = page.reload()
    assert response is not None and response.ok and response.from_service_worker
    expect(page.locator("body")).to_have_attribute("data-pack-ready", "1")
    expect(page.locator("[data-pack-bearings] li")).to_have_count(4)

    camera = make_test_jpeg(4000, 3000)
    first = _record(page, "EX-B7", "150", camera)
    second = _record(page, "EX-B8", "145", camera)
    expect(page.locator("[data-unsent-count]")).to_have_text("2")
    expect(page.locator("[data-unsent-list] li")).to_have_count(2)
    shoot("two-unsent")

    kept = page.evaluate(OUTBOX)
    assert [i["uuid"] for i in kept] == [first, second]
    for item in kept:
        (p,) = item["photos"]
        assert p["bytes_before"] == len(camera)
        assert max(p["width"], p["height"]) == 1600 and p["size"] == p["bytes_after"]
        assert p["captured_at"].endswith("Z")
    print(f"\nphoto on the phone: {len(camera)} bytes taken, {kept[0]['photos'][0]['size']} kept")
    assert not _query(
        live_server, "SELECT uuid FROM as_built_records WHERE uuid IN (?, ?)", [first, second]
    )

    context.set_offline(False)  # fires 'online': the outbox is sent in order
    expect(page.locator("[data-unsent-count]")).to_have_text("0", timeout=20_000)
    assert page.evaluate(OUTBOX) == []
    rows = _query(
        live_server,
        "SELECT uuid, count(*) FROM as_built_records WHERE uuid IN (?, ?) GROUP BY uuid",
        [first, second],
    )
    assert sorted(rows) == sorted([(first, 1), (second, 1)])
    photos = _query(
        live_server,
        "SELECT record_uuid, width, height FROM photos WHERE record_uuid IN (?, ?)",
        [first, second],
    )
    assert sorted(p[0] for p in photos) == sorted([first, second])
    assert all(max(w, h) <= 1600 for _r, w, h in photos)
    measured = json.loads(
        _query(live_server, "SELECT measurements FROM as_built_records WHERE uuid = ?", [first])[0][
            0
        ]
    )
    assert measured["bearing_length"] == 150
    shoot("all-sent")


def test_a_server_error_keeps_the_record_until_it_is_acknowledged(
    page: Page, context, live_server, shoot
):
    site_id = _site_id(live_server)
    _keep_site(page, site_id)
    answered = []

    def fail_once(route):
        if not answered:
            answered.append(500)
            route.fulfill(status=500, content_type="application/json", body='{"error": "boom"}')
        else:
            answered.append("passed")
            route.continue_()

    context.route("**/api/records", fail_once)
    uuid = _record(page, "EX-B9", "150")  # online: sent at once, and the server fails
    expect(page.locator("body")).to_have_attribute("data-sync-state", "waiting")
    assert answered == [500]
    kept = page.evaluate(OUTBOX)
    assert [i["uuid"] for i in kept] == [uuid] and kept[0]["attempts"] == 1
    expect(page.locator("[data-unsent-count]")).to_have_text("1")
    assert not _query(live_server, "SELECT uuid FROM as_built_records WHERE uuid = ?", [uuid])
    shoot("kept-after-500")

    page.locator("main").get_by_role("button", name="Send now").tap()
    expect(page.locator("[data-unsent-count]")).to_have_text("0")
    assert answered == [500, "passed"]
    assert _query(live_server, "SELECT count(*) FROM as_built_records WHERE uuid = ?", [uuid]) == [
        (1,)
    ]


def test_a_refusal_moves_the_record_to_the_refused_list_with_the_reason(
    page: Page, context, live_server, shoot
):
    site_id = _site_id(live_server)
    _keep_site(page, site_id)
    reason = "As contractor on this site you may not record as-built values."
    context.route(
        "**/api/records",
        lambda route: route.fulfill(
            status=403, content_type="application/json", body=json.dumps({"error": reason})
        ),
    )
    uuid = _record(page, "EX-B10", "150")
    refused = page.locator(f'[data-refused-item="{uuid}"]')
    expect(refused).to_contain_text(reason)
    expect(refused).to_contain_text("403")
    expect(page.locator("[data-unsent-count]")).to_have_text("0")
    expect(page.locator("[data-refused-count]")).to_have_text("1")
    assert page.evaluate(OUTBOX) == []
    assert not _query(live_server, "SELECT uuid FROM as_built_records WHERE uuid = ?", [uuid])
    shoot("refused")


def test_log_out_with_unsent_records_warns_first(page: Page, context, live_server):
    site_id = _site_id(live_server)
    _keep_site(page, site_id)
    context.set_offline(True)
    _record(page, "EX-B7", "150")
    expect(page.locator("[data-unsent-count]")).to_have_text("1")
    # Blocked before the signal returns, or the 'online' event would send it first.
    context.route("**/api/records", lambda route: route.abort())
    context.set_offline(False)
    messages = []

    def dismiss(dialog):
        messages.append(dialog.message)
        dialog.dismiss()

    page.once("dialog", dismiss)
    page.locator("form[data-logout] button").tap()
    for _ in range(100):  # the warning comes after the outbox is counted
        if messages:
            break
        page.wait_for_timeout(100)
    expect(page.locator("h1")).to_have_text("Record offline")
    assert messages and "unsent" in messages[0] and "deletes them" in messages[0]
    assert len(page.evaluate(OUTBOX)) == 1
