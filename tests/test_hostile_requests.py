"""Requests an attacker (or a broken phone) sends, against a real server on 127.0.0.1 over a
real SQLite file: bodies too deep or too large to parse, one record id with two bodies.

The phone retries a 5xx for ever and moves a 4xx to its refused list with the server's
sentence, so every refusal here must be a 4xx that says what was wrong.
"""

from __future__ import annotations

import threading
import uuid
from datetime import UTC, datetime

import pytest

from liveserver import LiveServer
from sitecheck import store
from sitecheck.web import create_app
from sitecheck.web.jsonbody import MAX_JSON_BYTES, MAX_JSON_DEPTH


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
