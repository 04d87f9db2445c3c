"""People in the store: accounts found by their e-mail in lower case, sessions and when
they end, failed log-ins counted for the throttle."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import pytest

from kit.store_rows import T0, make_user
from sitecheck import credentials, store


def test_users_are_found_by_lower_case_email_and_never_show_the_hash(db):
    user = store.create_user(db, email="  Ann.Smith@Example.TEST ", name="Ann", password_hash="h")
    assert user["email"] == "ann.smith@example.test"
    assert "password_hash" not in user
    assert store.get_user_by_email(db, "ANN.SMITH@example.test")["id"] == user["id"]
    assert store.login_credentials(db, "ann.smith@example.test")["password_hash"] == "h"
    with pytest.raises(store.DuplicateEmail):
        store.create_user(db, email="ann.smith@example.test", name="Ann 2", password_hash="h")


def test_sessions_end_on_revoke_disable_idle_and_age(db):
    user = make_user(db, "inspector")

    def start(now=T0):
        token = credentials.new_session_token()
        store.create_session(db, session_id=token.session_id, user_id=user["id"], now=now)
        return token.session_id

    live = start()
    assert store.get_session_user(db, live, now=T0 + timedelta(hours=1))["id"] == user["id"]
    assert store.get_session_user(db, "not-a-session") is None

    revoked = start()
    assert store.revoke_session(db, revoked)
    assert store.get_session_user(db, revoked, now=T0) is None

    assert store.get_session_user(db, live, now=T0 + timedelta(hours=12, seconds=1)) is None
    # Kept in use every 11 hours it lives on, but never past the absolute limit of 7 days.
    moment = T0
    while moment < T0 + timedelta(days=6, hours=20):
        moment += timedelta(hours=11)
        assert store.get_session_user(db, live, now=moment) is not None
        assert store.touch_session(db, live, now=moment)
    assert store.get_session_user(db, live, now=T0 + timedelta(days=7, seconds=1)) is None

    fresh = start(now=datetime.now(UTC))
    assert store.get_session_user(db, fresh) is not None
    store.set_disabled(db, user_id=user["id"], disabled=True, by_user_id=None)
    assert store.get_session_user(db, fresh) is None
    store.set_disabled(db, user_id=user["id"], disabled=False, by_user_id=None)
    assert store.get_session_user(db, fresh) is None, "disabling revoked the session for good"


def test_touch_writes_at_most_once_a_minute(db):
    user = make_user(db, "inspector")
    token = credentials.new_session_token()
    store.create_session(db, session_id=token.session_id, user_id=user["id"], now=T0)
    assert not store.touch_session(db, token.session_id, now=T0 + timedelta(seconds=30))
    assert store.touch_session(db, token.session_id, now=T0 + timedelta(seconds=61))


def test_a_raw_token_is_never_stored_as_a_session_id(db):
    user = make_user(db, "inspector")
    with pytest.raises(ValueError, match="sha256"):
        store.create_session(
            db, session_id=credentials.new_session_token().token, user_id=user["id"]
        )


def test_failed_log_ins_are_counted_per_account_at_an_address_and_per_address(db):
    def fail(email="ann@example.test", addr="10.0.0.1", at=T0):
        store.record_login_attempt(db, email=email, remote_addr=addr, ok=False, now=at)

    def failures(email="ann@example.test", addr="10.0.0.1"):
        pair, address = store.failed_log_ins(
            db, email=email, remote_addr=addr, window_s=900, now=T0 + timedelta(minutes=1)
        )
        return pair.count, address.count

    fail(at=T0 - timedelta(minutes=20))  # outside the window
    fail(at=T0 - timedelta(minutes=2))  # before the success below: forgiven for the pair
    store.record_login_attempt(
        db, email="ann@example.test", remote_addr="10.0.0.1", ok=True, now=T0 - timedelta(minutes=1)
    )
    for _ in range(4):
        fail()
    assert failures() == (4, 5)
    pair, _address = store.failed_log_ins(
        db, email="ann@example.test", remote_addr="10.0.0.1", window_s=900, now=T0
    )
    assert pair.last_at == store.timestamp(T0)
    # The same account from elsewhere counts there, not here.
    fail(addr="10.9.9.9")
    assert failures() == (4, 5)
    assert failures(addr="10.9.9.9") == (1, 1)
    # Many accounts tried from one address count against that address.
    for n in range(5):
        fail(email=f"person{n}@example.test", addr="10.0.0.66")
    assert failures(email="new@example.test", addr="10.0.0.66") == (0, 5)
    assert failures(email="new@example.test", addr="10.0.0.2") == (0, 0)
    assert store.prune_login_attempts(db, older_than_s=900, now=T0 + timedelta(minutes=1)) == 1
