"""Headers every answer carries. Real app on a real SQLite file."""

from __future__ import annotations

import pytest

from sitecheck.web import create_app

HSTS = "Strict-Transport-Security"
PATHS = ("/login", "/static/app.css", "/sw.js", "/no-such-page", "/api/csrf", "/sites/x.json")


@pytest.mark.parametrize("path", PATHS)
def test_with_secure_cookies_every_answer_tells_the_browser_to_keep_to_https(tmp_path, path):
    app = create_app(tmp_path / "site.db", TESTING=True, SESSION_COOKIE_SECURE=True)
    r = app.test_client().get(path, base_url="https://localhost")
    r.close()
    value = r.headers.get(HSTS, "")
    # A year: long enough that a phone which visited once keeps to HTTPS on a site's open Wi-Fi.
    assert value.startswith("max-age=") and int(value.split("=")[1].split(";")[0]) >= 31536000


def test_without_secure_cookies_no_hsts_header(tmp_path):
    """Served over plain HTTP (the demo, a test), a HSTS header would be ignored at best, and
    would lock a browser out of a later plain-HTTP copy on the same name at worst."""
    app = create_app(tmp_path / "site.db", TESTING=True)
    for path in PATHS:
        r = app.test_client().get(path)
        r.close()
        assert HSTS not in r.headers, path


def test_secure_cookies_come_from_the_environment(tmp_path, monkeypatch):
    monkeypatch.setenv("SITECHECK_SECURE_COOKIES", "1")
    app = create_app(tmp_path / "site.db", TESTING=True)
    r = app.test_client().get("/login", base_url="https://localhost")
    assert HSTS in r.headers
