"""Logging in as an attacker would try it: where the log-in sends you afterwards, how failed
log-ins are slowed, and which address a failure is counted against behind a proxy.

Real app, real SQLite file; the addresses are documentation ranges (RFC 5737).
"""

from __future__ import annotations

from datetime import timedelta
from urllib.parse import urljoin, urlsplit

import pytest

from kit.web import PASSWORD, csrf_token
from sitecheck import credentials, store
from sitecheck.web import create_app

HOST = "localhost"  # the test client's server name
# Waits long enough that no test here depends on how fast the machine runs it.
ACCOUNT_RULE = credentials.ThrottleRule(free=5, first_wait_s=60, max_wait_s=900)
ADDRESS_RULE = credentials.ThrottleRule(free=30, first_wait_s=60, max_wait_s=300)


@pytest.fixture
def app(tmp_path):
    return create_app(
        tmp_path / "site.db",
        TESTING=True,
        LOG_IN_RULE_ACCOUNT=ACCOUNT_RULE,
        LOG_IN_RULE_ADDRESS=ADDRESS_RULE,
    )


def log_in(client, email, password=PASSWORD, *, url="/login", addr=None, forwarded=None):
    headers = {"X-Forwarded-For": forwarded} if forwarded else {}
    environ = {"REMOTE_ADDR": addr} if addr else {}
    return client.post(
        url,
        data={"email": email, "password": password, "csrf_token": csrf_token(client)},
        headers=headers,
        environ_overrides=environ,
    )


# --- where the log-in sends you ----------------------------------------------------------------

# Each as it would arrive in the query string: shapes browsers read as another host, or as a
# script, once the server's Location is resolved.
BYPASSES = [
    "//evil.example/",
    "///evil.example/",
    "////evil.example/",
    "/%09/evil.example/",
    "/%0d/evil.example",
    "/%0a/evil.example",
    "/%0d%0aSet-Cookie:%20x=1",
    "/%00/evil.example",
    "%09//evil.example",
    "%20//evil.example",
    "/%20/evil.example",
    "/%e3%80%80/evil.example",  # an ideographic space
    "%2f%2fevil.example",
    "/%2f%2fevil.example",
    "/%5cevil.example",
    "/%5c/evil.example",
    "%5c%5cevil.example",
    "/%5c%5cevil.example",
    "%5c/evil.example",
    "https://evil.example/",
    "https:evil.example",
    "https:/evil.example",
    "HTTPS://evil.example",
    "javascript:alert(1)",
    "%20javascript:alert(1)",
    "data:text/html,hi",
    "//user@evil.example",
    "//localhost@evil.example",
    "/%2F/evil.example",
    "/.//evil.example",
    "evil.example",
]


def _lands_here(location: str) -> bool:
    """Where a browser goes: it drops tabs and newlines and reads a backslash as a slash."""
    location = "".join(c for c in location if c not in "\t\r\n").replace("\\", "/")
    target = urlsplit(urljoin(f"http://{HOST}/login", location))
    return target.scheme == "http" and target.netloc == HOST and not target.path.startswith("//")


@pytest.mark.parametrize("shape", BYPASSES)
def test_the_log_in_never_sends_anyone_to_another_site(app, people, shape):
    r = log_in(app.test_client(), people["viewer"].email, url=f"/login?next={shape}")
    assert r.status_code == 302, r.data[:300]
    location = r.headers["Location"]
    assert _lands_here(location), f"{shape} → {location}"
    assert not any(c.startswith("x=") for c in r.headers.getlist("Set-Cookie"))


@pytest.mark.parametrize(
    "kept",
    ["/review", "/sites/abc/record?page=2", "/sites/abc/members?tab=invite", "/account/password"],
)
def test_a_same_site_path_is_kept(app, people, kept):
    r = log_in(app.test_client(), people["viewer"].email, url=f"/login?next={kept}")
    assert r.status_code == 302 and r.headers["Location"] == kept


@pytest.mark.parametrize(
    ("target", "kept"),
    [
        ("/sites/1", "/sites/1"),
        (" /sites/1\t", "/sites/1"),
        ("/sites/\r\n1", "/sites/1"),
        ("/\u00a0/evil.example", None),
        ("/\\evil.example", None),
        ("//evil.example", None),
        ("/a//b", None),
        ("http://localhost/sites/1", None),
        ("", None),
        (None, None),
    ],
)
def test_same_site_path(target, kept):
    assert credentials.same_site_path(target) == kept


# --- failed log-ins slow the next try, for whoever failed, from where they failed -----------------

STRANGER = "198.51.100.7"
HOME = "192.0.2.10"


def test_a_stranger_failing_on_purpose_cannot_keep_a_person_out(app, people):
    """Before: five wrong passwords from anywhere locked the account for everyone."""
    stranger = app.test_client()
    statuses = [
        log_in(stranger, people["viewer"].email, "not the password", addr=STRANGER).status_code
        for _ in range(40)
    ]
    assert statuses[:5] == [401] * 5 and set(statuses[5:]) == {429}
    r = log_in(app.test_client(), people["viewer"].email, addr=HOME)
    assert r.status_code == 302 and r.headers["Location"] == "/"


def test_a_guesser_waits_longer_after_each_failure_and_the_right_password_waits_too(
    app, db, people
):
    email = people["viewer"].email
    r = None
    statuses = []
    for _ in range(6):
        r = log_in(app.test_client(), email, "not the password", addr=STRANGER)
        statuses.append(r.status_code)
    assert statuses == [401] * 5 + [429]
    assert b"Too many failed log-ins from here" in r.data
    first = int(r.headers["Retry-After"])
    assert 1 <= first <= ACCOUNT_RULE.first_wait_s
    # While the wait runs, even the right password is not tried: a guesser learns nothing.
    assert log_in(app.test_client(), email, addr=STRANGER).status_code == 429
    # Failures a while ago (written as they would have been) make the next wait longer.
    for seconds_ago in (400, 300, 200, 100):
        store.record_login_attempt(
            db,
            email=email,
            remote_addr=STRANGER,
            ok=False,
            now=store.utc_now() - timedelta(seconds=seconds_ago),
        )
    r = log_in(app.test_client(), email, "not the password", addr=STRANGER)
    assert r.status_code == 429 and int(r.headers["Retry-After"]) > first
    assert "log-in throttled" in [e["kind"] for e in _account_events(db)]


def test_a_success_clears_the_slowing_for_that_account_at_that_address(app, db, people):
    email = people["viewer"].email
    for _ in range(ACCOUNT_RULE.free - 1):
        assert log_in(app.test_client(), email, "not the password", addr=HOME).status_code == 401
    assert log_in(app.test_client(), email, addr=HOME).status_code == 302
    for _ in range(ACCOUNT_RULE.free):
        assert log_in(app.test_client(), email, "not the password", addr=HOME).status_code == 401
    assert log_in(app.test_client(), email, addr=HOME).status_code == 429


def test_trying_many_accounts_from_one_address_is_slowed(app, people):
    client = app.test_client()
    statuses = [
        log_in(client, f"person{n}@example.test", "not the password", addr=STRANGER).status_code
        for n in range(ADDRESS_RULE.free)
    ]
    assert set(statuses) == {401}
    r = log_in(client, people["viewer"].email, addr=STRANGER)
    assert r.status_code == 429
    assert log_in(app.test_client(), people["viewer"].email, addr=HOME).status_code == 302


def test_attempts_older_than_the_window_are_pruned(app, db, people):
    old = store.utc_now() - timedelta(seconds=credentials.THROTTLE_WINDOW_S + 60)
    for n in range(3):
        store.record_login_attempt(
            db, email=f"gone{n}@example.test", remote_addr=STRANGER, ok=False, now=old
        )
    log_in(app.test_client(), people["viewer"].email, addr=HOME)
    (left,) = db.execute(
        "SELECT count(*) FROM login_attempts WHERE at < ?",
        [store.timestamp(old + timedelta(seconds=1))],
    ).fetchone()
    assert left == 0


def _account_events(db):
    return [
        dict(zip(("kind", "detail"), row, strict=True))
        for row in db.execute("SELECT kind, detail FROM events WHERE site_id IS NULL")
    ]


# --- behind a proxy -------------------------------------------------------------------------------

PROXY = "10.0.0.1"


@pytest.fixture
def behind_proxy(tmp_path):
    return create_app(
        tmp_path / "proxied.db",
        TESTING=True,
        TRUSTED_PROXIES=1,
        LOG_IN_RULE_ACCOUNT=ACCOUNT_RULE,
        LOG_IN_RULE_ADDRESS=ADDRESS_RULE,
    )


def test_many_people_behind_one_proxy_log_in(behind_proxy):
    """Before: everyone behind the proxy shared its address, so one person's (or one
    attacker's) failures shut all of them out."""
    db = store.open_db(behind_proxy.config["DB_PATH"])
    emails = []
    for n in range(12):
        email = f"person{n}@example.test"
        store.create_user(
            db, email=email, name=f"Person {n}", password_hash=credentials.hash_password(PASSWORD)
        )
        emails.append(email)
    db.conn.close()
    attacker = behind_proxy.test_client()
    for n in range(40):
        log_in(attacker, emails[n % 12], "not the password", addr=PROXY, forwarded="203.0.113.66")
    assert log_in(attacker, emails[0], addr=PROXY, forwarded="203.0.113.66").status_code == 429
    for n, email in enumerate(emails):
        client = behind_proxy.test_client()
        where = f"192.0.2.{20 + n}"
        assert log_in(client, email, "a typo first", addr=PROXY, forwarded=where).status_code == 401
        r = log_in(client, email, addr=PROXY, forwarded=where)
        assert r.status_code == 302, (email, r.status_code)


def test_a_client_cannot_choose_its_address_by_sending_the_header_itself(app, behind_proxy, people):
    # Straight to sitecheck (no trusted proxy): the header is ignored.
    email = people["viewer"].email
    statuses = [
        log_in(
            app.test_client(), email, "not it", addr=STRANGER, forwarded=f"192.0.2.{n}"
        ).status_code
        for n in range(7)
    ]
    assert statuses[-1] == 429
    # Through one trusted proxy: only the entry the proxy added is believed.
    db = store.open_db(behind_proxy.config["DB_PATH"])
    store.create_user(
        db, email=email, name="Vic", password_hash=credentials.hash_password(PASSWORD)
    )
    db.conn.close()
    statuses = [
        log_in(
            behind_proxy.test_client(),
            email,
            "not it",
            addr=PROXY,
            forwarded=f"192.0.2.{n}, {STRANGER}",
        ).status_code
        for n in range(7)
    ]
    assert statuses[-1] == 429


@pytest.mark.parametrize("value", ["x", "-1", "1.5", "99"])
def test_a_wrong_number_of_trusted_proxies_is_refused_with_what_to_give(
    tmp_path, monkeypatch, value
):
    monkeypatch.setenv("SITECHECK_TRUSTED_PROXIES", value)
    with pytest.raises(ValueError, match="SITECHECK_TRUSTED_PROXIES .* number of proxies"):
        create_app(tmp_path / "site.db", TESTING=True)
