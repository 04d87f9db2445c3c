"""Evidence that arrives for a released bearing: a record measured before the release and
sent later, a photo added to the record the release rests on. It is kept, the release stands,
and the engineer finds it in the queue as recorded after release, to reopen the bearing or
keep the release with a reason. Through the real app on a real SQLite file; records and
photos come in through the phone's sync API."""

from __future__ import annotations

import io
import sqlite3
import uuid
from datetime import UTC, datetime, timedelta

import sqlite_utils
from pypdf import PdfReader

from kit.photo_samples import make_test_jpeg
from kit.release_steps import STATEMENT, released, reopen_url
from kit.review_steps import bearing_named, review_url, state_of
from kit.web import csrf_token
from sitecheck import services, store
from sitecheck.report.collect import collect
from sitecheck.report.pdf import pdf_bytes

REFERENCE = "GF-B1-E"


def keep_url(site, bearing) -> str:
    return f"/sites/{site['id']}/bearings/{bearing['id']}/keep-release"


def sent_from_the_phone(client, site, bearing, *, bearing_length, hours_ago=2.0) -> str:
    """A record measured before the release, sent only now (the phone had no signal)."""
    measured = datetime.now(UTC) - timedelta(hours=hours_ago)
    body = {
        "uuid": str(uuid.uuid4()),
        "site_id": site["id"],
        "bearing_id": bearing["id"],
        "design_revision": bearing["revision"],
        "measured_at": measured.strftime("%Y-%m-%dT%H:%M:%SZ"),
        "measurements": {"bearing_length": bearing_length},
        "checklist": {"bedded": True, "packing": 0},
        "notes": "Measured in the basement with no signal.",
    }
    answer = client.post("/api/records", json=body, headers={"X-CSRFToken": csrf_token(client)})
    assert answer.status_code == 201, answer.get_json()
    assert answer.get_json()["state"] == "released"
    assert answer.get_json()["after_release"] is True
    return body["uuid"]


def photo_from_the_phone(client, record_uuid: str, width: int = 640):
    return client.post(
        f"/api/records/{record_uuid}/photos",
        data={
            "photo_uuid": str(uuid.uuid4()),
            "photo": (io.BytesIO(make_test_jpeg(width, 480)), "IMG_0101.jpg"),
        },
        headers={"X-CSRFToken": csrf_token(client)},
        content_type="multipart/form-data",
    )


def queue_item(client, bearing) -> dict | None:
    items = client.get("/review.json").get_json()["items"]
    return next((i for i in items if i["bearing_id"] == bearing["id"]), None)


def test_a_failing_record_sent_after_release_is_in_the_engineers_queue(db, people, site, client_as):
    b = released(db, site, people, REFERENCE)
    engineer = client_as("engineer")
    assert queue_item(engineer, b) is None  # released and nothing since: nothing to do

    late = sent_from_the_phone(client_as("inspector"), site, b, bearing_length=60)
    # Kept, and the release untouched.
    assert state_of(db, site, REFERENCE) == "released"
    assert len(store.releases_for(db, site_id=site["id"], bearing_id=b["id"])) == 1
    assert bearing_named(db, site, REFERENCE)["latest_record_uuid"] == b["latest_record_uuid"]
    stored = store.get_record(db, site_id=site["id"], uuid=late)
    assert stored["late"] is True and stored["passed"] is False

    item = queue_item(engineer, b)
    assert item is not None, "the engineer's queue does not show the record"
    assert item["state"] == "released"
    assert item["after_release"] == {"records": 1, "photos": 0, "text": "1 record"}
    assert item["worst_after_release"] == stored["utilisation"] > 1
    queue = engineer.get("/review").get_data(as_text=True)
    assert "⚠ recorded after release" in queue and "1 record since it was released" in queue
    assert "The release stands until you reopen the bearing or keep the release." in queue

    page = engineer.get(review_url(site, b)).get_data(as_text=True)
    assert "⚠ Recorded after release" in page and "✗ fails as built" in page
    assert f'href="/sites/{site["id"]}/records/{late}"' in page
    assert "Keep the release" in page and "Reopen this bearing" in page


def test_a_photo_added_after_release_to_the_record_it_rests_on_is_listed_too(
    db, people, site, client_as
):
    b = released(db, site, people, REFERENCE)
    (release,) = store.releases_for(db, site_id=site["id"], bearing_id=b["id"])
    inspector = client_as("inspector")
    answer = photo_from_the_phone(inspector, release["record_uuid"])
    assert answer.status_code == 201, answer.get_json()
    item = queue_item(client_as("engineer"), b)
    assert item["after_release"] == {"records": 0, "photos": 1, "text": "1 photo"}
    (evidence,) = (
        client_as("engineer").get(review_url(site, b, json=True)).get_json()["after_release"]
    )
    assert evidence["kind"] == "photo" and evidence["record_uuid"] == release["record_uuid"]
    assert evidence["thumb_url"].endswith("/thumb")
    assert state_of(db, site, REFERENCE) == "released"


def test_keeping_the_release_answers_what_was_listed_and_only_that(db, people, site, client_as):
    b = released(db, site, people, REFERENCE)
    inspector, engineer = client_as("inspector"), client_as("engineer")
    late = sent_from_the_phone(inspector, site, b, bearing_length=140)
    photo_from_the_phone(inspector, late)
    page = engineer.get(review_url(site, b, json=True)).get_json()
    newest = page["after_release"][-1]["id"]
    assert page["may_keep_release"] is True

    answer = engineer.post(
        keep_url(site, b),
        data={
            "csrf_token": csrf_token(engineer),
            "seen_up_to": str(newest),
            "reason": "Re-measured from the same visit; the release was right.",
        },
    )
    assert answer.status_code == 302
    assert queue_item(engineer, b) is None
    assert state_of(db, site, REFERENCE) == "released"
    (kept,) = store.releases_kept_for(db, site_id=site["id"], bearing_id=b["id"])
    assert kept["reason"] == "Re-measured from the same visit; the release was right."
    history = engineer.get(review_url(site, b, json=True)).get_json()["history"]
    assert history[0]["what"] == "release kept" and history[0]["text"] == kept["reason"]
    event = store.events_for(db, site_id=site["id"], bearing_id=b["id"])[0]
    assert event["kind"] == "release kept" and event["detail"]["records"] == [late]

    # The site record says so too.
    text = " ".join(
        page.extract_text()
        for page in PdfReader(io.BytesIO(pdf_bytes(collect(db, site["id"])))).pages
    )
    assert "Release kept after later evidence" in " ".join(text.split())
    assert "recorded after a release" in " ".join(text.split())

    # Something new after that is listed on its own.
    photo_from_the_phone(inspector, late, width=500)
    item = queue_item(engineer, b)
    assert item["after_release"] == {"records": 0, "photos": 1, "text": "1 photo"}


def test_a_release_is_never_kept_over_evidence_nobody_looked_at(db, people, site, client_as):
    b = released(db, site, people, REFERENCE)
    inspector, engineer = client_as("inspector"), client_as("engineer")
    sent_from_the_phone(inspector, site, b, bearing_length=140)
    seen = engineer.get(review_url(site, b, json=True)).get_json()["after_release"][-1]["id"]
    sent_from_the_phone(inspector, site, b, bearing_length=60, hours_ago=1.5)  # meanwhile
    answer = engineer.post(
        keep_url(site, b),
        data={
            "csrf_token": csrf_token(engineer),
            "seen_up_to": str(seen),
            "reason": "Looked at the first record only.",
        },
    )
    assert answer.status_code == 409
    assert "since the page was opened; look at it and answer again" in answer.get_data(as_text=True)
    # The engineer's words are kept on the form for the second try.
    assert "Looked at the first record only." in answer.get_data(as_text=True)
    assert store.releases_kept_for(db, site_id=site["id"], bearing_id=b["id"]) == []
    assert queue_item(engineer, b)["after_release"]["records"] == 2


def test_only_the_engineer_answers_and_a_reason_is_needed(db, people, site, client_as):
    b = released(db, site, people, REFERENCE)
    sent_from_the_phone(client_as("inspector"), site, b, bearing_length=140)
    engineer = client_as("engineer")
    seen = engineer.get(review_url(site, b, json=True)).get_json()["after_release"][-1]["id"]
    for role in ("inspector", "contractor", "viewer"):
        client = client_as(role)
        page = client.get(review_url(site, b, json=True)).get_json()
        assert page["after_release"] and page["may_keep_release"] is False
        answer = client.post(
            keep_url(site, b),
            data={"csrf_token": csrf_token(client), "seen_up_to": str(seen), "reason": "x" * 20},
        )
        assert answer.status_code == 403, role
    short = engineer.post(
        keep_url(site, b),
        data={"csrf_token": csrf_token(engineer), "seen_up_to": str(seen), "reason": "fine"},
    )
    assert short.status_code == 400
    assert "Write at least 10 characters" in short.get_data(as_text=True)
    assert store.releases_kept_for(db, site_id=site["id"], bearing_id=b["id"]) == []


def test_reopening_answers_it_and_the_newest_record_then_drives_the_state(
    db, people, site, client_as
):
    b = released(db, site, people, REFERENCE)
    late = sent_from_the_phone(client_as("inspector"), site, b, bearing_length=60, hours_ago=0.1)
    engineer = client_as("engineer")
    answer = engineer.post(
        reopen_url(site, b),
        data={"csrf_token": csrf_token(engineer), "reason": "The record after release fails."},
    )
    assert answer.status_code == 302
    now = bearing_named(db, site, REFERENCE)
    assert now["state"] == "engineer to decide" and now["latest_record_uuid"] == late
    item = queue_item(engineer, b)
    assert item["state"] == "engineer to decide" and item["after_release"] is None
    assert store.after_release_evidence(db, site_id=site["id"], bearing_id=b["id"]) == []
    # Released again later: what came before this release is not listed again.
    services.decide(
        db,
        site=site,
        bearing=now,
        kind="accept",
        reason="Accepted with the shorter bearing, checked by hand.",
        engineer_id=people["engineer"].id,
        # The record after release fails as built: accepting it needs the confirmation.
        confirmed_failing=True,
    )
    services.release(
        db,
        site=site,
        bearing=bearing_named(db, site, REFERENCE),
        contractor_id=people["contractor"].id,
        contractor_name="Cora Contractor",
        statement=STATEMENT,
    )
    assert queue_item(engineer, b) is None


def test_records_that_came_after_a_release_before_this_list_existed_are_listed(tmp_path):
    """A database from before the list: its late records are listed once it is migrated."""
    path = tmp_path / "older.db"
    older = sqlite_utils.Database(path)
    store.MIGRATIONS.apply(older, stop_before="m008_recorded_after_release")
    older.close()
    db = store.open_db(path)  # the app's own opening, which migrates
    try:
        assert db.execute("SELECT count(*) FROM after_release_evidence").fetchone()[0] == 0
    finally:
        db.close()
    # And with one late record in it: made with the older schema, then migrated.
    path = tmp_path / "older-with-late.db"
    older = sqlite_utils.Database(path)
    store.MIGRATIONS.apply(older, stop_before="m008_recorded_after_release")
    con = older.conn
    con.executescript(
        """
        INSERT INTO users (id, email, name, password_hash, created_at)
            VALUES (1, 'e@example.test', 'E', 'test-hash-not-real', '2026-01-01T00:00:00Z');
        INSERT INTO sites (id, name, code_basis, review_settings, created_by, created_at)
            VALUES ('s1', 'Older site', '{}', '{}', 1, '2026-01-01T00:00:00Z');
        INSERT INTO bearings (id, site_id, reference, revision, design_input, design_result,
            design_passed, state, state_changed_at, created_by, created_at)
            VALUES ('b1', 's1', 'B1', 1, '{}', '{}', 1, 'awaiting survey',
                    '2026-01-01T00:00:00Z', 1, '2026-01-01T00:00:00Z');
        INSERT INTO bearing_revisions (bearing_id, revision, location, design_input,
            design_result, design_passed, created_by, created_at)
            VALUES ('b1', 1, '', '{}', '{}', 1, 1, '2026-01-01T00:00:00Z');
        INSERT INTO as_built_records (uuid, bearing_id, design_revision, inspector_id,
            measured_at, received_at, measurements, result, passed, blocking, late)
            VALUES ('11111111-1111-4111-8111-111111111111', 'b1', 1, 1,
                    '2026-01-02T00:00:00Z', '2026-01-02T00:00:00Z', '{}', '{}', 1, 0, 0),
                   ('22222222-2222-4222-8222-222222222222', 'b1', 1, 1,
                    '2026-01-02T00:00:00Z', '2026-01-04T00:00:00Z', '{}', '{}', 0, 1, 1);
        INSERT INTO releases (id, bearing_id, record_uuid, contractor_id, contractor_name,
            statement, created_at)
            VALUES (7, 'b1', '11111111-1111-4111-8111-111111111111', 1, 'C', 'Released.',
                    '2026-01-03T00:00:00Z');
        """
    )
    con.commit()
    older.close()
    db = store.open_db(path)
    try:
        rows = [dict(r) for r in db.query("SELECT * FROM after_release_evidence")]
    finally:
        db.close()
    assert [(r["record_uuid"], r["release_id"], r["photo_uuid"]) for r in rows] == [
        ("22222222-2222-4222-8222-222222222222", 7, None)
    ]
    con = sqlite3.connect(path)
    try:
        assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    finally:
        con.close()
