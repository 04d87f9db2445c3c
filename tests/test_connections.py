"""How the server holds its database: one connection per thread, kept from one request to
the next, with the schema brought up to date once, when the app is made."""

from __future__ import annotations

import sqlite3
from datetime import timedelta

import pytest

from sitecheck import store
from sitecheck.store.base import timestamp, utc_now
from sitecheck.web import create_app, get_db


def test_requests_of_one_thread_share_a_connection_and_never_migrate(app, client_as, monkeypatch):
    opened = []
    real_connect = store.connect

    def counting(path):
        opened.append(path)
        return real_connect(path)

    def no_migrations(*_args, **_kwargs):
        raise AssertionError("a request looked at the migrations")

    monkeypatch.setattr(store, "connect", counting)
    monkeypatch.setattr(store, "apply_migrations", no_migrations)
    monkeypatch.setattr(store, "open_db", no_migrations)
    engineer = client_as("engineer")
    for _ in range(3):
        assert engineer.get("/").status_code == 200
    assert len(opened) <= 1  # the thread may already hold one from logging in


def test_a_request_leaves_no_transaction_open_on_its_connection(app, db):
    with app.app_context():
        held = get_db()
        held.conn.execute("BEGIN IMMEDIATE")  # as a view that failed half way would leave it
    assert not held.conn.in_transaction
    # Another connection can write at once: no lock was kept.
    db.conn.execute("PRAGMA busy_timeout = 0")
    store.add_event(db, kind="written meanwhile")


def test_a_thread_asked_for_another_database_closes_the_one_it_had(app, tmp_path):
    with app.app_context():
        first = get_db()
    other = create_app(tmp_path / "other" / "site.db", TESTING=True)
    with other.app_context():
        second = get_db()
        assert second is not first
    with pytest.raises(sqlite3.ProgrammingError):
        first.conn.execute("SELECT 1")  # closed
    with app.app_context():
        assert get_db() is not second


def test_a_session_is_marked_as_used_at_most_once_a_minute(db, people):
    token = "a" * 64
    store.create_session(db, session_id=token, user_id=people["inspector"].id)
    user = store.get_session_user(db, token)
    seen = user["session_seen_at"]
    now = utc_now()
    # Marked moments ago: nothing is written, whatever the row says.
    assert store.touch_session(db, token, now=now, seen_at=timestamp(now)) is False
    assert store.get_session_user(db, token)["session_seen_at"] == seen
    # Older than a minute: written.
    later = now + timedelta(minutes=2)
    assert store.touch_session(db, token, now=later, seen_at=seen) is True
    assert store.get_session_user(db, token, now=later)["session_seen_at"] == timestamp(later)
