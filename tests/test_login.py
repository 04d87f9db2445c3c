"""Logging in as an attacker would try it: where the log-in sends you afterwards, how failed
log-ins are slowed, and which address a failure is counted against behind a proxy.

Real app, real SQLite file; the addresses are documentation ranges (RFC 5737).
"""

from __future__ import annotations

from urllib.parse import urljoin, urlsplit

import pytest

from sitecheck import auth
from webkit import PASSWORD, csrf_token

HOST = "localhost"  # the test client's server name


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
    assert auth.same_site_path(target) == kept
