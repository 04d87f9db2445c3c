"""The site record and the data export as people ask for them: the record page, each made
in the background with its progress, a failure said plainly, a job cut off by a restart,
and nothing of a site for anyone not on it."""

from __future__ import annotations

import threading
from datetime import UTC, datetime, timedelta
from pathlib import Path

import pytest

from kit.site_record import pdf_text, record_made, start_record
from kit.web import new_site
from sitecheck import store
from sitecheck.report import jobs
from sitecheck.web import record as record_web


@pytest.mark.parametrize(
    "path", ["record", "record.json", "record.pdf", "export.zip", "export.json"]
)
def test_a_site_the_user_is_not_on_is_refused_as_if_it_did_not_exist(client_as, site, path):
    r = client_as("outsider").get(f"/sites/{site['id']}/{path}")
    assert r.status_code == 404
    assert b"GF-B1" not in r.data


def test_the_record_page_offers_every_file_made_in_the_background(client_as, site):
    r = client_as("contractor").get(f"/sites/{site['id']}/record")
    assert r.status_code == 200
    page = r.get_data(as_text=True)
    for kind in ("pdf", "csv", "json"):
        assert f'action="/sites/{site["id"]}/record/{kind}"' in page, kind
    assert "Make the data export (CSV, zipped)" in page and "Make the data export (JSON)" in page
    assert "competent engineer" in page


class HeldRecord:
    """Stands in for the PDF maker: reports 1 of 3 bearings, then waits to be let go, so a
    test can look at a job part way."""

    def __init__(self):
        self.reached, self.go = threading.Event(), threading.Event()
        self.failure: Exception | None = None

    def factory(self, db_path, site_id, *, photo_store=None, selection=None):
        def make(out, progress):
            progress(0, 3, "")
            progress(1, 3, "GF-B1-E")
            self.reached.set()
            self.go.wait(60)
            if self.failure is not None:
                raise self.failure
            progress(3, 3, "audit trail")
            out.write_bytes(b"%PDF-1.4\n% a stand-in for the site record\n%%EOF\n")

        return make


@pytest.fixture
def held(monkeypatch):
    monkeypatch.setattr(jobs, "_WRITE_EVERY_S", 0.0)  # every step written, for the test to see
    holder = HeldRecord()
    monkeypatch.setattr(record_web, "site_record", holder.factory)
    yield holder
    holder.go.set()  # never leave a thread waiting


def test_the_record_is_made_in_the_background_and_downloaded_when_ready(
    app, client_as, db, site, recorded
):
    viewer = client_as("viewer")
    r = start_record(viewer, site["id"])
    assert r.status_code == 302
    assert r.headers["Location"].endswith(f"/sites/{site['id']}/record/pdf")
    job = record_made(app, site["id"])
    count = len(store.list_bearings(db, site_id=site["id"]))
    assert (job.state, job.bearings_done, job.bearings) == ("done", count, count)
    # The file is kept under the app's own folder, beside the database.
    path = app.extensions["record_jobs"].pdf_path(job)
    assert path.is_file()
    assert path.is_relative_to(Path(app.config["DB_PATH"]).parent / "records")

    page = viewer.get(f"/sites/{site['id']}/record/pdf").get_data(as_text=True)
    assert "Ready" in page and f"{count} bearings" in page
    assert f'href="/sites/{site["id"]}/record/pdf/file"' in page
    assert 'http-equiv="refresh"' not in page and "data-poll" not in page

    r = viewer.get(f"/sites/{site['id']}/record/pdf/file")
    assert r.status_code == 200 and r.mimetype == "application/pdf"
    assert r.headers["Content-Disposition"].startswith("attachment; filename=tanner-s-yard")
    text = pdf_text(r.data)
    r.close()
    for b in store.list_bearings(db, site_id=site["id"]):
        assert f"Bearing {b['reference']}" in text
    assert "Cora Contractor for Invented Build Ltd" in text and "competent engineer" in text


def test_progress_shows_bearings_done_and_the_page_refreshes_itself_until_ready(
    app, client_as, site, held
):
    inspector = client_as("inspector")
    start_record(inspector, site["id"])
    assert held.reached.wait(60)
    url = f"/sites/{site['id']}/record/pdf"
    html = inspector.get(url).get_data(as_text=True)
    assert "Making the site record: 1 of 3 bearings, last done GF-B1-E." in html
    assert '<progress max="3" value="1"' in html
    # Without JavaScript the page refreshes itself; with it, record.js polls the .json.
    assert '<noscript><meta http-equiv="refresh" content="2"></noscript>' in html
    assert f'data-poll="{url}.json"' in html and "/static/record.js" in html
    state = inspector.get(f"{url}.json").get_json()["job"]
    assert (state["state"], state["bearings_done"], state["bearings"]) == ("making", 1, 3)
    assert state["running"] is True and state["current"] == "GF-B1-E"
    assert state["status"] == "Making the site record: 1 of 3 bearings, last done GF-B1-E."

    # Asking again while it is being made joins it rather than making a second one.
    engineer = client_as("engineer")
    assert start_record(engineer, site["id"]).status_code == 302
    assert "already being made" in engineer.get(url).get_data(as_text=True)
    assert len(app.extensions["record_jobs"].jobs(site["id"])) == 1
    assert inspector.get(f"{url}/file").status_code == 302  # nothing finished yet

    held.go.set()
    assert record_made(app, site["id"]).state == "done"
    html = inspector.get(url).get_data(as_text=True)
    assert 'http-equiv="refresh"' not in html and "Ready" in html
    r = inspector.get(f"{url}/file")
    assert r.status_code == 200 and r.data.startswith(b"%PDF-1.4\n% a stand-in")
    r.close()


def test_a_record_that_could_not_be_made_says_why_plainly_and_can_be_started_again(
    app, client_as, site, held
):
    held.failure = OSError(28, "No space left on device")
    engineer = client_as("engineer")
    start_record(engineer, site["id"])
    assert held.reached.wait(60)
    held.go.set()
    job = record_made(app, site["id"])
    assert job.state == "failed"
    html = engineer.get(f"/sites/{site['id']}/record/pdf").get_data(as_text=True)
    assert 'role="alert"' in html
    assert "could not be made at bearing GF-B1-E (1 of 3 done)" in html
    assert "No space left on device" in html and "Nothing was kept" in html
    assert "Make it again" in html and "/record/pdf/file" not in html
    folder = app.extensions["record_jobs"].site_folder(site["id"])
    assert not list(folder.glob("*.pdf")) and not list(folder.glob("*.part"))
    assert engineer.get(f"/sites/{site['id']}/record/pdf.json").get_json()["job"]["error"]


def test_a_job_cut_off_by_a_restart_shows_as_stopped_and_does_not_block_a_new_one(
    app, client_as, db, site, held
):
    record_jobs = app.extensions["record_jobs"]
    an_hour_ago = datetime.now(UTC) - timedelta(hours=1)
    # A process began making the record an hour ago and was stopped part way.
    cut_off, how = store.start_record_job(
        db,
        job_id="ab" * 16,
        site_id=site["id"],
        user_id=None,
        version="an older site",
        file_kept=lambda _job: False,
        per_user=10,
        window_s=3600,
        stale_after_s=300,
        now=an_hour_ago,
    )
    assert how == "started"
    store.update_record_job(
        db, cut_off["id"], state="making", bearings_done=5, bearings=12, now=an_hour_ago
    )
    viewer = client_as("viewer")
    html = viewer.get(f"/sites/{site['id']}/record/pdf").get_data(as_text=True)
    assert "server was restarted" in html and 'http-equiv="refresh"' not in html
    start_record(viewer, site["id"])
    assert held.reached.wait(60)
    assert record_jobs.latest(site["id"]).id != "ab" * 16
    assert store.get_record_job(db, "ab" * 16)["state"] == "stopped"


def test_the_record_in_the_making_is_refused_to_anyone_not_on_the_site(
    app, client_as, db, site, people
):
    engineer = client_as("engineer")
    start_record(engineer, site["id"])
    record_made(app, site["id"])
    outsider = client_as("outsider")
    for path in ("record/pdf", "record/pdf.json", "record/pdf/file"):
        r = outsider.get(f"/sites/{site['id']}/{path}")
        assert r.status_code == 404, path
        assert b"%PDF" not in r.data and b"GF-B1" not in r.data
    assert start_record(outsider, site["id"]).status_code == 404
    # Their own site gives them nothing of this one's.
    own = new_site(db, name="Outsider's own site", created_by=people["outsider"].id)
    assert outsider.get(f"/sites/{own['id']}/record/pdf/file").status_code == 302
    assert outsider.get(f"/sites/{own['id']}/record/pdf.json").get_json()["job"] is None
    # No token, no job.
    before = app.extensions["record_jobs"].jobs(site["id"])
    assert engineer.post(f"/sites/{site['id']}/record/pdf", data={}).status_code == 400
    assert app.extensions["record_jobs"].jobs(site["id"]) == before
    # Logged out: to the log-in page.
    anonymous = app.test_client()
    assert anonymous.get(f"/sites/{site['id']}/record/pdf/file").status_code == 302
    assert anonymous.get(f"/sites/{site['id']}/record/pdf.json").status_code == 401


def test_every_site_record_is_made_in_the_background_and_a_get_starts_nothing(
    app, client_as, db, site
):
    viewer = client_as("viewer")
    page = viewer.get(f"/sites/{site['id']}/record").get_data(as_text=True)
    assert f'action="/sites/{site["id"]}/record/pdf"' in page and "csrf_token" in page
    assert "Make the site record (PDF)" in page
    # The old address of the PDF made inside the request leads to the progress page.
    r = viewer.get(f"/sites/{site['id']}/record.pdf")
    assert r.status_code == 302 and r.headers["Location"].endswith(
        f"/sites/{site['id']}/record/pdf"
    )
    assert app.extensions["record_jobs"].jobs(site["id"]) == []


def test_a_site_keeps_its_newest_job_and_its_newest_finished_record(app, db, site, tmp_path):
    record_jobs = jobs.RecordJobs(tmp_path / "kept", app.config["DB_PATH"])
    site_id = site["id"]

    def made(out, progress):
        progress(1, 1, "B1")
        out.write_bytes(b"%PDF-1.4 stand-in")

    def broken(out, progress):
        progress(0, 1, "")
        raise ValueError("the drawing of B1 could not be made")

    started = []
    for n, make in enumerate((made, made, broken)):
        # Something changes on the site each time, so each asks for a new record.
        store.add_event(db, kind="site note", site_id=site_id, detail={"n": n})
        job, how = record_jobs.start(site_id, user_id=None, make=make)
        assert how == "started" and record_jobs.wait(job.id, timeout=30)
        started.append(job)
    first, second, third = started
    assert [j.id for j in record_jobs.jobs(site_id)] == [third.id, second.id, first.id]
    assert record_jobs.latest(site_id).state == jobs.FAILED
    assert "the drawing of B1 could not be made" in record_jobs.latest(site_id).error
    assert record_jobs.latest_done(site_id).id == second.id
    assert record_jobs.pdf_path(second).read_bytes() == b"%PDF-1.4 stand-in"
    # Only the newest job's files and the newest finished record are kept.
    assert not record_jobs.pdf_path(first).exists()
    assert record_jobs.jobs("site-2") == []  # each site's jobs are its own
    with pytest.raises(ValueError, match="site id"):
        record_jobs.site_folder("../site-1")
