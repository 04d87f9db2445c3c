"""What the server says about itself: a line per request and every error with its
traceback on stderr (text or one JSON object per line), and /healthz."""

from __future__ import annotations

import json
import threading
from pathlib import Path

import pytest

from kit.client import Client
from kit.data_folder import prepare_home
from kit.servers import Served
from kit.web import PASSWORD
from sitecheck import logs
from sitecheck.config import load_settings
from sitecheck.report.jobs import RecordJobs
from sitecheck.web import create_app


@pytest.mark.parametrize(
    ("path", "query", "logged"),
    [
        ("/sites/3f2b6c1e-8a4d-4b7e-9c1a-2d5e6f7a8b9c/record", "", None),  # a UUID is no secret
        ("/photos/" + "ab" * 32 + ".jpg", "", None),  # nor a photo's content hash
        ("/login", "next=/sites/x&page=2", "/login?next=[hidden]&page=2"),
        ("/invitations/Xk3_9aZQ0pLm2vB7cD4eF6gH8jK1lN5o", "", "/invitations/[hidden]"),
        (
            "/account/reset/Xk3_9aZQ0pLm2vB7cD4eF6gH8jK1lN5o/confirm",
            "",
            "/account/reset/[hidden]/confirm",
        ),
        ("/api/records", "token=s3cr3t", "/api/records?token=[hidden]"),
        ("/review/queue", "", None),
        ("/new-password/abcdefghijKLMNOPqrstuvwxyz-abcdefghij", "", "/new-password/[hidden]"),
        ("/people/12/new-password", "", None),
        ("/manifest.webmanifest", "", None),
    ],
)
def test_a_logged_path_carries_no_secret(path, query, logged):
    assert logs.safe_path(path, query) == (logged or path)


def _failing_app(tmp_path, **settings):
    app = create_app(settings=load_settings(home=tmp_path, environ={}, overrides=settings))

    def broken():
        raise RuntimeError("the disk said no")

    app.add_url_rule("/broken", view_func=broken)
    return app


def test_each_request_is_one_text_line_and_an_error_carries_its_traceback(tmp_path, capfd):
    logs.setup(json_lines=False)
    client = _failing_app(tmp_path).test_client()
    assert client.get("/healthz").status_code == 200
    assert client.get("/broken?token=abc").status_code == 500
    err = capfd.readouterr().err
    line = next(x for x in err.splitlines() if "sitecheck.request GET /healthz" in x)
    assert line.endswith(" ms") and " 200 " in line
    assert "GET /broken?token=[hidden] 500" in err and "abc" not in err
    assert "Traceback (most recent call last)" in err
    assert "RuntimeError: the disk said no" in err


def test_json_lines_are_one_object_each_with_the_request_and_the_traceback(tmp_path, capfd):
    logs.setup(json_lines=True)
    try:
        client = _failing_app(tmp_path).test_client()
        client.get("/login?next=/x")
        client.get("/broken")
    finally:
        logs.setup(json_lines=False)
    lines = [json.loads(x) for x in capfd.readouterr().err.splitlines()]
    request = next(
        x for x in lines if x["logger"] == "sitecheck.request" and x["path"].startswith("/login")
    )
    assert request["method"] == "GET" and request["status"] == 200 and request["ms"] >= 0
    assert request["path"] == "/login?next=[hidden]" and "user" not in request
    error = next(x for x in lines if "traceback" in x)
    assert error["level"] == "ERROR" and "RuntimeError: the disk said no" in error["traceback"]
    assert any(x.get("path") == "/broken" and x["status"] == 500 for x in lines)


def test_a_line_carries_the_user_id_from_a_real_server(tmp_path):
    home = tmp_path / "data"
    prepare_home(home)
    server = Served(home, env={"SITECHECK_LOG_JSON": "1"})
    try:
        person = Client(server.url)
        person.get("/login")
        person.log_in("inspector0@example.test", PASSWORD)
        person.get("/")
    finally:
        server.stop()
    lines = server.json_log()
    anonymous = next(x for x in lines if x.get("path") == "/login" and x.get("method") == "GET")
    assert "user" not in anonymous
    home_line = next(x for x in lines if x.get("path") == "/" and x.get("status") == 200)
    assert isinstance(home_line["user"], int) and home_line["pid"] != server.process.pid
    assert all(line.startswith("{") for line in server.log().splitlines())


def test_a_line_break_in_a_path_cannot_forge_a_log_line(tmp_path, capfd):
    logs.setup(json_lines=False)
    client = _failing_app(tmp_path).test_client()
    client.get("/nothing%0A2026-01-01T00:00:00.000Z INFO sitecheck.request GET / 200 1 ms")
    lines = [x for x in capfd.readouterr().err.splitlines() if x]
    assert len(lines) == 1
    assert len(lines) == 1 and lines[0].endswith(
        " 200 1 ms 404 " + lines[0].rsplit(" ", 2)[1] + " ms"
    )
    assert " GET /nothing\\n2026-01-01T00:00:00.000Z INFO " in lines[0]


def test_healthz_is_ok_without_a_log_in_and_holds_no_data(app, site):
    answer = app.test_client().get("/healthz")
    assert answer.status_code == 200
    assert answer.get_json() == {
        "status": "ok",
        "checks": {"database": "ok", "disk": "ok", "jobs": "ok"},
    }
    assert answer.headers["Cache-Control"] == "no-store"
    assert site["name"].encode() not in answer.data


def test_healthz_says_when_the_disk_is_nearly_full(tmp_path):
    app = create_app(
        settings=load_settings(home=tmp_path, environ={}, overrides={"min_free_disk_mb": 10**9})
    )
    answer = app.test_client().get("/healthz")
    assert answer.status_code == 503
    body = answer.get_json()
    assert body["status"] == "failing" and body["checks"]["database"] == "ok"
    assert "MB free on the photo store's disk, less than the 1000000000 MB" in body["reason"]


def test_healthz_says_when_the_database_is_gone_or_not_migrated(tmp_path):
    import sqlite3

    app = create_app(settings=load_settings(home=tmp_path, environ={}))
    conn = sqlite3.connect(app.config["DB_PATH"])
    with conn:
        conn.execute("DELETE FROM _sqlite_migrations WHERE name = 'm002_password_to_change'")
    conn.close()
    answer = app.test_client().get("/healthz")
    assert answer.status_code == 503
    assert answer.get_json()["checks"]["database"] == (
        "the database lacks migrations m002_password_to_change"
    )
    for suffix in ("", "-wal", "-shm"):
        (tmp_path / f"sitecheck.db{suffix}").unlink(missing_ok=True)
    answer = app.test_client().get("/healthz")
    assert answer.status_code == 503
    assert answer.get_json()["reason"] == "database: the database file is missing"
    assert not (tmp_path / "sitecheck.db").exists()  # the check made no empty database


def test_healthz_says_when_a_site_record_has_stopped_moving(app, site):
    jobs = app.extensions["record_jobs"] = RecordJobs(
        Path(app.config["RECORD_DIR"]), app.config["DB_PATH"], stale_after_s=0.2
    )
    release = threading.Event()

    def stuck(out, progress):
        progress(0, 10, "")
        release.wait(10)

    job, how = jobs.start(site["id"], user_id=None, make=stuck)
    assert how == "started"
    try:
        for _ in range(100):
            answer = app.test_client().get("/healthz")
            if answer.status_code == 503:
                break
            release.wait(0.05)
        assert answer.status_code == 503
        assert answer.get_json()["checks"]["jobs"].startswith("a site record has not moved for")
    finally:
        release.set()
        jobs.wait(job.id, 10)
    assert app.test_client().get("/healthz").status_code == 200


def test_healthz_says_when_the_mail_sender_has_stopped(tmp_path):
    from sitecheck.mail import MailSettings

    mail = MailSettings(
        host="127.0.0.1", port=9, sender="sitecheck@firm.example", base_url="http://x.example"
    )
    app = create_app(tmp_path / "mail.db", MAIL=mail)
    try:
        assert app.test_client().get("/healthz").status_code == 200
    finally:
        app.extensions["mail_sender"].stop()
    answer = app.test_client().get("/healthz")
    assert answer.status_code == 503
    assert answer.get_json()["checks"]["jobs"] == "the mail sender of this process has stopped"
