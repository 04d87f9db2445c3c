"""Offline on site: the phone keeps a site pack, records with no signal for real
(``context.set_offline``), keeps records and photos in the unsent outbox, and sends each
exactly once when the signal returns. A 500 keeps the item; a refusal after a real change of
membership in the database moves it to the refused list, reachable from every screen's
header, with the server's reason. A photo keeps its camera's time. Uses the demo's brick
wing, which no other browser test changes.

Sending under faults (a server killed mid-send, two tabs racing, an expired CSRF token) is
in test_offline_sending.py."""

from __future__ import annotations

import io
import json
import sqlite3
from datetime import UTC, datetime, timedelta

import pytest
from playwright.sync_api import Page, expect

from kit.phone import OUTBOX, REFUSED, SW_CONTROLLED, keep_site, log_in_as, record_offline
from kit.photo_samples import DATETIME_ORIGINAL, EXIF_IFD, OFFSET_TIME_ORIGINAL, make_test_jpeg
from sitecheck import credentials, store, workflow
from sitecheck.bearing.typed import NumberRefused, read_number
from sitecheck.demo import BRICK_WING_NAME, DEMO_PEOPLE
from sitecheck.web.record_form import SPECS


def _site_id(live_server) -> str:
    with sqlite3.connect(live_server.db_path) as con:
        return con.execute("SELECT id FROM sites WHERE name = ?", [BRICK_WING_NAME]).fetchone()[0]


def _query(live_server, sql, params=()):
    con = sqlite3.connect(live_server.db_path)
    try:
        return con.execute(sql, params).fetchall()
    finally:
        con.close()


def test_records_made_with_no_signal_arrive_once_with_their_photos(
    page: Page, context, live_server, shoot
):
    site_id = _site_id(live_server)
    keep_site(page, site_id)
    shoot("kept")

    context.set_offline(True)
    assert page.evaluate("navigator.onLine") is False
    response = page.reload()
    assert response is not None and response.ok and response.from_service_worker
    expect(page.locator("body")).to_have_attribute("data-pack-ready", "1")
    expect(page.locator("[data-pack-bearings] li")).to_have_count(4)
    _states_show_symbol_and_words(page, live_server, site_id)

    camera = make_test_jpeg(4000, 3000)
    first = record_offline(page, "EX-B7", "150", camera)
    second = record_offline(page, "EX-B8", "145", camera)
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
    keep_site(page, site_id)
    answered = []

    def fail_once(route):
        if not answered:
            answered.append(500)
            route.fulfill(status=500, content_type="application/json", body='{"error": "boom"}')
        else:
            answered.append("passed")
            route.continue_()

    context.route("**/api/records", fail_once)
    uuid = record_offline(page, "EX-B9", "150")  # online: sent at once, and the server fails
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


def _states_show_symbol_and_words(page: Page, live_server, site_id: str) -> None:
    """Every bearing card on the offline page shows its state as symbol and words (the online
    pages' badge), never colour alone."""
    states = dict(
        _query(live_server, "SELECT id, state FROM bearings WHERE site_id = ?", [site_id])
    )
    cards = page.locator("[data-pack-bearings] li[data-bearing]")
    assert cards.count() == len(states)
    for i in range(cards.count()):
        card = cards.nth(i)
        badge = workflow.STATE_BADGES[states[card.get_attribute("data-bearing")]]
        state = card.locator(".state")
        expect(state).to_have_class(f"state {badge.css_class}")
        expect(state.locator("[aria-hidden=true]")).to_have_text(badge.symbol)
        expect(state).to_have_text(f"{badge.symbol} {badge.label}")


def _new_inspector(live_server, site_id: str, tag: str) -> tuple[int, str, str]:
    """A person of our own on the site, so changing their membership touches no other test."""
    email, password = f"inspector.{tag}@example.test", "a long test password"
    db = store.open_db(live_server.db_path)
    try:
        user = store.create_user(
            db,
            email=email,
            name=f"Inspector {tag}",
            password_hash=credentials.hash_password(password),
        )
        engineer = store.get_user_by_email(db, DEMO_PEOPLE["engineer"][0])
        store.add_membership(
            db, user_id=user["id"], site_id=site_id, role="inspector", invited_by=engineer["id"]
        )
    finally:
        db.conn.close()
    return user["id"], email, password


@pytest.mark.parametrize(
    ("change", "status", "words"),
    [
        ("role changed to contractor", 403, "As contractor on this site you may not record"),
        ("taken off the site", 404, "taken off"),
    ],
    ids=["role-changed", "taken-off"],
)
def test_a_refusal_after_a_membership_change_moves_the_record_to_the_refused_list(
    page: Page, context, live_server, shoot, change, status, words
):
    """The membership is changed for real in the database while the phone is offline; the
    server refuses the record when it arrives. A person taken off a site gets 404 (the
    site's existence is not revealed to non-members), a person whose role changed gets 403;
    the phone moves either to the refused list and shows the server's sentence."""
    site_id = _site_id(live_server)
    tag = change.split()[0]
    user_id, email, password = _new_inspector(live_server, site_id, tag)
    log_in_as(page, email, password)
    keep_site(page, site_id, role=None)
    context.set_offline(True)
    uuid = record_offline(page, "EX-B10", "150")
    expect(page.locator("[data-unsent-count]")).to_have_text("1")

    db = store.open_db(live_server.db_path)
    try:
        engineer = store.get_user_by_email(db, DEMO_PEOPLE["engineer"][0])
        if status == 403:
            store.set_role(
                db, user_id=user_id, site_id=site_id, role="contractor", by_user_id=engineer["id"]
            )
        else:
            store.remove_membership(db, user_id=user_id, site_id=site_id, by_user_id=engineer["id"])
    finally:
        db.conn.close()

    context.set_offline(False)  # 'online': the outbox sends, the server refuses
    refused = page.locator(f'[data-refused-item="{uuid}"]')
    expect(refused).to_contain_text(words)
    # In words only: no status code on the inspector's screen.
    expect(refused).not_to_contain_text(str(status))
    expect(page.locator("[data-unsent-count]")).to_have_text("0")
    assert page.evaluate(OUTBOX) == []
    (kept,) = page.evaluate(REFUSED)
    assert (kept["uuid"], kept["kind"], kept["status"]) == (uuid, "record", status)
    assert words in kept["reason"]
    assert not _query(live_server, "SELECT uuid FROM as_built_records WHERE uuid = ?", [uuid])
    shoot("refused-on-site-page")

    # The refused list is one tap away from every screen's header, with its count.
    for url in ("/", "/offline", f"/sites/{site_id}/inspect"):
        page.goto(url)
        link = page.locator("header [data-refused]")
        expect(link).to_have_text("Refused: 1")
        expect(link).to_have_class("refused-link has-refused")
    link.tap()
    expect(page).to_have_url(live_server.url + "/refused")
    expect(page.locator("h1")).to_have_text("Refused by the server")
    item = page.locator(f'[data-refused-item="{uuid}"]')
    expect(item).to_contain_text(words)
    expect(item).not_to_contain_text(str(status))
    expect(item).to_contain_text("EX-B10")
    item.get_by_text("What was measured").tap()
    expect(item.locator("dl.values")).to_contain_text("Bearing length")
    expect(item.locator("dl.values")).not_to_contain_text("bearing_length")
    shoot("refused-page")

    # With no signal the page comes from the service worker and still lists it.
    context.set_offline(True)
    response = page.reload()
    assert response is not None and response.from_service_worker
    expect(page.locator(f'[data-refused-item="{uuid}"]')).to_contain_text(words)
    context.set_offline(False)


def test_the_refused_link_shows_no_count_when_nothing_is_refused(page: Page, live_server, shoot):
    email, _name, password = DEMO_PEOPLE["viewer"]
    log_in_as(page, email, password)
    link = page.locator("header [data-refused]")
    expect(link).to_be_visible()
    expect(link).to_have_text("Refused")
    expect(link).to_have_class("refused-link")
    shoot("header")
    link.tap()
    expect(page.locator("[data-refused-all]")).to_have_text("Nothing refused on this phone.")


def _camera_jpeg(width: int, height: int, taken: str | None, offset: str | None) -> bytes:
    """A camera-like JPEG whose EXIF says when it was taken (DateTimeOriginal) and, if given,
    the camera's UTC offset (OffsetTimeOriginal)."""
    from PIL import Image

    exif = Image.Exif()
    if taken:
        exif_ifd = exif.get_ifd(EXIF_IFD)
        exif_ifd[DATETIME_ORIGINAL] = taken
        if offset:
            exif_ifd[OFFSET_TIME_ORIGINAL] = offset
        exif[0x010F] = "Invented Camera Co"  # Make: a tag before the Exif IFD, as cameras write
    out = io.BytesIO()
    Image.new("RGB", (width, height), (140, 120, 100)).save(out, "JPEG", quality=90, exif=exif)
    return out.getvalue()


@pytest.mark.browser_context_args(timezone_id="Europe/London")
def test_a_photo_keeps_the_time_its_camera_took_it(page: Page, context, live_server):
    """The phone re-encodes photos, which drops EXIF, so it reads the camera's time first and
    sends it with its zone; the server keeps it as the photo's capture time."""
    site_id = _site_id(live_server)
    keep_site(page, site_id)
    context.set_offline(True)
    cases = [
        # (EXIF time, camera's offset, expected on the phone, where it came from)
        ("2026:03:14 09:26:53", "-05:00", "2026-03-14T14:26:53Z", "camera"),
        # No offset: the phone's zone (London, summer time in June: UTC+1) is applied.
        ("2026:06:10 14:30:00", None, "2026-06-10T13:30:00Z", "camera, phone's zone"),
        # No EXIF time at all: the file's own time, as the phone was given it.
        (None, None, None, "file"),
    ]
    uuids = []
    started = datetime.now(UTC).replace(microsecond=0)
    for n, (taken, offset, _expected, _from) in enumerate(cases):
        photo = _camera_jpeg(1200, 900, taken, offset)
        uuids.append(record_offline(page, "EX-B9", str(150 + n), photo))
    kept = {item["uuid"]: item["photos"][0] for item in page.evaluate(OUTBOX)}
    for uuid, (_taken, _offset, expected, source) in zip(uuids, cases, strict=True):
        photo = kept[uuid]
        assert photo["captured_from"] == source
        if expected:
            assert photo["captured_at"] == expected
        else:
            file_time = datetime.fromisoformat(photo["captured_at"].replace("Z", "+00:00"))
            assert started - timedelta(seconds=5) <= file_time <= datetime.now(UTC)

    context.set_offline(False)
    expect(page.locator("[data-unsent-count]")).to_have_text("0", timeout=20_000)
    for uuid in uuids:
        ((stored,),) = _query(
            live_server, "SELECT captured_at FROM photos WHERE record_uuid = ?", [uuid]
        )
        phone = datetime.fromisoformat(kept[uuid]["captured_at"].replace("Z", "+00:00"))
        assert datetime.fromisoformat(stored.replace("Z", "+00:00")) == phone


def test_log_out_with_unsent_records_warns_first(page: Page, context, live_server):
    site_id = _site_id(live_server)
    keep_site(page, site_id)
    context.set_offline(True)
    record_offline(page, "EX-B7", "150")
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


def _exif_jpeg(order: str, ifd0: dict[int, str], exif: dict[int, str]) -> bytes:
    """A JPEG whose APP1 carries a TIFF block written by hand in either byte order ("II"
    little-endian, as Pillow writes; "MM" big-endian, as many cameras write), with ASCII tags
    in IFD0 and in the Exif IFD."""
    import struct

    from PIL import Image

    end = "<" if order == "II" else ">"
    data = b""  # values longer than 4 bytes, after both IFDs
    ifd0_at = 8
    ifd0_entries = len(ifd0) + 1  # and the Exif IFD pointer
    exif_at = ifd0_at + 2 + 12 * ifd0_entries + 4
    data_at = exif_at + 2 + 12 * len(exif) + 4

    def entries(tags: dict[int, str]) -> bytes:
        nonlocal data
        out = b""
        for tag, text in sorted(tags.items()):
            raw = text.encode("ascii") + b"\0"
            out += struct.pack(end + "HHII", tag, 2, len(raw), data_at + len(data))
            data += raw
        return out

    first = entries(ifd0) + struct.pack(end + "HHII", 0x8769, 4, 1, exif_at)
    second = entries(exif)
    tiff = (
        order.encode()
        + struct.pack(end + "HI", 42, ifd0_at)
        + struct.pack(end + "H", ifd0_entries)
        + first
        + b"\0\0\0\0"
        + struct.pack(end + "H", len(exif))
        + second
        + b"\0\0\0\0"
        + data
    )
    app1 = b"Exif\0\0" + tiff
    out = io.BytesIO()
    Image.new("RGB", (32, 24), (90, 90, 90)).save(out, "JPEG")
    jpeg = out.getvalue()
    return jpeg[:2] + b"\xff\xe1" + struct.pack(">H", len(app1) + 2) + app1 + jpeg[2:]


READ = """async (bytes) => {
  const { readCameraTime } = await import("/static/js/photos.js");
  return readCameraTime(new DataView(new Uint8Array(bytes).buffer));
}"""


@pytest.mark.browser_context_args(timezone_id="Europe/London")
def test_the_phones_exif_reader_reads_both_byte_orders_and_never_trips_on_damage(page: Page):
    page.goto("/offline")
    taken, original, offset = 0x0132, 0x9003, 0x9011

    def read(data: bytes):
        return page.evaluate(READ, list(data))

    for order in ("II", "MM"):
        both = _exif_jpeg(
            order,
            {taken: "2026:01:02 03:04:05"},
            {original: "2026:01:02 03:04:05", offset: "+05:30"},
        )
        assert read(both) == {"at": "2026-01-01T21:34:05Z", "from": "camera"}, order
        # Only the time the file was written (IFD0 DateTime), no zone: London in January is UTC.
        fallback = _exif_jpeg(order, {taken: "2026:01:02 03:04:05"}, {})
        assert read(fallback) == {"at": "2026-01-02T03:04:05Z", "from": "camera, phone's zone"}
    # A camera with no clock set, a date that is not a date, a zone out of range: no time,
    # or no zone, never a wrong one.
    assert read(_exif_jpeg("II", {}, {original: "0000:00:00 00:00:00"})) is None
    assert read(_exif_jpeg("MM", {}, {original: "2026:02:30 10:00:00"})) is None
    assert read(_exif_jpeg("II", {}, {original: "2026:07:01 10:00:00", offset: "+25:00"})) == {
        "at": "2026-07-01T09:00:00Z",
        "from": "camera, phone's zone",
    }
    # Damaged or absent EXIF: no time, and no error.
    good = _exif_jpeg("MM", {}, {original: "2026:01:02 03:04:05", offset: "+00:00"})
    assert read(good)["at"] == "2026-01-02T03:04:05Z"
    assert read(good[:60]) is None  # cut off inside the IFD
    # IFD0 claims 65535 entries (SOI 2 + APP1 head 4 + "Exif\0\0" 6 + TIFF head 8 = byte 20).
    assert read(good[:20] + b"\xff\xff" + good[22:]) is None
    # An empty EXIF segment before the real one is passed over.
    assert read(good[:2] + b"\xff\xe1\x00\x08Exif\0\0" + good[2:])["at"] == "2026-01-02T03:04:05Z"
    assert read(make_test_jpeg(40, 30)) is None  # no EXIF at all
    assert read(b"\x89PNG\r\n\x1a\n" + bytes(40)) is None  # not a JPEG


def test_a_session_that_ended_while_offline_asks_for_a_log_in_and_loses_nothing(
    page: Page, context, live_server
):
    site_id = _site_id(live_server)
    keep_site(page, site_id)
    context.set_offline(True)
    page.reload()
    expect(page.locator("body")).to_have_attribute("data-pack-ready", "1")
    kept = record_offline(page, "EX-B9", "100")

    # While the phone has no signal its session ends on the server (expiry or a password
    # change elsewhere end it the same way).
    db = store.open_db(live_server.db_path)
    inspector = store.get_user_by_email(db, DEMO_PEOPLE["inspector"][0])
    assert store.revoke_all_sessions_for_user(db, inspector["id"]) >= 1
    db.conn.close()

    context.set_offline(False)
    expect(page.locator("body")).to_have_attribute("data-sync-state", "login", timeout=20_000)
    assert [i["uuid"] for i in page.evaluate(OUTBOX)] == [kept]
    assert not _query(live_server, "SELECT uuid FROM as_built_records WHERE uuid = ?", [kept])

    email, _name, password = DEMO_PEOPLE["inspector"]
    log_in_as(page, email, password)  # the app starts again and sends what waited
    expect(page.locator("[data-unsent-count]")).to_have_text("0", timeout=20_000)
    assert page.evaluate(OUTBOX) == []
    rows = _query(live_server, "SELECT count(*) FROM as_built_records WHERE uuid = ?", [kept])
    assert rows == [(1,)]


def test_a_shell_that_failed_to_download_is_tried_again(page: Page, context):
    """One file of the shell fails the first time (a dropped connection): the worker's
    install fails as a whole, and the page registers it again until the phone has it."""
    failed = []

    def drop_first(route):
        if not failed:
            failed.append(route.request.url)
            route.abort()
        else:
            route.continue_()

    context.route("**/refused", drop_first)  # fetched only by the worker's install
    page.goto("/login")  # and stay: no later page load would register the worker again
    page.wait_for_function(SW_CONTROLLED, timeout=30_000)
    assert failed, "the worker's first install never asked for the shell"
    cached = page.evaluate(
        "async () => (await caches.has(`sitecheck-shell-${(await (await fetch('/sw.js')).text())"
        '.match(/const VERSION = "([^"]+)"/)[1]}`))'
    )
    assert cached is True


def test_a_refused_record_is_recorded_again_from_its_values(page: Page, context, live_server):
    site_id = _site_id(live_server)
    keep_site(page, site_id)
    context.set_offline(True)
    refused_uuid = record_offline(page, "EX-B8", "145")
    refusal = {
        "error": "Bearing length: 145 mm cannot be right for this beam.",
        "field": "measurements.bearing_length",
        "code": "refused",
    }
    context.route(
        "**/api/records",
        lambda route: route.fulfill(
            status=422, content_type="application/json", body=json.dumps(refusal)
        ),
    )
    context.set_offline(False)
    expect(page.locator(f'[data-refused-item="{refused_uuid}"]')).to_be_visible(timeout=20_000)
    context.unroute("**/api/records")

    page.goto("/refused")
    page.locator(f'[data-record-again="{refused_uuid}"]').tap()
    form = page.locator("form[data-offline-form]")
    expect(form).to_be_visible()
    expect(form.locator("[data-again-notice]")).to_contain_text("Filled from a refused record")
    assert page.input_value("#bearing_length") == "145"
    assert form.locator("#field-bedded input[value=yes]").is_checked()
    page.fill("#bearing_length", "150")
    form.get_by_role("button", name="Keep in unsent").tap()
    expect(form).to_be_hidden()
    again_uuid = page.locator("body").get_attribute("data-last-saved")
    assert again_uuid and again_uuid != refused_uuid

    expect(page.locator("[data-unsent-count]")).to_have_text("0", timeout=20_000)
    measured = _query(
        live_server, "SELECT measurements FROM as_built_records WHERE uuid = ?", [again_uuid]
    )
    assert json.loads(measured[0][0])["bearing_length"] == 150
    # The refused record stays on its list: nothing refused is deleted.
    assert refused_uuid in [i["uuid"] for i in page.evaluate(REFUSED)]


# One outbox item as kept: the record that will be sent and the form's text as typed.
KEPT_ITEM = """async (uuid) => {
  const db = await new Promise((ok, no) => {
    const r = indexedDB.open("sitecheck");
    r.onsuccess = () => ok(r.result);
    r.onerror = () => no(r.error);
  });
  const item = await new Promise((ok) => {
    const r = db.transaction("outbox").objectStore("outbox").get(uuid);
    r.onsuccess = () => ok(r.result);
  });
  db.close();
  return { record: item.record, values: item.values };
}"""


def _server_words(name: str, typed: str) -> str:
    """What the server's form says of a number it refuses (record_form.NumberField)."""
    spec = SPECS[name]
    least, greatest = spec.bounds or (None, None)
    with pytest.raises(NumberRefused) as refused:
        read_number(typed, unit=spec.unit, least=least, greatest=greatest, example=spec.example)
    return refused.value.sentence(spec.label)


def test_numbers_the_offline_form_cannot_read_are_refused_in_the_servers_words(
    page: Page, context, live_server, shoot
):
    """The phone reads typed numbers by the server's one reader (its twin, typed.js): with no
    signal, each number it cannot read is named with its label, what was typed and what is
    expected, exactly as the server would say it; nothing is kept, the draft holds what was
    typed, and the record is kept once the numbers are put right."""
    site_id = _site_id(live_server)
    keep_site(page, site_id)
    context.set_offline(True)
    before = len(page.evaluate(OUTBOX))
    page.locator("li[data-bearing]", has_text="EX-B7").first.locator("button").tap()
    form = page.locator("form[data-offline-form]")
    typed = {
        "bearing_length": "15O",  # a letter O for a zero
        "wall_thickness": "215mm",
        "unit_strength": "7,3",  # a decimal comma: read neither way
        "packing": "300",  # beyond the form's own bound
    }
    for name, text in typed.items():
        page.fill(f"#{name}", text)
    page.fill("#notes", "typed on site")
    panel = form.locator("[data-provisional-verdict]")
    expect(panel).to_contain_text(_server_words("unit_strength", "7,3"))
    expect(panel).to_contain_text("Left out of this verdict until it is put right.")
    form.get_by_role("button", name="Keep in unsent").tap()
    for name, text in typed.items():
        expect(form.locator(f'[data-error-for="{name}"]')).to_have_text(
            "✗ " + _server_words(name, text)
        )
    assert "write 7.3" in _server_words("unit_strength", "7,3")
    expect(form.locator("[data-form-errors]")).to_contain_text("Nothing was kept yet.")
    shoot("numbers-refused-offline")
    assert page.input_value("#notes") == "typed on site"  # what was typed stays
    assert len(page.evaluate(OUTBOX)) == before

    # The draft holds the text as typed: the page opened again brings it back.
    response = page.reload()
    assert response is not None and response.from_service_worker
    page.locator("li[data-bearing]", has_text="EX-B7").first.locator("button").tap()
    expect(form.locator("[data-draft-line]")).to_contain_text("Draft restored")
    for name, text in typed.items():
        expect(page.locator(f"#{name}")).to_have_value(text)

    for name, text in {"bearing_length": "150", "wall_thickness": "215"}.items():
        page.fill(f"#{name}", text)
    page.fill("#unit_strength", "7.3")
    page.fill("#packing", "1,005.0")  # thousands with a decimal point: read, then refused
    form.get_by_role("button", name="Keep in unsent").tap()
    expect(form.locator('[data-error-for="packing"]')).to_have_text(
        "✗ " + _server_words("packing", "1,005.0")
    )
    page.fill("#packing", " 5 ")  # spaces around are trimmed
    form.get_by_role("button", name="Keep in unsent").tap()
    expect(form).to_be_hidden()
    kept = page.evaluate(KEPT_ITEM, page.locator("body").get_attribute("data-last-saved"))
    assert len(page.evaluate(OUTBOX)) == before + 1
    assert kept["record"]["measurements"]["unit_strength"] == 7.3
    assert kept["record"]["measurements"]["wall_thickness"] == 215
    assert kept["record"]["checklist"]["packing"] == 5
    assert kept["values"]["packing"] == " 5 "
