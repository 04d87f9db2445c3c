"""The data export (CSV in a zip, JSON) made in the background like the PDF, written bearing
by bearing as the store hands them out, and the JSON giving once what it used to repeat.

A real server on 127.0.0.1 over a real SQLite file for what people do; the store and the
writers directly for what the files hold. The site is the demo schedule's (invented).
"""

from __future__ import annotations

import csv
import io
import json
import os
import sqlite3
import time
import uuid
import zipfile
from datetime import UTC, datetime

import pytest

from kit.client import Client
from kit.servers import LiveServer
from kit.web import PASSWORD
from sitecheck import cli, services, store
from sitecheck.photos import ingest_photo
from sitecheck.report import export, jobs
from sitecheck.report.collect import collect
from sitecheck.web import photo_store


@pytest.fixture
def measured(app, db, site, people):
    """Every bearing measured once (as designed), one with a photo, one decided and one
    released, so every file of the export has rows."""
    now = datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
    from kit.photo_samples import make_test_jpeg

    for n, bearing in enumerate(store.list_bearings(db, site_id=site["id"])):
        d = bearing["design_input"]
        pad = d["padstone"]
        measurements = {
            "bearing_length": d["beam"]["bearing_length"] - (20 if n == 1 else 0),
            "padstone_present": pad is not None,
            "wall_thickness": d["wall"]["thickness"],
            "masonry_group": d["masonry"]["group"],
        }
        if d["wall"]["a1"] is not None:
            measurements["a1"] = d["wall"]["a1"]
        if pad:
            measurements |= {
                "padstone_length": pad["length"],
                "padstone_width": pad["width"],
                "padstone_depth": pad["depth"],
            }
        record_uuid = str(uuid.uuid4())
        services.record_as_built(
            db,
            site=site,
            bearing=bearing,
            uuid=record_uuid,
            measured_at=now,
            design_revision=1,
            measurements=measurements,
            checklist={"bedded": True},
            notes=f"Invented test record {n}.",
            inspector_id=people["inspector"].id,
        )
        if n == 0:
            with app.app_context():
                services.store_photo(
                    db,
                    site=site,
                    record_uuid=record_uuid,
                    photo=ingest_photo(make_test_jpeg(320, 240)),
                    photos=photo_store(),
                    user_id=people["inspector"].id,
                )
    bearings = store.list_bearings(db, site_id=site["id"])
    deciding = next(b for b in bearings if b["state"] == "engineer to decide")
    services.decide(
        db,
        site=site,
        bearing=deciding,
        kind="accept",
        reason="Checked on site as built and accepted by the engineer (invented).",
        engineer_id=people["engineer"].id,
        confirmed_failing=True,
    )
    releasing = store.get_bearing(db, site_id=site["id"], bearing_id=deciding["id"])
    services.release(
        db,
        site=site,
        bearing=releasing,
        contractor_id=people["contractor"].id,
        contractor_name="Cora Contractor for Invented Build Ltd",
        statement="Inspected and released for closing up.",
    )
    return store.list_bearings(db, site_id=site["id"])


@pytest.fixture
def server(app):
    live = LiveServer(app)
    yield live
    live.stop()


def _client(server, people, role: str) -> Client:
    client = Client(server.url)
    client.log_in(people[role].email, PASSWORD)
    return client


def _made(app, client: Client, site_id: str, kind: str) -> dict:
    """Start the file of ``kind`` as a person does (the record page's form) and wait for it."""
    answer = client.post_form(f"/sites/{site_id}/record/{kind}", {})
    assert answer.status == 302, answer.text[:300]
    assert answer.headers["Location"].endswith(f"/sites/{site_id}/record/{kind}")
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline:
        job = client.get(f"/sites/{site_id}/record/{kind}.json").json()["job"]
        if job and not job["running"]:
            return job
        time.sleep(0.1)
    raise AssertionError(f"the {kind} export took over two minutes")


# --- made in the background, as people ask for it ---------------------------------------------


@pytest.mark.parametrize(
    ("kind", "address", "mimetype"),
    [("csv", "export.zip", "application/zip"), ("json", "export.json", "application/json")],
)
def test_an_export_is_made_in_the_background_and_handed_out_while_nothing_changes(
    app, db, site, people, measured, server, kind, address, mimetype
):
    viewer = _client(server, people, "viewer")
    # Asking for the file starts nothing: it leads to the page where it is made.
    early = viewer.get(f"/sites/{site['id']}/{address}")
    assert early.status == 302
    assert early.headers["Location"].endswith(f"/sites/{site['id']}/record/{kind}")
    assert app.extensions["record_jobs"].jobs(site["id"], kind) == []

    job = _made(app, viewer, site["id"], kind)
    assert (job["state"], job["kind"]) == ("done", kind)
    assert job["bearings_done"] == job["bearings"] == len(measured)
    page = viewer.get(f"/sites/{site['id']}/record/{kind}").text
    assert "Ready" in page and f'href="/sites/{site["id"]}/record/{kind}/file"' in page

    got = viewer.get(f"/sites/{site['id']}/{address}")
    assert got.status == 200 and got.headers["Content-Type"].startswith(mimetype)
    disposition = got.headers["Content-Disposition"]
    assert disposition.startswith("attachment; filename=tanner-s-yard")
    assert disposition.endswith("-data.zip" if kind == "csv" else "-data.json")
    if kind == "csv":
        with zipfile.ZipFile(io.BytesIO(got.body)) as z:
            assert set(z.namelist()) == {"README.txt", *export.CSV_FILES}
            rows = list(csv.DictReader(io.StringIO(z.read("bearings.csv").decode("utf-8-sig"))))
        assert sorted(r["reference"] for r in rows) == sorted(b["reference"] for b in measured)
    else:
        data = json.loads(got.body)
        assert [b["reference"] for b in data["bearings"]] == [b["reference"] for b in measured]

    # Asked again with nothing changed, the same file is handed out; no second making.
    engineer = _client(server, people, "engineer")
    again = engineer.post_form(f"/sites/{site['id']}/record/{kind}", {})
    assert again.status == 302
    assert "Nothing on the site has changed" in engineer.get(again.headers["Location"]).text
    assert len(app.extensions["record_jobs"].jobs(site["id"], kind)) == 1
    # Each kind is a making of its own: the PDF has not been made by any of this.
    assert app.extensions["record_jobs"].jobs(site["id"], "pdf") == []

    # Once something changes, the old file is no longer handed out as the current one.
    store.add_event(db, kind="site note", site_id=site["id"], detail={"why": "a change"})
    assert viewer.get(f"/sites/{site['id']}/{address}").status == 302
    record_page = viewer.get(f"/sites/{site['id']}/record").text
    assert "the site has changed since" in record_page


def test_an_export_that_fails_says_why_and_keeps_nothing(app, site, people, server, monkeypatch):
    def broken(rec, out, *, progress=None):
        progress(0, 3, "")
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(export, "write_json", broken)
    engineer = _client(server, people, "engineer")
    job = _made(app, engineer, site["id"], "json")
    assert job["state"] == "failed"
    assert job["error"].startswith("The data export (JSON) could not be made")
    assert "No space left on device" in job["error"] and "Nothing was kept" in job["error"]
    folder = app.extensions["record_jobs"].site_folder(site["id"])
    assert not list(folder.glob("*.json")) and not list(folder.glob("*.part"))
    assert engineer.get(f"/sites/{site['id']}/record/json/file").status == 302


def test_an_export_in_the_making_is_refused_to_anyone_not_on_the_site(
    app, site, people, measured, server
):
    _made(app, _client(server, people, "engineer"), site["id"], "csv")
    outsider = _client(server, people, "outsider")
    for path in ("export.zip", "record/csv", "record/csv.json", "record/csv/file"):
        answer = outsider.get(f"/sites/{site['id']}/{path}")
        assert answer.status == 404, path
        assert b"GF-B1" not in answer.body
    assert outsider.post_form(f"/sites/{site['id']}/record/csv", {}).status == 404
    assert Client(server.url).get(f"/sites/{site['id']}/record/csv/file").status == 302


def test_one_person_may_start_only_so_many_makings_of_a_kind_an_hour(app, db, site, people, server):
    record_jobs = app.extensions["record_jobs"]
    record_jobs.per_user = 2
    engineer = _client(server, people, "engineer")
    for n in range(2):
        store.add_event(db, kind="site note", site_id=site["id"], detail={"n": n})
        assert _made(app, engineer, site["id"], "json")["state"] == "done"
    store.add_event(db, kind="site note", site_id=site["id"], detail={"n": 2})
    refused = engineer.post_form(f"/sites/{site['id']}/record/json", {})
    assert refused.status == 429 and int(refused.headers["Retry-After"]) > 0
    assert "You have started 2 data export (JSON)s in the last hour" in refused.text
    # The allowance is per kind: the CSV export may still be made.
    assert _made(app, engineer, site["id"], "csv")["state"] == "done"


# --- what the files hold ----------------------------------------------------------------------


def test_the_json_export_gives_every_calculation_back_whole(db, site, measured):
    data = json.loads(export.json_bytes(collect(db, site["id"])))
    assert data["format_version"] == 2
    texts = data["texts"]
    by_id = {b["id"]: b for b in data["bearings"]}
    records = 0
    for stored in measured:
        exported = by_id[stored["id"]]
        assert (
            export.expand_calculation(exported["design_result"], texts) == stored["design_result"]
        )
        assert exported["design_input"] == stored["design_input"]
        for r in exported["records"]:
            kept = store.get_record(db, site_id=site["id"], uuid=r["uuid"])
            assert export.expand_calculation(r["result"], texts) == kept["result"]
            assert r["measurements"] == kept["measurements"] and r["reasons"] == kept["reasons"]
            records += 1
    assert records == len(measured)


def test_the_json_export_gives_once_what_it_used_to_repeat(db, site, people, measured):
    raw = export.json_bytes(collect(db, site["id"])).decode()
    data = json.loads(raw)
    # A step's words are the same on every bearing checked the same way: given once.
    step = next(s for s in data["texts"]["steps"] if s["label"] == "Shape factor of the unit")
    assert raw.count(json.dumps(step["label"], ensure_ascii=False)) == 1
    assert len(data["bearings"]) > 1
    # Rows inside a bearing do not repeat its id, nor a photo its record's, nor an event
    # the site's; people are named once, by id.
    for b in data["bearings"]:
        for r in b["records"]:
            assert {"bearing_id", "site_id", "inspector", "kind"}.isdisjoint(r)
            assert all({"bearing_id", "record_uuid"}.isdisjoint(p) for p in r["photos"])
            assert data["people"][str(r["inspector_id"])] == "Ivo Inspector"
        for d in b["decisions"]:
            assert "bearing_id" not in d
            assert data["people"][str(d["engineer_id"])] == "Esme Engineer"
        assert "schedule_gaps" not in b  # none for the demo schedule: nothing to say
    assert all("site_id" not in e and "who" not in e for e in data["events"])
    assert data["people"][str(people["contractor"].id)] == "Cora Contractor"
    assert sum(len(b["records"][0]["photos"]) for b in data["bearings"]) == 1
    # The file is one bearing a line, so it can be read (or looked through) a line at a time.
    lines = raw.splitlines()
    assert sum(1 for line in lines if line.lstrip(",").startswith('{"id":"')) == len(measured)


def test_the_json_export_holds_the_calculations_in_well_under_half_their_size(db, site, measured):
    """A calculation is mostly the words of its steps (label, formula, clause, source), the
    same on every bearing; given once, the calculations and their words together take less
    than 40 % of the calculations written out whole (about 30 % on this site)."""
    data = json.loads(export.json_bytes(collect(db, site["id"])))

    def size(value) -> int:
        return len(json.dumps(value, ensure_ascii=False, separators=(",", ":")))

    whole = sum(
        size(b["design_result"])
        + size(store.get_record(db, site_id=site["id"], uuid=b["latest_record_uuid"])["result"])
        for b in measured
    )
    in_file = size(data["texts"]) + sum(
        size(b["design_result"]) + sum(size(r["result"]) for r in b["records"])
        for b in data["bearings"]
    )
    assert in_file < 0.4 * whole, (in_file, whole)


def test_the_bearings_are_read_a_batch_at_a_time_and_none_is_lost_or_repeated(
    db, site, measured, monkeypatch
):
    """Batches of 2 (and events 3 at a time) give the same files as one batch holding all."""
    whole_zip = _csv_texts(export.csv_zip(collect(db, site["id"])))
    whole_json = json.loads(export.json_bytes(collect(db, site["id"])))
    monkeypatch.setattr(store.record_reads, "BATCH", 2)
    monkeypatch.setattr(store.record_reads, "EVENTS_BATCH", 3)
    batches = list(store.bearing_batches(db, site_id=site["id"]))
    assert len(batches) == -(-len(measured) // 2) and all(len(b) <= 2 for b in batches)
    assert _csv_texts(export.csv_zip(collect(db, site["id"]))) == whole_zip
    small = json.loads(export.json_bytes(collect(db, site["id"])))
    for key in ("bearings", "events", "people", "texts"):
        assert small[key] == whole_json[key], key
    references = [b["reference"] for b in small["bearings"]]
    assert references == sorted(references, key=str.casefold) and len(set(references)) == len(
        measured
    )


def _csv_texts(data: bytes) -> dict[str, str]:
    with zipfile.ZipFile(io.BytesIO(data)) as z:
        return {name: z.read(name).decode("utf-8-sig") for name in export.CSV_FILES}


def test_an_export_reads_the_site_as_it_was_when_it_began(app, db, site, people, measured):
    """A record that arrives while a long export is being written is in the next one, not
    half in this one."""
    events_before = store.count_events(db, site_id=site["id"])
    other = store.open_db(app.config["DB_PATH"])
    try:
        with store.read_snapshot(db):
            rec = collect(db, site["id"])
            first = next(iter(rec.bearings))  # the read has begun
            bearing = store.get_bearing(other, site_id=site["id"], bearing_id=first.bearing["id"])
            services.record_as_built(
                other,
                site=site,
                bearing=bearing,
                uuid=str(uuid.uuid4()),
                measured_at=datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
                design_revision=1,
                measurements={"bearing_length": 95.0},
                checklist={},
                notes="Arrived while the export was written (invented).",
                inspector_id=people["inspector"].id,
            )
            during = json.loads(export.json_bytes(rec))
        after = json.loads(export.json_bytes(collect(db, site["id"])))
    finally:
        other.conn.close()
    reference = first.bearing["reference"]
    records = {b["reference"]: len(b["records"]) for b in during["bearings"]}
    assert records[reference] == 1 and len(during["events"]) == events_before
    records = {b["reference"]: len(b["records"]) for b in after["bearings"]}
    assert records[reference] == 2 and len(after["events"]) > events_before


def test_nothing_may_be_written_inside_a_read_snapshot(db, site):
    with (
        pytest.raises(RuntimeError, match="written inside read_snapshot"),
        store.read_snapshot(db),
    ):
        store.add_event(db, kind="site note", site_id=site["id"], detail={})
    assert all(e["kind"] != "site note" for e in store.events_for(db, site_id=site["id"]))


def test_the_export_command_writes_either_file_with_a_progress_bar(
    app, db, site, measured, tmp_path, capsys
):
    for name in ("site.zip", "site.json"):
        out = tmp_path / name
        rc = cli.main(["export", site["name"], "--db", app.config["DB_PATH"], "--out", str(out)])
        captured = capsys.readouterr()
        assert rc == 0, captured.err
        assert "#" in captured.err and "competent engineer" in captured.out
        assert not (tmp_path / f"{name}.part").exists()
    with zipfile.ZipFile(tmp_path / "site.zip") as z:
        assert "README.txt" in z.namelist()
    assert json.loads((tmp_path / "site.json").read_text())["format_version"] == 2
    bad = cli.main(["export", site["name"], "--db", app.config["DB_PATH"], "--out", "x.pdf"])
    assert bad == 2 and ".zip (the CSV files) or .json" in capsys.readouterr().err
    missing = cli.main(["export", "No such site", "--db", app.config["DB_PATH"], "--out", "x.zip"])
    assert missing == 2


def test_jobs_made_before_exports_existed_are_pdfs_after_the_migration(tmp_path):
    import sqlite_utils

    path = tmp_path / "older.db"
    older = sqlite_utils.Database(path)
    store.MIGRATIONS.apply(older, stop_before="m016_record_job_kinds")
    older.conn.executescript(
        """
        INSERT INTO users (id, email, name, password_hash, created_at)
            VALUES (1, 'e@example.test', 'E', 'test-hash-not-real', '2026-01-01T00:00:00Z');
        INSERT INTO sites (id, name, code_basis, review_settings, created_by, created_at)
            VALUES ('s1', 'Older site', '{}', '{}', 1, '2026-01-01T00:00:00Z');
        INSERT INTO record_jobs (id, site_id, state, site_version, created_at, updated_at)
            VALUES ('abababababababababababababababab', 's1', 'making', 'v',
                    '2026-01-01T00:00:00Z', '2026-01-01T00:00:00Z');
        """
    )
    older.close()
    db = store.open_db(path)
    try:
        (job,) = store.record_jobs_for_site(db, site_id="s1")
        assert job["kind"] == "pdf"
        assert store.record_jobs_for_site(db, site_id="s1", kind="json") == []
        # Still one making of a kind at a time, and the kinds are only these.
        row = ["cd" * 16, "s1", "pdf", "waiting", "v", "t", "t"]
        insert = (
            "INSERT INTO record_jobs (id, site_id, kind, state, site_version, created_at, "
            "updated_at) VALUES (?, ?, ?, ?, ?, ?, ?)"
        )
        with pytest.raises(sqlite3.IntegrityError, match="UNIQUE"):
            db.execute(insert, row)
        db.execute(insert, ["ef" * 16, "s1", "json", "waiting", "v", "t", "t"])
        with pytest.raises(sqlite3.IntegrityError, match="CHECK"):
            db.execute(insert, ["01" * 16, "s1", "docx", "waiting", "v", "t", "t"])
    finally:
        db.close()


def test_work_folders_an_export_left_behind_are_removed_after_a_day(app, db, site, people):
    """A process stopped mid-export leaves its CSV files in a work folder; the next export of
    the site removes it once it is a day old, and never one that may still be in use."""
    record_jobs = app.extensions["record_jobs"]
    folder = record_jobs.site_folder(site["id"])
    old, fresh = folder / f"{export.WORK_PREFIX}old", folder / f"{export.WORK_PREFIX}fresh"
    for work in (old, fresh):
        work.mkdir(parents=True)
        (work / "records.csv").write_text("record_uuid\r\n")
    two_days_ago = time.time() - 2 * 24 * 3600
    os.utime(old, (two_days_ago, two_days_ago))
    job, how = record_jobs.start(
        site["id"],
        user_id=people["engineer"].id,
        make=jobs.data_export(app.config["DB_PATH"], site["id"], "csv"),
        kind="csv",
    )
    assert how == "started" and record_jobs.wait(job.id, timeout=120)
    assert record_jobs.latest(site["id"], "csv").state == "done"
    assert not old.exists() and fresh.is_dir()


def test_a_light_walk_is_the_same_bearings_without_their_calculations(db, site, measured):
    """The record's lists (by state, decision, time) walk the site light; what they get is
    the full walk's rows without the design and calculations, and nothing else missing."""
    full = [b for batch in store.bearing_batches(db, site_id=site["id"]) for b in batch]
    light = [
        b for batch in store.bearing_batches(db, site_id=site["id"], light=True) for b in batch
    ]
    heavy = store.record_reads.HEAVY
    assert len(light) == len(full) == len(measured)
    for whole, lean in zip(full, light, strict=True):
        assert lean["bearing"] == {k: v for k, v in whole["bearing"].items() if k not in heavy}
        assert lean["records"] == [
            {k: v for k, v in r.items() if k not in heavy} for r in whole["records"]
        ]
        assert heavy.isdisjoint(lean["bearing"]) and "design_result" in whole["bearing"]
        for kept in ("photos", "decisions", "releases", "reopenings", "releases_kept"):
            assert lean[kept] == whole[kept]
