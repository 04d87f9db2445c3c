"""Shared fixtures: real SQLite files, the real app, people in every role.

Browser fixtures (a live server on 127.0.0.1 and Debian's chromium) live in
tests/browser/conftest.py.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import pytest

from kit.web import PASSWORD, new_site
from sitecheck import credentials, services, store
from sitecheck.demo import SITE_ADDRESS, SITE_NAME, schedule_csv
from sitecheck.web import create_app


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
    page = client.get("/login")
    token = (
        re.search(rb'name="csrf_token" type="hidden" value="([^"]+)"', page.data).group(1).decode()
    )
    r = client.post(
        "/login", data={"email": person.email, "password": PASSWORD, "csrf_token": token}
    )
    assert r.status_code == 302, r.data[:400]


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
