"""Sending the unsent outbox when things go wrong, with the rows counted in SQLite:

- the server process killed (SIGKILL) in the middle of sending, at the worst moments (a
  record, then a photo, committed but its answer never sent), and started again on the same
  port and file: nothing lost, nothing stored twice;
- two tabs sending the same outbox at the same moment, with Web Locks and without them (a
  browser that has none): each item stored once, nothing brought back into the outbox;
- a CSRF token that expired while the phone had no signal (a server with a short
  WTF_CSRF_TIME_LIMIT): the records still arrive.

A 500 and a refusal after a real membership change are in test_offline.py.
"""

from __future__ import annotations

import json
import signal
import sqlite3
from pathlib import Path

import pytest
from playwright.sync_api import Page, expect

from kit.phone import OUTBOX, REFUSED, keep_site, record_offline
from kit.photo_samples import make_test_jpeg
from kit.servers import ServerProcess
from sitecheck.demo import BRICK_WING_NAME, SITE_NAME, build_demo

# Bearings of the demo's Block C whose references no other reference contains, each with a
# design that passes (one that fails is not for survey).
BLOCK_C = ("FF-B3-E", "FF-B4", "GF-L2", "FF-B6", "GF-L1", "GF-B2-N")


def _query(db_path: Path, sql: str, params=()) -> list[tuple]:
    con = sqlite3.connect(db_path)
    try:
        return con.execute(sql, params).fetchall()
    finally:
        con.close()


def _site_id(db_path: Path, name: str) -> str:
    return _query(db_path, "SELECT id FROM sites WHERE name = ?", [name])[0][0]


def _designed_length(db_path: Path, reference: str) -> str:
    """The bearing length as designed, so the record is one the server accepts."""
    (design,) = _query(
        db_path, "SELECT design_input FROM bearings WHERE reference = ?", [reference]
    )
    return f"{json.loads(design[0])['beam']['bearing_length']:g}"


def _marks(uuids) -> str:
    return ", ".join("?" * len(uuids))


def _records_stored(db_path: Path, uuids: list[str]) -> dict[str, int]:
    rows = _query(
        db_path,
        f"SELECT uuid, count(*) FROM as_built_records WHERE uuid IN ({_marks(uuids)}) GROUP BY uuid",
        uuids,
    )
    return dict(rows)


def _photos_stored(db_path: Path, uuids: list[str]) -> list[tuple]:
    return _query(
        db_path,
        f"SELECT record_uuid, uuid, sha256, thumb_sha256 FROM photos WHERE record_uuid IN ({_marks(uuids)})",
        uuids,
    )


@pytest.fixture
def demo_db(tmp_path) -> Path:
    """A fresh demo database of this test's own, in a folder of its own (the server keeps its
    cookie key and photos beside it)."""
    path = tmp_path / "demo.db"
    build_demo(path)
    return path


@pytest.fixture
def phone_at(browser, browser_context_args):
    """phone_at(url): a new phone (the session's Pixel 7 settings) on another server."""
    contexts = []

    def make(url: str) -> Page:
        context = browser.new_context(**{**browser_context_args, "base_url": url})
        contexts.append(context)
        return context.new_page()

    yield make
    for context in contexts:
        context.close()


@pytest.fixture
def server_process(demo_db):
    started: list[ServerProcess] = []

    def make(**options) -> ServerProcess:
        server = ServerProcess(demo_db, **options)
        started.append(server)
        return server

    yield make
    for server in started:
        server.kill()


def _send_now(page: Page) -> None:
    page.locator("main [data-send-now]").tap()


@pytest.mark.timeout(180)
def test_a_server_killed_while_sending_loses_nothing_and_stores_nothing_twice(
    phone_at, server_process, demo_db
):
    server = server_process()
    # Each item is a record, then its photo: r1 p1 r2 p2 r3. The server commits r3 and dies
    # before the phone hears of it.
    server.start(die_after_acks=5)
    page = phone_at(server.url)
    site_id = _site_id(demo_db, SITE_NAME)
    keep_site(page, site_id)
    page.context.set_offline(True)
    photo = make_test_jpeg(1600, 1200)
    uuids = [record_offline(page, ref, _designed_length(demo_db, ref), photo) for ref in BLOCK_C]
    expect(page.locator("[data-unsent-count]")).to_have_text(str(len(uuids)))
    answers = []
    page.on("response", lambda r: answers.append(r) if "/api/records" in r.url else None)

    page.context.set_offline(False)
    assert server.wait_for_death() == -signal.SIGKILL
    expect(page.locator("body")).to_have_attribute("data-sync-state", "waiting")
    assert _records_stored(demo_db, uuids) == {u: 1 for u in uuids[:3]}
    assert sorted(p[0] for p in _photos_stored(demo_db, uuids)) == sorted(uuids[:2])
    kept = page.evaluate(OUTBOX)
    assert [i["uuid"] for i in kept] == uuids[2:]
    assert kept[0]["record_sent"] is False  # stored, but the phone never heard so

    # Again on the same port and file: r3 once more (the server answers with its first
    # answer), p3, r4, p4, and the server dies with p4 committed and unacknowledged.
    server.start(die_after_acks=4)
    _send_now(page)
    assert server.wait_for_death() == -signal.SIGKILL
    expect(page.locator("body")).to_have_attribute("data-sync-state", "waiting")
    assert _records_stored(demo_db, uuids) == {u: 1 for u in uuids[:4]}
    assert sorted(p[0] for p in _photos_stored(demo_db, uuids)) == sorted(uuids[:4])
    kept = page.evaluate(OUTBOX)
    assert [i["uuid"] for i in kept] == uuids[3:]
    assert kept[0]["record_sent"] is True and len(kept[0]["photos"]) == 1

    server.start()
    _send_now(page)
    expect(page.locator("[data-unsent-count]")).to_have_text("0", timeout=30_000)
    assert page.evaluate(OUTBOX) == [] and page.evaluate(REFUSED) == []

    # Every record once; one photo each, each once; every photo's files on disk.
    assert _records_stored(demo_db, uuids) == {u: 1 for u in uuids}
    photos = _photos_stored(demo_db, uuids)
    assert sorted(p[0] for p in photos) == sorted(uuids)
    assert len({p[1] for p in photos}) == len(uuids)
    store_root = demo_db.parent / "photos"
    for _record, _uuid, sha, thumb in photos:
        for digest in (sha, thumb):
            assert (store_root / digest[:2] / f"{digest}.jpg").is_file()
    assert _query(demo_db, "PRAGMA integrity_check") == [("ok",)]

    # The phone resent r3 (its answer was lost): the server gave back its first answer.
    resent = [r for r in answers if r.url.endswith("/api/records") and r.status == 200]
    assert [r.json()["uuid"] for r in resent] == [uuids[2]]
    assert resent[0].json()["created"] is False
    photo_answers = [r.status for r in answers if r.url.endswith(f"/api/records/{uuids[3]}/photos")]
    assert photo_answers == [200]  # p4 resent after its lost answer: already stored


def _two_tabs_with_three_unsent(page: Page, context, live_server) -> tuple[list[str], Page]:
    """Three records with photos kept offline in one tab, a second tab open on the same
    site's offline page; both show the same outbox."""
    site_id = _site_id(live_server.db_path, BRICK_WING_NAME)
    keep_site(page, site_id)
    context.set_offline(True)
    photo = make_test_jpeg(1200, 900)
    uuids = [record_offline(page, ref, "150", photo) for ref in ("EX-B7", "EX-B8", "EX-B9")]
    other = context.new_page()
    response = other.goto(f"/sites/{site_id}/offline")
    assert response is not None and response.from_service_worker
    for tab in (page, other):
        expect(tab.locator("[data-unsent-count]")).to_have_text("3")
    return uuids, other


def _posts(context) -> list[str]:
    """The path after /api/ of every POST that reaches the network, as they go."""
    sent: list[str] = []
    context.on(
        "request",
        lambda r: sent.append(r.url.split("/api/", 1)[1]) if r.method == "POST" else None,
    )
    return sent


def _each_stored_once(live_server, uuids: list[str], tabs: tuple[Page, ...]) -> None:
    for tab in tabs:
        expect(tab.locator("[data-unsent-count]")).to_have_text("0", timeout=30_000)
    for tab in tabs:
        assert tab.evaluate(OUTBOX) == [] and tab.evaluate(REFUSED) == []
    assert _records_stored(live_server.db_path, uuids) == {u: 1 for u in uuids}
    photos = _photos_stored(live_server.db_path, uuids)
    assert sorted(p[0] for p in photos) == sorted(uuids)
    assert len({p[1] for p in photos}) == len(uuids)


def test_two_tabs_sending_one_outbox_at_once_upload_each_item_once(
    page: Page, context, live_server
):
    """Both tabs hear 'online' at the same moment; with Web Locks one sends while the other
    waits, then finds nothing left."""
    uuids, other = _two_tabs_with_three_unsent(page, context, live_server)
    assert page.evaluate("'locks' in navigator")
    sent = _posts(context)
    context.set_offline(False)
    _each_stored_once(live_server, uuids, (page, other))
    assert sorted(sent) == sorted(["records"] * 3 + [f"records/{u}/photos" for u in uuids])


def test_two_tabs_racing_without_web_locks_store_each_item_once(page: Page, context, live_server):
    """A browser with no Web Locks: both tabs send the first record at the same moment (held
    until both are in flight). The first tab finishes it; only then does the second hear its
    answer, and its photo fails, so it keeps its old copy for a retry. That copy must not come
    back into the outbox: the first tab has already sent the record and its photo."""
    context.add_init_script("delete Navigator.prototype.locks;")
    uuids, other = _two_tabs_with_three_unsent(page, context, live_server)
    assert page.evaluate("'locks' in navigator") is False
    sent = _posts(context)
    held: dict = {}
    raced: list[str] = []
    first_sender: list[Page] = []

    def records(route):
        uuid = route.request.post_data_json.get("uuid")
        if uuid == uuids[0] and not raced and "first" not in held:
            held["first"] = route  # wait for the other tab to send it too
        elif uuid == uuids[0] and "first" in held:
            raced.append(uuid)  # both in flight: the race is certain
            held.pop("first").continue_()
            held["second"] = route
        elif uuid == uuids[1] and "second" in held:
            # The first tab has deleted record 1 from the outbox before it sends record 2.
            first_sender.append(route.request.frame.page)
            route.continue_()
            held.pop("second").continue_()
        else:
            route.continue_()

    first_photo: list[str] = []

    def photos(route):
        if f"/records/{uuids[0]}/photos" in route.request.url:
            first_photo.append(route.request.url)
            if len(first_photo) == 2:
                route.abort()  # the second tab's resend of it: no answer
                return
        route.continue_()

    context.route("**/api/records", records)
    context.route("**/api/records/*/photos", photos)
    context.set_offline(False)
    # The moment the first tab has sent the last item, nothing else may be left: the second
    # tab waits 5 s before its retry, so an old copy it had put back would still be there.
    for _ in range(300):
        if first_sender:
            break
        page.wait_for_timeout(100)
    (sender,) = first_sender
    expect(sender.locator("body")).to_have_attribute("data-last-sent", uuids[2], timeout=30_000)
    assert raced == [uuids[0]] and len(first_photo) == 2
    assert sender.evaluate(OUTBOX) == []
    _each_stored_once(live_server, uuids, (page, other))
    assert sent.count("records") == 4  # record 1 twice, the others once


CSRF_SECONDS = 3


@pytest.mark.timeout(120)
def test_a_csrf_token_that_expired_with_no_signal_does_not_lose_the_records(
    phone_at, server_process, demo_db
):
    server = server_process(csrf_time_limit=CSRF_SECONDS)
    server.start()
    page = phone_at(server.url)
    site_id = _site_id(demo_db, BRICK_WING_NAME)
    keep_site(page, site_id)
    stale = page.evaluate(
        "async () => (await (await fetch('/api/csrf', {cache: 'no-store'})).json()).token"
    )
    user = page.locator("body").get_attribute("data-user")
    page.context.set_offline(True)
    uuids = [record_offline(page, ref, "150") for ref in ("EX-B7", "EX-B8")]
    page.wait_for_timeout((CSRF_SECONDS + 1) * 1000)  # the token expires with no signal

    # The first token the phone gets back is that stale one (as a cache on the way could
    # answer), so an expired token really reaches the server.
    handed: list[str] = []

    def stale_once(route):
        if handed:
            route.continue_()
        else:
            handed.append(stale)
            body = json.dumps({"token": stale, "user": int(user)})
            route.fulfill(status=200, content_type="application/json", body=body)

    page.context.route("**/api/csrf", stale_once)
    answers = []
    page.on("response", lambda r: answers.append(r) if r.url.endswith("/api/records") else None)
    page.context.set_offline(False)
    expect(page.locator("[data-unsent-count]")).to_have_text("0", timeout=30_000)
    assert page.evaluate(OUTBOX) == [] and page.evaluate(REFUSED) == []
    assert [r.status for r in answers] == [400, 201, 201]
    assert answers[0].json()["reason"] == "csrf"
    assert _records_stored(demo_db, uuids) == {u: 1 for u in uuids}

    # The stale token is refused by the server on its own: it had expired, not been mangled.
    # A fresh one gets past the CSRF check to the body's own check.
    def post_with(token):
        return page.context.request.post(
            server.url + "/api/records", headers={"X-CSRFToken": token}, data="{}"
        )

    fresh = page.context.request.get(server.url + "/api/csrf").json()["token"]
    refused, passed = post_with(stale), post_with(fresh)
    assert (refused.status, refused.json().get("reason")) == (400, "csrf")
    assert (passed.status, passed.json().get("code")) == (400, "not-json")
