"""``sitecheck serve`` as it runs for real: gunicorn with several worker processes on one
data folder. Whatever one worker decides (a log-in, a log-out, a refused password) every
other worker must honour, because it lives in the database, not in a worker's memory."""

from __future__ import annotations

import json
import sqlite3
import threading
import time

import pytest

from kit.client import Client
from kit.data_folder import prepare_home
from kit.servers import Served
from kit.smtp_server import LocalMailServer
from kit.web import PASSWORD

pytestmark = pytest.mark.timeout(120)


@pytest.fixture
def home(tmp_path):
    home = tmp_path / "data"
    prepare_home(home)
    return home


@pytest.fixture
def serve(home):
    started: list[Served] = []

    def start(**options) -> Served:
        server = Served(home, **options)
        started.append(server)
        return server

    yield start
    for server in started:
        server.stop()


def _pids_serving(server: Served, path: str, status: int | None = None) -> set[int]:
    return {
        line["pid"]
        for line in server.json_log()
        if line.get("logger") == "sitecheck.request"
        and line.get("path") == path
        and (status is None or line.get("status") == status)
    }


def _until_two_workers_answer(person: Client, server: Served, path: str, status: int) -> None:
    """Ask again until two different worker processes have answered ``path`` with
    ``status`` (each request is a new connection; the workers take turns at random)."""
    for _ in range(200):
        assert person.get(path).status == status
        if len(_pids_serving(server, path, status)) >= 2:
            return
    raise AssertionError(f"one worker answered every request for {path}")


def test_serve_says_where_its_data_is_and_keeps_it_there(tmp_path, home, serve):
    elsewhere = tmp_path / "started-here"
    elsewhere.mkdir()
    server = serve(workers=2, cwd=elsewhere)
    printed = server.printed()
    assert f"data folder {home}" in printed
    assert f"database {home / 'sitecheck.db'}" in printed
    assert "2 worker processes" in printed
    assert "Caution" in printed
    assert Client(server.url).get("/healthz").status == 200
    assert (home / "secret_key").is_file()
    assert list(elsewhere.iterdir()) == []  # nothing relative to where it was started


def test_two_workers_share_log_ins_and_log_outs(home, serve):
    server = serve(workers=2, env={"SITECHECK_LOG_JSON": "1"})
    person = Client(server.url)
    assert person.log_in("inspector0@example.test", PASSWORD).status == 302
    _until_two_workers_answer(person, server, "/", 200)  # one log-in, honoured by both

    # The cookie as it was before logging out, sent again later: both workers must refuse it.
    replayed = Client(server.url)
    for cookie in person.cookies:
        replayed.cookies.set_cookie(cookie)
    assert [c.name for c in replayed.cookies] == ["sitecheck"]
    assert person.post_form("/logout", {}).status == 302
    _until_two_workers_answer(replayed, server, "/", 302)
    assert replayed.get("/").headers["Location"].startswith("/login")


def test_two_workers_share_the_log_in_throttle(home, serve):
    server = serve(workers=2, env={"SITECHECK_LOG_JSON": "1"})
    guesser = Client(server.url)
    for _ in range(4):
        assert guesser.try_log_in("inspector0@example.test", "not the password").status == 401
    for _round in range(3):
        assert guesser.try_log_in("inspector0@example.test", "not the password").status == 401
        # Right after a failure past the fifth the account waits a moment from this address,
        # whichever worker is asked: ten tries at once with the right password, spread over
        # both workers (again after the wait, if one worker happened to take them all).
        answers: list[int] = []

        def try_once(answers=answers) -> None:
            answers.append(guesser.try_log_in("inspector0@example.test", PASSWORD).status)

        tries = [threading.Thread(target=try_once) for _ in range(10)]
        for t in tries:
            t.start()
        for t in tries:
            t.join(30)
        assert answers == [429] * 10
        if len(_pids_serving(server, "/login", 429)) == 2:
            return
        time.sleep(2 ** (_round + 1) + 0.5)  # the wait doubles with each failure
    raise AssertionError("one worker answered every try")


def test_of_two_workers_one_sends_the_mail_and_each_message_goes_once(home, serve):
    smtp = LocalMailServer().start()
    try:
        server = serve(
            workers=2,
            env={
                "SITECHECK_LOG_JSON": "1",
                "SITECHECK_SMTP_HOST": "127.0.0.1",
                "SITECHECK_SMTP_PORT": str(smtp.port),
                "SITECHECK_MAIL_FROM": "sitecheck@firm.example",
                "SITECHECK_BASE_URL": "http://sitecheck.firm.example",
            },
        )
        engineer = Client(server.url)
        assert engineer.log_in("engineer@example.test", PASSWORD).status == 302
        conn = sqlite3.connect(home / "sitecheck.db")
        (site_id,) = conn.execute("SELECT id FROM sites").fetchone()
        conn.close()
        invite = f"/sites/{site_id}/members/invite"
        invited: list[str] = []
        # Each a new connection; the workers take turns at random, so invite until both
        # have queued mail (ten at least).
        while len(invited) < 10 or len(_pids_serving(server, invite, 302)) < 2:
            assert len(invited) < 200, "one worker answered every invitation"
            invited.append(f"new{len(invited)}@example.test")
            answer = engineer.post_form(invite, {"email": invited[-1], "role": "viewer"})
            assert answer.status == 302, answer.text[:300]
        messages = smtp.inbox.wait_for(len(invited), timeout_s=60)
        time.sleep(1.0)  # anything sent twice would arrive by now
        assert sorted(m["To"] for m in smtp.inbox.messages) == sorted(invited)
        senders = {
            line["pid"]
            for line in server.json_log()
            if line.get("logger") == "sitecheck.mail" and line["message"].endswith(" sent")
        }
        assert len(senders) == 1 and len(messages) == len(invited)
        conn = sqlite3.connect(home / "sitecheck.db")
        (holder,) = conn.execute("SELECT holder FROM leases WHERE name = 'mail sender'").fetchone()
        conn.close()
        assert int(holder.split(":")[1]) == next(iter(senders))
    finally:
        smtp.stop()


def test_waitress_serves_from_one_process_where_asked(home, serve):
    server = serve(args=("--server", "waitress"), env={"SITECHECK_LOG_JSON": "1"})
    person = Client(server.url)
    assert person.log_in("inspector0@example.test", PASSWORD).status == 302
    assert person.get("/").status == 200
    assert "one process, 4 threads (waitress)" in server.printed()
    pids = {line["pid"] for line in server.json_log() if line.get("logger") == "sitecheck.request"}
    assert pids == {server.process.pid}


def test_two_workers_asked_at_once_make_one_site_record(home, serve):
    server = serve(workers=2, env={"SITECHECK_LOG_JSON": "1"})
    engineer = Client(server.url)
    assert engineer.log_in("engineer@example.test", PASSWORD).status == 302
    conn = sqlite3.connect(home / "sitecheck.db")
    (site_id,) = conn.execute("SELECT id FROM sites").fetchone()
    conn.close()
    path = f"/sites/{site_id}/record/pdf"
    token = engineer.token()
    answers: list[int] = []

    def ask(answers=answers) -> None:
        answers.append(engineer.post_form(path, {}, token=token).status)

    for _round in range(20):  # again if one worker happened to take every request
        askers = [threading.Thread(target=ask) for _ in range(8)]
        for t in askers:
            t.start()
        for t in askers:
            t.join(60)
        if len(_pids_serving(server, path, 302)) == 2:
            break
    assert set(answers) == {302}
    assert len(_pids_serving(server, path, 302)) == 2
    deadline = time.monotonic() + 90
    while time.monotonic() < deadline:
        job = json.loads(engineer.get(path + ".json").body)["job"]
        if job and not job["running"]:
            break
        time.sleep(0.3)
    assert job["state"] == "done", job
    conn = sqlite3.connect(home / "sitecheck.db")
    made = conn.execute("SELECT count(*) FROM record_jobs WHERE site_id = ?", [site_id]).fetchone()
    conn.close()
    assert made == (1,)  # every other ask joined it, or was handed the finished record
    assert engineer.get(path + "/file").body.startswith(b"%PDF")


def test_each_worker_takes_its_share_of_the_cores_for_pictures(monkeypatch):
    from sitecheck.photos import ingest

    monkeypatch.setattr(ingest, "_SLOTS", ingest._SLOTS)  # put back after the test
    monkeypatch.setattr(ingest, "_cores", lambda: 4)
    assert ingest.share_cores_with(2) == 2
    assert (ingest._SLOTS.slots, ingest._SLOTS.waiting_limit) == (2, 8)
    assert ingest.share_cores_with(8) == 1  # never none
    assert ingest.share_cores_with(1) == 4
