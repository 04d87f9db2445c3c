"""Shared fixtures: real SQLite files, the real app, people in every role.

Browser fixtures (a live server on 127.0.0.1 and Debian's chromium) live in
tests/browser/conftest.py.
"""

from __future__ import annotations

import uuid
from dataclasses import dataclass
from datetime import UTC, datetime

import pytest

from kit.photo_samples import make_test_jpeg
from kit.review_steps import login as log_in_as
from kit.web import PASSWORD, new_site
from sitecheck import credentials, services, store
from sitecheck.demo import SITE_ADDRESS, SITE_NAME, schedule_csv
from sitecheck.photos import ingest_photo
from sitecheck.web import create_app, photo_store


@dataclass
class Person:
    id: int
    email: str
    name: str
    role: str | None


@pytest.fixture(autouse=True)
def _cheap_password_hashing(request, monkeypatch):
    """scrypt at its production cost takes a good part of a second per account; the web tests
    make several accounts each. They get a cheap scrypt; tests/test_credentials.py checks the real
    one."""
    if request.module.__name__.rsplit(".", 1)[-1] != "test_credentials":
        monkeypatch.setattr(credentials, "HASH_METHOD", "scrypt:1024:8:1")


@pytest.fixture
def app(tmp_path):
    app = create_app(tmp_path / "site.db", TESTING=True)
    yield app


@pytest.fixture
def db(app):
    d = store.open_db(app.config["DB_PATH"])
    yield d
    d.conn.close()


@pytest.fixture
def people(db) -> dict[str, Person]:
    """One person per role, and one who is on no site ("outsider")."""
    out = {}
    for role, name in (
        ("engineer", "Esme Engineer"),
        ("inspector", "Ivo Inspector"),
        ("contractor", "Cora Contractor"),
        ("viewer", "Vic Viewer"),
        ("outsider", "Otto Outsider"),
    ):
        email = f"{role}@example.test"
        u = store.create_user(
            db,
            email=email,
            name=name,
            password_hash=credentials.hash_password(PASSWORD),
            may_make_sites=role == "engineer",  # as `sitecheck create-engineer` makes one
        )
        out[role] = Person(u["id"], email, name, None if role == "outsider" else role)
    return out


@pytest.fixture
def site(db, people) -> dict:
    """The demo schedule's design values on a site with one member per role."""
    s = new_site(db, name=SITE_NAME, created_by=people["engineer"].id, address=SITE_ADDRESS)
    for role in ("inspector", "contractor", "viewer"):
        store.add_membership(
            db,
            user_id=people[role].id,
            site_id=s["id"],
            role=role,
            invited_by=people["engineer"].id,
        )
    text = "\n".join(line for line in schedule_csv().splitlines() if "BS 5628-1" not in line) + "\n"
    report = services.import_schedule(db, site=s, text=text, user_id=people["engineer"].id)
    assert report.ok, report.errors
    return store.get_site(db, s["id"])


def login(client, person: Person) -> None:
    log_in_as(client, person.email, PASSWORD)


@pytest.fixture
def client_as(app, people):
    """client_as("inspector") → a test client logged in as that person."""

    def make(role: str):
        c = app.test_client()
        login(c, people[role])
        return c

    return make


@pytest.fixture
def live_client(people):
    """live_client(server, "inspector") → a kit.client.Client logged in as that person on a
    real server (kit.servers)."""
    from kit.client import Client

    def make(server, role: str) -> Client:
        client = Client(server.url)
        client.log_in(people[role].email, PASSWORD)
        return client

    return make


@pytest.fixture
def route_values(app, db, site, people):
    """A value for every variable of every route, with something behind each: a bearing with
    an as-built record and a photo, an invitation, a person (tests/test_access.py walks every
    route as every role with them, tests/test_json_shapes.py every JSON twin)."""
    bearing = store.bearing_by_reference(db, site_id=site["id"], reference="GF-B1-E")
    record_uuid = str(uuid.uuid4())
    d = bearing["design_input"]
    services.record_as_built(
        db,
        site=site,
        bearing=bearing,
        uuid=record_uuid,
        measured_at=datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
        design_revision=1,
        measurements={
            "bearing_length": d["beam"]["bearing_length"],
            "padstone_present": True,
            "padstone_length": 330.0,
            "padstone_width": 215.0,
            "padstone_depth": 140.0,
            "wall_thickness": 215.0,
            "masonry_group": 1,
            "a1": d["wall"]["a1"],
        },
        checklist={},
        notes="",
        inspector_id=people["inspector"].id,
    )
    with app.app_context():
        stored = services.store_photo(
            db,
            site=site,
            record_uuid=record_uuid,
            photo=ingest_photo(make_test_jpeg(400, 300)),
            photos=photo_store(),
            user_id=people["inspector"].id,
        )
    invitation = store.create_invitation(
        db,
        site_id=site["id"],
        email=people["outsider"].email,
        role="viewer",
        invited_by=people["engineer"].id,
        valid_s=3600,
    )
    return {
        "invitation_id": invitation["id"],
        "answer": "decline",  # accepting would put the outsider on the site mid-walk
        "token": "not-a-link-token-at-all",
        "site_id": site["id"],
        "bearing_id": bearing["id"],
        "record_uuid": record_uuid,
        "photo_uuid": stored.row["uuid"],
        "size": "thumb",
        "user_id": people["viewer"].id,
        "action": "new-password",
        "filename": "app.css",
        "kind": "csv",  # a data export: the site record's routes take its kind
    }


ROLES = ("engineer", "inspector", "contractor", "viewer", "outsider")
