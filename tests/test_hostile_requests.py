"""Requests an attacker (or a broken phone) sends, against a real server on 127.0.0.1 over a
real SQLite file: bodies too deep or too large to parse, one record id with two bodies.

The phone retries a 5xx for ever and moves a 4xx to its refused list with the server's
sentence, so every refusal here must be a 4xx that says what was wrong.
"""

from __future__ import annotations

import errno
import re
import signal
import subprocess
import sys
import threading
import time
import uuid
from datetime import UTC, datetime
from functools import partial
from pathlib import Path

import flask
import pytest

from kit.photo_samples import make_test_jpeg
from kit.servers import LiveServer
from sitecheck import store
from sitecheck.photos import PhotoStore, processing_slot
from sitecheck.photos import ingest as photos_ingest
from sitecheck.web import create_app
from sitecheck.web.jsonbody import MAX_JSON_BYTES, MAX_JSON_DEPTH
from sitecheck.web.record_form import MAX_PHOTOS


@pytest.fixture
def app(tmp_path):
    # Not TESTING: errors are answered as in production, not raised into the test.
    return create_app(tmp_path / "site.db")


@pytest.fixture
def server(app):
    live = LiveServer(app)
    yield live
    live.stop()


@pytest.fixture
def inspector(server, live_client, site):
    return live_client(server, "inspector")


@pytest.fixture
def bearing(db, site):
    return store.bearing_by_reference(db, site_id=site["id"], reference="GF-B1-E")


def _now() -> str:
    return datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def _record(site, bearing, **changes) -> dict:
    """An as-built record as the phone sends it (invented values near the design)."""
    body = {
        "uuid": str(uuid.uuid4()),
        "site_id": site["id"],
        "bearing_id": bearing["id"],
        "design_revision": bearing["revision"],
        "measured_at": _now(),
        "measurements": {"bearing_length": bearing["design_input"]["beam"]["bearing_length"]},
        "checklist": {"bedded": True, "packing": 0},
        "notes": "Sent from the unsent outbox.",
    }
    body.update(changes)
    return body


def _records(db) -> int:
    return db.execute("SELECT count(*) FROM as_built_records").fetchone()[0]


# --- JSON too deep or too large (issue 12, point 10) --------------------------------------------


@pytest.mark.parametrize("opening", [b"[", b'{"a":'])
def test_json_nested_five_thousand_deep_is_a_400_with_a_sentence(inspector, db, opening):
    closing = b"]" if opening == b"[" else b"}"
    answer = inspector.post_json("/api/records", raw=opening * 5000 + b"1" + closing * 5000)
    assert answer.status == 400, answer.text[:300]
    body = answer.json()
    assert body["code"] == "json-too-deep"
    assert f"at most {MAX_JSON_DEPTH} levels" in body["error"]
    assert _records(db) == 0


def test_a_record_with_a_deep_value_inside_is_refused_before_anything_is_stored(
    inspector, db, site, bearing
):
    deep = 0
    for _ in range(MAX_JSON_DEPTH + 1):
        deep = [deep]
    body = _record(site, bearing, measurements={"bearing_length": deep})
    answer = inspector.post_json("/api/records", body)
    assert answer.status == 400 and answer.json()["code"] == "json-too-deep"
    assert _records(db) == 0
    # The same record as the phone really sends it is stored.
    fine = _record(site, bearing)
    assert inspector.post_json("/api/records", fine).status == 201


def test_a_json_body_over_the_limit_is_a_400_that_says_the_limit(inspector, db, site, bearing):
    body = _record(site, bearing, notes="x" * MAX_JSON_BYTES)
    answer = inspector.post_json("/api/records", body)
    assert answer.status == 400
    refusal = answer.json()
    assert refusal["code"] == "json-too-large"
    assert f"{MAX_JSON_BYTES // 1024} kB" in refusal["error"]
    assert _records(db) == 0


def test_a_body_that_is_not_json_at_all_is_still_a_400(inspector, db):
    for raw in (b"{", b"\xff\xfe", b"[1, 2", b"NaN-ish"):
        answer = inspector.post_json("/api/records", raw=raw)
        assert answer.status == 400, raw
        assert answer.json()["code"] == "not-json"
    assert _records(db) == 0


def test_deep_json_sent_to_any_page_is_never_a_500(server, inspector):
    # Pages that take no JSON ignore the body; none may fail on it.
    deep = b"[" * 5000 + b"]" * 5000
    for path in ("/api/records", "/login", "/logout"):
        answer = inspector.post_json(path, raw=deep)
        assert answer.status < 500, (path, answer.status)


# --- one record id, two bodies (issue 12, point 12) ----------------------------------------------


def test_the_same_record_id_with_other_values_is_a_409_and_the_first_stays(
    inspector, db, site, bearing
):
    first = _record(site, bearing, notes="Padstone as drawn.")
    assert inspector.post_json("/api/records", first).status == 201
    # A resend of the same values (the answer was lost) gets the first answer.
    again = inspector.post_json("/api/records", first)
    assert again.status == 200 and again.json()["created"] is False

    other = dict(
        first,
        notes="Padstone cracked at its corner.",
        measurements={"bearing_length": first["measurements"]["bearing_length"] - 20},
    )
    answer = inspector.post_json("/api/records", other)
    assert answer.status == 409, answer.text[:300]
    refusal = answer.json()
    assert refusal["code"] == "same-id-other-values" and refusal["field"] == "uuid"
    assert refusal["differs"] == ["measurements", "notes"]
    assert "already stored with other values (measurements, notes)" in refusal["error"]
    assert "record the bearing again" in refusal["error"]
    stored = store.get_record(db, site_id=site["id"], uuid=first["uuid"])
    assert stored["notes"] == "Padstone as drawn."
    assert _records(db) == 1


@pytest.mark.parametrize(
    "change",
    [
        {"checklist": {"bedded": False, "packing": 0}},
        {"measured_at": "2026-03-02T08:00:00Z"},
    ],
    ids=["checklist", "time"],
)
def test_any_other_value_under_the_same_id_is_refused(inspector, site, bearing, change):
    first = _record(site, bearing)
    assert inspector.post_json("/api/records", first).status == 201
    answer = inspector.post_json("/api/records", dict(first, **change))
    assert answer.status == 409 and answer.json()["code"] == "same-id-other-values"


def test_two_bodies_under_one_id_at_the_same_moment_store_one_and_refuse_the_other(
    server, live_client, db, site, bearing
):
    inspector = live_client(server, "inspector")
    token = inspector.token()
    record_id = str(uuid.uuid4())
    bodies = [
        _record(site, bearing, uuid=record_id, notes=f"Version {n} of the same record.")
        for n in range(4)
    ]
    start = threading.Barrier(len(bodies))
    answers = [None] * len(bodies)

    def send(n):
        start.wait()
        answers[n] = inspector.post_json("/api/records", bodies[n], token=token)

    threads = [threading.Thread(target=send, args=(n,)) for n in range(len(bodies))]
    for t in threads:
        t.start()
    for t in threads:
        t.join(60)
    statuses = sorted(a.status for a in answers)
    assert statuses == [201, 409, 409, 409]
    kept = store.get_record(db, site_id=site["id"], uuid=record_id)
    winner = next(n for n, a in enumerate(answers) if a.status == 201)
    assert kept["notes"] == f"Version {winner} of the same record."
    assert _records(db) == 1


# --- photos: the limit under concurrency, and no file without a row (points 7 and 9) ---------


def _files(app) -> set[str]:
    """Every picture in the photo store (print copies are named by their picture)."""
    return set(app.extensions["photo_store"].iter_all_shas())


def _named_files(db) -> set[str]:
    rows = db.execute("SELECT sha256, thumb_sha256 FROM photos").fetchall()
    return {sha for row in rows for sha in row if sha}


def _all_at_once(calls):
    """Run each call on its own thread, released together; their answers in order."""
    start = threading.Barrier(len(calls))
    answers = [None] * len(calls)

    def run(n):
        start.wait()
        answers[n] = calls[n]()

    threads = [threading.Thread(target=run, args=(n,)) for n in range(len(calls))]
    for t in threads:
        t.start()
    for t in threads:
        t.join(120)
    return answers


def _sent_record(client, site, bearing) -> str:
    body = _record(site, bearing)
    assert client.post_json("/api/records", body).status == 201
    return body["uuid"]


def test_sixteen_photos_sent_at_once_to_one_record_keep_exactly_eight(
    app, server, inspector, db, site, bearing
):
    record_id = _sent_record(inspector, site, bearing)
    token = inspector.token()
    pictures = [make_test_jpeg(320 + n, 240) for n in range(16)]

    def send(data):
        # As the phone does: a 503 (too many photos at once) is sent again a little later.
        while (answer := inspector.post_photo(record_id, data, token=token)).status == 503:
            time.sleep(0.1)
        return answer

    answers = _all_at_once([partial(send, data) for data in pictures])
    statuses = sorted(a.status for a in answers)
    assert statuses == [201] * MAX_PHOTOS + [422] * (16 - MAX_PHOTOS), statuses
    for refused in (a for a in answers if a.status == 422):
        body = refused.json()
        assert body["code"] == "too-many-photos"
        assert f"At most {MAX_PHOTOS} photos for one as-built record" in body["error"]
    assert len(store.photos_for_record(db, site_id=site["id"], record_uuid=record_id)) == 8
    # The refused eight left no file behind.
    assert _files(app) == _named_files(db)


def test_a_refused_photo_leaves_no_file(app, server, inspector, db, site, bearing):
    first_record = _sent_record(inspector, site, bearing)
    second_record = _sent_record(inspector, site, bearing)
    photo_id = str(uuid.uuid4())
    kept = inspector.post_photo(first_record, make_test_jpeg(640, 480), photo_uuid=photo_id)
    assert kept.status == 201
    files = _files(app)

    # The same photo id for another record: refused, its picture not kept.
    moved = inspector.post_photo(second_record, make_test_jpeg(500, 400), photo_uuid=photo_id)
    assert moved.status == 409 and moved.json()["code"] == "uuid-in-use"
    # The same photo id again with another picture: refused, not taken for a resend.
    other = inspector.post_photo(first_record, make_test_jpeg(300, 200), photo_uuid=photo_id)
    assert other.status == 409, other.text[:300]
    assert other.json()["code"] == "same-id-other-values"
    assert "already stored with another picture" in other.json()["error"]
    # The same photo id with the same picture: a resend, answered as the first time.
    again = inspector.post_photo(first_record, make_test_jpeg(640, 480), photo_uuid=photo_id)
    assert again.status == 200 and again.json()["created"] is False

    assert _files(app) == files == _named_files(db)
    assert db.execute("SELECT count(*) FROM photos").fetchone()[0] == 1


def test_a_form_whose_upload_fails_midway_never_removes_a_picture_another_upload_kept(
    app, server, live_client, db, site, bearing, monkeypatch
):
    """The online form and the phone send the same picture at once; the disk fills while the
    form's upload is writing its files. The form's upload fails and removes the files it
    brought, but never one the phone's upload has just stored for its own photo."""
    inspector = live_client(server, "inspector")
    engineer = live_client(server, "engineer")  # engineers record too
    form_path = f"/sites/{site['id']}/bearings/{bearing['id']}/record"

    class FillingDisk(PhotoStore):
        def put_print(self, sha, data):
            if flask.request.path == form_path:
                time.sleep(0.4)  # the disk slows as it fills, then refuses
                raise OSError(errno.ENOSPC, "No space left on device")
            return super().put_print(sha, data)

    photos = FillingDisk(app.extensions["photo_store"].root)
    monkeypatch.setitem(app.extensions, "photo_store", photos)
    for attempt in range(3):
        same = make_test_jpeg(900, 300 + attempt)
        record_id = _sent_record(engineer, site, bearing)
        page = inspector.get(form_path).text
        fields = {
            name: re.search(rf'name="{name}"[^>]*value="([^"]*)"', page).group(1)
            for name in ("csrf_token", "record_uuid", "design_revision", "measured_at")
        }
        fields["bearing_length"] = f"{bearing['design_input']['beam']['bearing_length']:g}"
        engineer_token = engineer.token()

        def phone(record_id=record_id, same=same, token=engineer_token):
            time.sleep(0.15)  # arrives while the form's upload is writing
            return engineer.post_photo(record_id, same, token=token)

        failed, kept = _all_at_once(
            [
                partial(inspector.post_multipart, form_path, fields, [("photos", "a.jpg", same)]),
                phone,
            ]
        )
        assert failed.status == 500 and kept.status == 201, (failed.status, kept.text[:300])
        (row,) = store.photos_for_record(db, site_id=site["id"], record_uuid=record_id)
        assert photos.verify(row["sha256"]) and photos.verify(row["thumb_sha256"])
    assert _files(app) == _named_files(db)


# The photo upload in a process of its own, killed at a real point: the third file it moves
# into place (the print copy, written after the picture and its thumbnail) never arrives.
_KILLED_MID_UPLOAD = """
import os, signal, sys
from pathlib import Path
from sitecheck import services, store
from sitecheck.photos import PhotoStore, ingest_photo

db_path, photo_dir, site_id, record_id, photo_id, user_id, picture = sys.argv[1:8]
moved = 0
real_replace = os.replace

def replace_then_die(source, target):
    global moved
    moved += 1
    if moved == 3:
        os.kill(os.getpid(), signal.SIGKILL)
    return real_replace(source, target)

os.replace = replace_then_die
db = store.open_db(db_path)
services.store_photo(
    db,
    site=store.get_site(db, site_id),
    record_uuid=record_id,
    photo=ingest_photo(Path(picture).read_bytes()),
    photos=PhotoStore(Path(photo_dir)),
    user_id=int(user_id),
    uuid=photo_id,
)
"""


def test_a_server_killed_mid_upload_leaves_nothing_once_it_starts_again(
    app, server, inspector, live_client, db, site, bearing, people, tmp_path
):
    record_id = _sent_record(inspector, site, bearing)
    earlier = inspector.post_photo(record_id, make_test_jpeg(400, 300))
    assert earlier.status == 201
    picture = tmp_path / "IMG_0042.jpg"
    picture.write_bytes(make_test_jpeg(800, 600))
    photo_id = str(uuid.uuid4())
    photo_dir = Path(app.config["PHOTO_DIR"])
    child = subprocess.run(
        [
            sys.executable,
            "-c",
            _KILLED_MID_UPLOAD,
            app.config["DB_PATH"],
            str(photo_dir),
            site["id"],
            record_id,
            photo_id,
            str(people["inspector"].id),
            str(picture),
        ],
        capture_output=True,
        timeout=120,
    )
    assert child.returncode == -signal.SIGKILL, child.stderr.decode()[-2000:]
    # What the crash left: the picture and its thumbnail with no row, a print copy half moved.
    assert list(photo_dir.rglob(".incoming-*.part"))
    assert _files(app) - _named_files(db)
    assert db.execute("SELECT count(*) FROM photos WHERE uuid = ?", [photo_id]).fetchone()[0] == 0

    server.stop()
    again = create_app(app.config["DB_PATH"])  # the server starts again on the same files
    assert not list(photo_dir.rglob(".incoming-*.part"))
    assert _files(again) == _named_files(db)
    for row in store.photos_for_record(db, site_id=site["id"], record_uuid=record_id):
        assert again.extensions["photo_store"].verify(row["sha256"])
    assert db.execute("PRAGMA integrity_check").fetchone()[0] == "ok"

    # The phone never had an answer, so it sends the photo again: now it is kept.
    restarted = LiveServer(again)
    try:
        phone = live_client(restarted, "inspector")
        resent = phone.post_photo(record_id, picture.read_bytes(), photo_uuid=photo_id)
        assert resent.status == 201, resent.text[:300]
    finally:
        restarted.stop()
    assert _files(again) == _named_files(db)


# --- photos: many at once (point 6) ------------------------------------------------------------


def test_uploads_beyond_those_the_server_can_hold_are_told_to_come_back_and_lose_nothing(
    app, server, inspector, db, site, bearing
):
    """Every picture slot is busy and enough uploads already wait: the next is answered at
    once with a 503 and Retry-After (the phone keeps the photo and sends it again), nothing
    of it is stored, and pages still answer."""
    slots = photos_ingest._SLOTS
    record_id = _sent_record(inspector, site, bearing)
    token = inspector.token()
    release = threading.Event()
    holding = threading.Barrier(slots.slots + 1)

    def hold():
        with processing_slot(wait_s=None):
            holding.wait()
            release.wait(60)

    holders = [threading.Thread(target=hold) for _ in range(slots.slots)]
    for t in holders:
        t.start()
    holding.wait()
    in_line = []
    answers = {}

    def send(n):
        answers[n] = inspector.post_photo(record_id, make_test_jpeg(300 + n, 200), token=token)

    try:
        for n in range(min(slots.waiting_limit, MAX_PHOTOS - 1)):
            in_line.append(threading.Thread(target=send, args=(n,)))
            in_line[-1].start()
        for _ in range(1000):
            if slots._waiting == len(in_line):
                break
            time.sleep(0.01)
        assert slots._waiting == len(in_line)
        if len(in_line) < slots.waiting_limit:  # fill the line to its end
            slots.waiting_limit = len(in_line)
        busy_photo = make_test_jpeg(640, 480)
        photo_id = str(uuid.uuid4())
        busy = inspector.post_photo(record_id, busy_photo, photo_uuid=photo_id, token=token)
        assert busy.status == 503, busy.text[:300]
        assert busy.headers["Retry-After"] == "30"
        assert busy.json()["code"] == "busy"
        assert "sent again in about 30 seconds" in busy.json()["error"]
        assert store.get_photo(db, site_id=site["id"], uuid=photo_id) is None
        assert inspector.get("/login").status == 200  # pages still answer meanwhile
    finally:
        slots.waiting_limit = 2 * slots.slots
        release.set()
        for t in [*holders, *in_line]:
            t.join(60)
    assert sorted(a.status for a in answers.values()) == [201] * len(in_line)
    again = inspector.post_photo(record_id, busy_photo, photo_uuid=photo_id, token=token)
    assert again.status == 201
