"""Site records (PDF) asked for by many people at once: made in the background, one making
per site whichever server process is asked, the finished record handed out again while the
site has not changed, and a limit on how many one person may start.

Two real server processes on one SQLite file, as several workers of one deployment run."""

from __future__ import annotations

import re
import threading
import time
import uuid
from datetime import UTC, datetime

import pytest

from kit.client import Client
from kit.servers import Served
from kit.web import csrf_token
from sitecheck import store
from sitecheck.demo import DEMO_PEOPLE, SITE_NAME, build_demo


@pytest.fixture
def demo(tmp_path):
    db_path = tmp_path / "demo.db"
    build_demo(db_path)
    db = store.open_db(db_path)
    try:
        site_id = next(s["id"] for s in store.sites_named(db, SITE_NAME))
    finally:
        db.conn.close()
    return db_path, site_id


@pytest.fixture
def two_servers(demo):
    db_path, _site = demo
    # As a deployment runs it: `sitecheck serve` with a worker process per core, twice.
    servers = [Served(database=db_path, workers=0) for _ in (1, 2)]
    yield servers
    for server in servers:
        server.stop()


def _person(server, role: str) -> Client:
    email, _name, password = DEMO_PEOPLE[role]
    client = Client(server.url)
    client.log_in(email, password)
    return client


def _job_rows(db_path, site_id) -> list[dict]:
    db = store.open_db(db_path)
    try:
        return store.record_jobs_for_site(db, site_id=site_id)
    finally:
        db.conn.close()


def _wait_until_made(client: Client, site_id: str) -> dict:
    deadline = time.monotonic() + 180
    while time.monotonic() < deadline:
        job = client.get(f"/sites/{site_id}/record/pdf.json").json()["job"]
        if job and not job["running"]:
            return job
        time.sleep(0.25)
    raise AssertionError("the site record was not made in three minutes")


def test_eight_people_asking_two_server_processes_at_once_get_one_making(demo, two_servers):
    db_path, site_id = demo
    roles = ["engineer", "inspector", "contractor", "viewer"] * 2
    people = [_person(two_servers[n % 2], role) for n, role in enumerate(roles)]
    tokens = [p.token() for p in people]
    start = threading.Barrier(len(people))
    answers: list = [None] * len(people)

    def ask(n: int) -> None:
        start.wait()
        answers[n] = people[n].post_form(f"/sites/{site_id}/record/pdf", {}, token=tokens[n])

    threads = [threading.Thread(target=ask, args=(n,)) for n in range(len(people))]
    for t in threads:
        t.start()
    for t in threads:
        t.join(120)
    # Every request answers at once with the progress page; none makes the PDF itself.
    assert [a.status for a in answers] == [302] * len(people)
    assert all(a.headers["Location"].endswith(f"/sites/{site_id}/record/pdf") for a in answers)
    rows = _job_rows(db_path, site_id)
    assert len(rows) == 1, rows
    # Every page, on either process, shows the same making and then the same file.
    job = _wait_until_made(people[1], site_id)
    assert job["state"] == "done" and job["id"] == rows[0]["id"]
    for person in people[:2]:
        pdf = person.get(f"/sites/{site_id}/record/pdf/file")
        assert pdf.status == 200 and pdf.body.startswith(b"%PDF")


def test_a_finished_record_is_handed_out_again_until_the_site_changes(demo, two_servers):
    db_path, site_id = demo
    first, second = two_servers
    engineer = _person(first, "engineer")
    assert engineer.post_form(f"/sites/{site_id}/record/pdf", {}).status == 302
    made = _wait_until_made(engineer, site_id)
    assert made["state"] == "done"

    # Asked again, on the other process: nothing changed, so the same file, at once.
    viewer = _person(second, "viewer")
    again = viewer.post_form(f"/sites/{site_id}/record/pdf", {})
    assert again.status == 302
    page = viewer.get(f"/sites/{site_id}/record/pdf").text
    assert "Nothing on the site has changed since the site record made" in page
    assert len(_job_rows(db_path, site_id)) == 1
    record_page = viewer.get(f"/sites/{site_id}/record").text
    assert "nothing on the site has changed since" in record_page
    direct = viewer.get(f"/sites/{site_id}/record.pdf")
    assert direct.status == 200 and direct.body.startswith(b"%PDF")

    # A new as-built record arrives: the next request makes a new one.
    inspector = _person(first, "inspector")
    pack = inspector.get(f"/api/sites/{site_id}/pack").json()
    b = next(b for b in pack["bearings"] if b["state"] != "released")
    sent = inspector.post_json(
        "/api/records",
        {
            "uuid": str(uuid.uuid4()),
            "site_id": site_id,
            "bearing_id": b["id"],
            "design_revision": b["revision"],
            "measured_at": datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
            "measurements": {
                "bearing_length": pack["designs"][b["design"]]["input"]["beam"]["bearing_length"]
            },
            "checklist": {},
            "notes": "Measured again after the record was made.",
        },
    )
    assert sent.status == 201
    assert viewer.get(f"/sites/{site_id}/record.pdf").status == 302  # the old one is stale
    assert viewer.post_form(f"/sites/{site_id}/record/pdf", {}).status == 302
    assert len(_job_rows(db_path, site_id)) == 2
    assert _wait_until_made(viewer, site_id)["id"] != made["id"]


def test_one_person_may_start_only_so_many_records_an_hour(app, client_as, db, site, people):
    app.extensions["record_jobs"].per_user = 2
    engineer = client_as("engineer")
    url = f"/sites/{site['id']}/record/pdf"
    for n in range(2):
        # A change on the site each time, so each asks for a new record.
        store.add_event(db, kind="site note", site_id=site["id"], detail={"n": n})
        assert engineer.post(url, data={"csrf_token": csrf_token(engineer)}).status_code == 302
        job = app.extensions["record_jobs"].latest(site["id"])
        assert app.extensions["record_jobs"].wait(job.id, timeout=120)
    store.add_event(db, kind="site note", site_id=site["id"], detail={"n": 2})
    refused = engineer.post(url, data={"csrf_token": csrf_token(engineer)})
    assert refused.status_code == 429
    html = refused.get_data(as_text=True)
    assert "You have started 2 site records in the last hour, the most one person may." in html
    assert re.search(r"you can start another after \d\d:\d\d UTC", html)
    assert 0 < int(refused.headers["Retry-After"]) <= 3600
    assert "Download the site record (PDF)" in html  # the last finished one is still there
    assert len(store.record_jobs_for_site(db, site_id=site["id"])) == 2
    # Someone else on the site is not held back by it.
    viewer = client_as("viewer")
    assert viewer.post(url, data={"csrf_token": csrf_token(viewer)}).status_code == 302
    assert len(store.record_jobs_for_site(db, site_id=site["id"])) == 3
    job = app.extensions["record_jobs"].latest(site["id"])
    assert app.extensions["record_jobs"].wait(job.id, timeout=120)
    # Being handed the finished record of an unchanged site is not counted.
    again = engineer.post(url, data={"csrf_token": csrf_token(engineer)})
    assert again.status_code == 302
    state = engineer.get(f"{url}.json").get_json()
    assert state["job"]["id"] == job.id
