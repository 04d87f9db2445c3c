"""The session cookie and the CSRF token are checked once per worker (sitecheck.web.cookies):
what was refused before is still refused, whatever was kept. Real Flask app on a real
SQLite file, through the test client."""

from __future__ import annotations

import time

import pytest
from flask import Flask
from werkzeug.test import EnvironBuilder

from kit.data_folder import as_built_record
from kit.web import csrf_token
from sitecheck import store
from sitecheck.web.cookies import CheckedCookieSessions


@pytest.fixture
def bearing(db, site):
    return store.bearing_by_reference(db, site_id=site["id"], reference="GF-B1-E")


def _send(client, site, bearing, token, **headers):
    body = as_built_record(site["id"], bearing)
    return client.post("/api/records", json=body, headers={"X-CSRFToken": token, **headers})


def _cookie(client) -> str:
    return client.get_cookie("sitecheck").value


def _logged_in(client) -> bool:
    # The home page sends a visitor with no session to the log-in page.
    return client.get("/").status_code == 200


def test_a_kept_cookie_still_opens_its_session_and_a_tampered_one_never_does(client_as, app):
    inspector = client_as("inspector")
    assert _logged_in(inspector) and _logged_in(inspector)  # checked, then kept
    good = _cookie(inspector)
    payload, signature = good.rsplit(".", 1)
    flipped = ("A" if signature[0] != "A" else "B") + signature[1:]
    stranger = app.test_client()
    for forged in (f"{payload}.{flipped}", good[:-1], good + "x"):
        stranger.set_cookie("sitecheck", forged)
        assert not _logged_in(stranger), forged[-12:]


def test_a_kept_cookie_is_refused_once_older_than_the_session_lifetime(client_as, app, monkeypatch):
    cookie = {"Cookie": f"sitecheck={_cookie(client_as('inspector'))}"}
    # Sent by hand: the test client's own jar would drop a cookie past its expiry itself.
    bare = app.test_client(use_cookies=False)
    assert bare.get("/", headers=cookie).status_code == 200  # kept now
    later = time.time() + app.permanent_session_lifetime.total_seconds() + 60
    monkeypatch.setattr(time, "time", lambda: later)
    assert bare.get("/", headers=cookie).status_code == 302


def test_a_session_holding_a_list_is_handed_out_fresh_every_time():
    # Flashed messages are a list in the session: were it kept and shared, a message taken
    # on one request would be gone (or doubled) on the next that sends the same cookie.
    app = Flask("cookie-test")
    app.secret_key = "a key for this test only"
    sessions = CheckedCookieSessions()
    with app.test_request_context():
        made = sessions.session_class({"_flashes": [("message", "Kept on this phone.")]})
        text = sessions.get_signing_serializer(app).dumps(dict(made))
    environ = EnvironBuilder(headers={"Cookie": f"session={text}"}).get_environ()
    with app.request_context(environ):
        from flask import request

        first = sessions.open_session(app, request)
        first["_flashes"].append(("message", "Added on one request."))
        again = sessions.open_session(app, request)
    assert again["_flashes"] == [("message", "Kept on this phone.")]


def test_a_token_kept_for_one_session_is_refused_with_another(client_as, site, bearing):
    inspector, other = client_as("inspector"), client_as("engineer")
    others_own = csrf_token(other)  # the other session has a token of its own
    token = csrf_token(inspector)
    assert _send(inspector, site, bearing, token).status_code == 201
    assert _send(inspector, site, bearing, token).status_code == 201  # kept now
    assert _send(other, site, bearing, token).status_code == 400
    # The other person's own token still works for them.
    assert _send(other, site, bearing, others_own).status_code == 201


def test_a_form_with_a_wrong_token_is_refused_though_its_header_token_was_kept(
    client_as, site, bearing
):
    inspector = client_as("inspector")
    token = csrf_token(inspector)
    assert _send(inspector, site, bearing, token).status_code == 201  # kept now
    answer = inspector.post(
        "/logout", data={"csrf_token": "not-the-token"}, headers={"X-CSRFToken": token}
    )
    assert answer.status_code == 400
    assert _logged_in(inspector)


def test_over_https_a_kept_token_still_needs_the_sites_own_referrer(client_as, site, bearing):
    inspector = client_as("inspector")
    token = csrf_token(inspector)
    assert _send(inspector, site, bearing, token).status_code == 201  # kept now
    https = {"base_url": "https://localhost"}
    body = as_built_record(site["id"], bearing)
    headers = {"X-CSRFToken": token}
    no_referrer = inspector.post("/api/records", json=body, headers=headers, **https)
    assert no_referrer.status_code == 400
    elsewhere = {**headers, "Referer": "https://elsewhere.example.test/"}
    assert inspector.post("/api/records", json=body, headers=elsewhere, **https).status_code == 400
    own = {**headers, "Referer": "https://localhost/sites"}
    assert inspector.post("/api/records", json=body, headers=own, **https).status_code == 201


def test_a_token_kept_by_one_app_is_refused_by_an_app_of_another_key(tmp_path):
    # One checker serves every app of a process; a token signed with one key says nothing
    # to an app of another, even where both sessions hold the same raw token.
    from itsdangerous import URLSafeTimedSerializer

    from sitecheck.web import create_app

    raw = "0123456789abcdef0123456789abcdef01234567"
    apps = [create_app(tmp_path / f"{n}.db", SECRET_KEY=f"key {n} of this test") for n in (1, 2)]
    clients = []
    for app in apps:
        client = app.test_client()
        with client.session_transaction() as session:
            session["csrf_token"] = raw
        clients.append(client)
    token = URLSafeTimedSerializer("key 1 of this test", salt="wtf-csrf-token").dumps(raw)
    for _ in range(2):  # the second answer comes from what the checker kept
        answer = clients[0].post("/api/records", json={}, headers={"X-CSRFToken": token})
        assert answer.status_code == 401  # past the token: refused as nobody logged in
    refused = clients[1].post("/api/records", json={}, headers={"X-CSRFToken": token})
    assert refused.status_code == 400
