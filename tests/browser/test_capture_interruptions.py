"""The online as-built form, with a photo, interrupted at the worst moments: each time the
record and its photo are stored once, and nothing is lost or stored twice. Rows are
counted in the server's SQLite file by the record's own notes, so a second record made
by a second tap would be counted too.

The interruptions: no signal between filling and sending; the request aborted mid-upload
(the record's, then the photo's); a 502 and a 503 from a proxy in front of the server; the
tab closed while sending and the phone reloaded while sending (each both before the server
stored the record and after, with its answer lost); the log-in run out.
"""

from __future__ import annotations

import json
import sqlite3
import uuid as uuid_module

import pytest
from playwright.sync_api import Page, expect

from kit.phone import OUTBOX, REFUSED, fill_as_designed, log_in, open_record_form
from kit.photo_samples import make_test_jpeg
from sitecheck import store
from sitecheck.demo import DEMO_PEOPLE, SITE_NAME

REFERENCE = "GF-B2-N"  # passes at design; its state does not matter to these tests
PHOTO = make_test_jpeg(1200, 900)


def _query(live_server, sql, params=()):
    con = sqlite3.connect(live_server.db_path)
    try:
        return con.execute(sql, params).fetchall()
    finally:
        con.close()


@pytest.fixture
def form(page: Page, live_server):
    """The inspector on the online form of one bearing, filled as designed with a photo and
    a note of this test's own; returns that note."""
    (site_id, bearing_id, design) = _query(
        live_server,
        "SELECT b.site_id, b.id, b.design_input FROM bearings b JOIN sites s ON s.id = b.site_id "
        "WHERE s.name = ? AND b.reference = ?",
        [SITE_NAME, REFERENCE],
    )[0]
    log_in(page, "inspector")
    open_record_form(page, site_id, bearing_id)
    fill_as_designed(page, json.loads(design), photo=PHOTO)
    notes = f"interrupted {uuid_module.uuid4()}"
    page.fill("#notes", notes)
    return notes


def _send(page: Page) -> None:
    page.get_by_role("button", name="Send and re-check").tap()


def _settled(page: Page, live_server, notes: str, name: str) -> None:
    """Once the outbox is empty: one record with its one photo, nothing refused; the line
    of the matrix printed."""
    expect(page.locator("[data-unsent-count]")).to_have_text("0", timeout=30_000)
    assert page.evaluate(OUTBOX) == [] and page.evaluate(REFUSED) == []
    rows = _query(
        live_server,
        "SELECT r.uuid, (SELECT count(*) FROM photos p WHERE p.record_uuid = r.uuid) "
        "FROM as_built_records r WHERE r.notes = ?",
        [notes],
    )
    stored, photos = len(rows), sum(n for _u, n in rows)
    lost, duplicated = max(0, 1 - stored), max(0, stored - 1)
    line = (
        f"{name:<44} records kept 1, stored {stored}, lost {lost}, duplicated {duplicated}; "
        f"photos 1, stored {photos}"
    )
    print("\n" + line)
    assert (stored, photos) == (1, 1), line


def _wait_for(page: Page, check, what: str, tries: int = 150) -> None:
    for _ in range(tries):
        if check():
            return
        page.wait_for_timeout(100)
    raise AssertionError(f"timed out waiting for {what}")


def test_no_signal_between_filling_and_sending(page: Page, context, live_server, form):
    context.set_offline(True)
    _send(page)
    status = page.locator("[data-capture-status]")
    expect(status).to_contain_text("Kept in unsent on this phone. There is no signal")
    expect(status.locator("[data-next]")).to_be_visible()  # the next bearing is offered
    assert len(page.evaluate(OUTBOX)) == 1
    context.set_offline(False)  # 'online': sent, and the page shows the server's answer
    page.wait_for_url("**/records/**", timeout=30_000)
    _settled(page, live_server, form, "no signal before sending")


@pytest.mark.parametrize("which", ["record", "photo"])
def test_the_request_aborted_mid_upload(page: Page, context, live_server, form, which):
    aborted = []

    def abort_first(route):
        if not aborted:
            aborted.append(route.request.url)
            route.abort("connectionreset")
        else:
            route.continue_()

    context.route("**/api/records" if which == "record" else "**/api/records/*/photos", abort_first)
    _send(page)
    expect(page.locator("body")).to_have_attribute("data-sync-state", "waiting")
    expect(page.locator("[data-capture-status]")).to_contain_text("cannot be reached just now")
    page.locator("header [data-send-now]").tap()  # or wait for the retry
    page.wait_for_url("**/records/**", timeout=30_000)
    assert len(aborted) == 1
    _settled(page, live_server, form, f"{which} upload aborted mid-way")


@pytest.mark.parametrize("status", [502, 503])
def test_a_proxy_answers_502_or_503(page: Page, context, live_server, form, status):
    answered = []

    def proxy(route):
        # A proxy's own page, not the app's JSON: the first record and the first photo.
        kind = "photo" if route.request.url.endswith("/photos") else "record"
        if kind not in answered:
            answered.append(kind)
            route.fulfill(status=status, content_type="text/html", body="<h1>Bad Gateway</h1>")
        else:
            route.continue_()

    context.route("**/api/records**", proxy)
    _send(page)
    expect(page.locator("body")).to_have_attribute("data-sync-state", "waiting")
    page.locator("header [data-send-now]").tap()
    expect(page.locator("body")).to_have_attribute("data-sync-state", "waiting")
    page.locator("header [data-send-now]").tap()
    page.wait_for_url("**/records/**", timeout=30_000)
    assert answered == ["record", "photo"]
    _settled(page, live_server, form, f"a proxy's {status}, for the record and the photo")


@pytest.mark.parametrize(
    ("how", "stored_first"),
    [("close", False), ("close", True), ("reload", False), ("reload", True)],
    ids=[
        "closed-before-stored",
        "closed-after-stored",
        "reloaded-before-stored",
        "reloaded-after-stored",
    ],
)
def test_the_tab_closed_or_reloaded_while_sending(
    page: Page, context, live_server, form, how, stored_first
):
    """The record's request is in the air when the tab goes: either the server never got it,
    or it stored it and its answer never came back. The next page sends what is left."""
    held = []

    def hold(route):
        if held:
            route.continue_()
            return
        if stored_first:
            route.fetch()  # the server stores it; the phone never hears
        held.append(route)

    context.route("**/api/records", hold)
    _send(page)
    _wait_for(page, lambda: held, "the record's request")
    if how == "close":
        page.close()
        page = context.new_page()
    else:
        page.reload()
    context.unroute("**/api/records")
    page.goto("/")  # any page of the app sends the outbox
    _settled(
        page,
        live_server,
        form,
        f"tab {how}{'d' if how == 'close' else 'ed'} while sending, "
        f"{'after' if stored_first else 'before'} the server stored it",
    )


def test_the_log_in_ran_out_before_sending(page: Page, context, live_server, form):
    db = store.open_db(live_server.db_path)
    try:
        inspector = store.get_user_by_email(db, DEMO_PEOPLE["inspector"][0])
        assert store.revoke_all_sessions_for_user(db, inspector["id"]) >= 1
    finally:
        db.conn.close()
    _send(page)
    status = page.locator("[data-capture-status]")
    expect(status).to_contain_text("Log in again to send it")
    assert len(page.evaluate(OUTBOX)) == 1
    status.get_by_role("link", name="Log in").tap()
    email, _name, password = DEMO_PEOPLE["inspector"]
    page.fill("#email", email)
    page.fill("#password", password)
    page.tap("button[type=submit]")
    _settled(page, live_server, form, "log-in ran out before sending")
