"""Logging in and out as a service, with no Flask: what the log-in pages, a reset link and an
invitation's link keep, on a real SQLite file. The pages' own answers (status codes, the
cookie, the words) are tested in test_login.py, test_resets.py and test_invitations.py."""

from __future__ import annotations

import pytest

from kit.web import PASSWORD
from sitecheck import credentials, invitations, resets, sessions, store

RULES = (credentials.ACCOUNT_AT_ADDRESS, credentials.ANY_ACCOUNT_AT_ADDRESS)
HOME = "192.0.2.10"  # a documentation address (RFC 5737)


@pytest.fixture
def db(tmp_path):
    d = store.open_db(tmp_path / "sessions.db")
    yield d
    d.conn.close()


@pytest.fixture
def person(db) -> dict:
    return store.create_user(
        db,
        email="ines@example.test",
        name="Ines Inspector",
        password_hash=credentials.hash_password(PASSWORD),
    )


def log_in(db, password: str, email: str = "ines@example.test") -> sessions.LogIn:
    return sessions.log_in(
        db,
        email=email,
        password=password,
        remote_addr=HOME,
        window_s=credentials.THROTTLE_WINDOW_S,
        rules=RULES,
    )


def kinds(db) -> list[str]:
    return [e["kind"] for e in db.query("SELECT kind FROM events ORDER BY id")]


def test_a_log_in_begins_a_session_that_names_its_person(db, person):
    tried = log_in(db, PASSWORD)
    assert tried.token is not None and tried.wait == 0
    assert sessions.user_for_token(db, tried.token.token)["id"] == person["id"]
    assert kinds(db) == ["user created", "log-in"]


def test_a_wrong_password_and_a_disabled_account_are_refused_alike(db, person):
    assert log_in(db, "not the password") == sessions.LogIn(token=None)
    sessions.set_disabled(db, user_id=person["id"], disabled=True, by_user_id=person["id"])
    assert log_in(db, PASSWORD) == sessions.LogIn(token=None)
    assert kinds(db).count("log-in failed") == 2


def test_failures_past_the_free_tries_make_the_next_try_wait_unchecked(db, person):
    for _ in range(credentials.ACCOUNT_AT_ADDRESS.free):
        assert log_in(db, "not the password").token is None
    tried = log_in(db, PASSWORD)
    # 1 to first_wait_s seconds: credentials.ThrottleRule (ACCOUNT_AT_ADDRESS)
    assert tried.token is None and 1 <= tried.wait <= credentials.ACCOUNT_AT_ADDRESS.first_wait_s
    assert kinds(db)[-1] == "log-in throttled"


def test_a_new_password_ends_every_other_session_and_the_old_password(db, person):
    elsewhere = log_in(db, PASSWORD).token
    here = sessions.new_password(db, user_id=person["id"], password="a longer new passphrase")
    assert sessions.user_for_token(db, elsewhere.token) is None
    assert sessions.user_for_token(db, here.token)["id"] == person["id"]
    assert not sessions.is_password(db, email=person["email"], password=PASSWORD)
    assert sessions.is_password(db, email=person["email"], password="a longer new passphrase")


def test_a_log_out_ends_the_session_it_names(db, person):
    token = log_in(db, PASSWORD).token
    sessions.log_out(db, token=token.token, user_id=person["id"])
    assert sessions.user_for_token(db, token.token) is None
    assert kinds(db)[-1] == "log-out"


def test_a_reset_link_works_once(db, person):
    link = credentials.new_link_token()
    store.create_link(
        db,
        token_hash=link.token_hash,
        purpose=store.PASSWORD_RESET,
        email=person["email"],
        valid_s=3600,
    )
    first = resets.finish_reset(
        db, token_hash=link.token_hash, user_id=person["id"], password="a longer new passphrase"
    )
    again = resets.finish_reset(
        db, token_hash=link.token_hash, user_id=person["id"], password="yet another passphrase"
    )
    assert sessions.user_for_token(db, first.token)["id"] == person["id"]
    assert again is None
    assert sessions.is_password(db, email=person["email"], password="a longer new passphrase")


def test_an_invitation_link_makes_one_account(db):
    link = credentials.new_link_token()
    store.create_link(
        db,
        token_hash=link.token_hash,
        purpose=store.INVITATION,
        email="nell@example.test",
        valid_s=3600,
    )
    made = invitations.make_account(
        db, token_hash=link.token_hash, name="  Nell New  ", password=PASSWORD
    )
    assert (made["email"], made["name"]) == ("nell@example.test", "Nell New")
    with pytest.raises(store.NotFound):
        invitations.make_account(db, token_hash=link.token_hash, name="Nell", password=PASSWORD)
    assert sessions.is_password(db, email="nell@example.test", password=PASSWORD)
