"""``sitecheck backup`` and ``sitecheck restore`` on real data folders, and the drill:
inspectors send records with photos through a running server while a backup is taken; the
backup restored into a new folder holds every record acknowledged before it began."""

from __future__ import annotations

import hashlib
import io
import json
import re
import sqlite3
import subprocess
import threading
import time
import uuid
from pathlib import Path

import pytest

from kit.client import Client
from kit.data_folder import as_built_record, prepare_home
from kit.photo_samples import noisy_jpeg
from kit.servers import SITECHECK, Served
from kit.web import PASSWORD, csrf_token
from sitecheck import cli, store
from sitecheck.backup import BackupError, backup, check_backup, restore
from sitecheck.config import load_settings
from sitecheck.photos import PhotoStore

pytestmark = pytest.mark.timeout(240)


def _settings(home: Path):
    return load_settings(home=home, environ={})


def _send(client, site, bearing, seed: int) -> str:
    """One record and its photo through the phone's API; returns the record's UUID."""
    body = as_built_record(site["id"], bearing)
    token = csrf_token(client)
    assert client.post("/api/records", json=body, headers={"X-CSRFToken": token}).status_code == 201
    answer = client.post(
        f"/api/records/{body['uuid']}/photos",
        data={
            "photo_uuid": str(uuid.uuid4()),
            "photo": (io.BytesIO(noisy_jpeg(seed, 480, 360)), "p.jpg"),
        },
        headers={"X-CSRFToken": token},
        content_type="multipart/form-data",
    )
    assert answer.status_code == 201, answer.data[:300]
    return body["uuid"]


@pytest.fixture
def filled(app, db, site, client_as):
    """The app's data folder with two records with a photo each, and a site record file."""
    inspector = client_as("inspector")
    bearings = store.list_bearings(db, site_id=site["id"])
    uuids = [_send(inspector, site, b, n) for n, b in enumerate(bearings[:2])]
    records = Path(app.config["RECORD_DIR"]) / site["id"]
    records.mkdir(parents=True)
    (records / ("a" * 32 + ".pdf")).write_bytes(b"%PDF-1.4 invented record")
    (records / ("a" * 32 + ".json")).write_text("{}")
    (records / ("b" * 32 + ".part")).write_bytes(b"half written")
    home = Path(app.config["DATA_HOME"])
    settings = load_settings(home=home, environ={}, overrides={"database": app.config["DB_PATH"]})
    return {"home": home, "settings": settings, "uuids": uuids, "site": site, "client": inspector}


@pytest.fixture
def elsewhere(tmp_path_factory):
    """A folder outside the data folder (the app's data folder is the test's tmp_path)."""
    return tmp_path_factory.mktemp("elsewhere")


def test_a_backup_holds_everything_and_a_second_copies_only_what_is_new(filled, elsewhere, db):
    dest = elsewhere / "backup"
    first = backup(filled["settings"], dest)
    manifest = json.loads((dest / "manifest.json").read_text())
    assert manifest["database"]["counts"]["as_built_records"] == 2
    assert manifest["database"]["counts"]["photos"] == 2
    assert manifest["schema"] == store.known_migrations()
    assert manifest["sitecheck_version"] and manifest["made_at"].endswith("Z")
    assert len(manifest["photos"]["files"]) == 4  # two pictures, two thumbnails
    assert len(manifest["print_copies"]) == 2
    assert sorted(manifest["records"]) == [
        f"{filled['site']['id']}/{'a' * 32}.{x}" for x in ("json", "pdf")
    ]
    assert manifest["secret_key"]["sha256"]
    assert (dest / "secret_key").stat().st_mode & 0o777 == 0o600
    assert (first.photos_copied, first.photos_already_there, first.print_copies_copied) == (4, 0, 2)
    photos = PhotoStore(dest / "photos")
    assert all(photos.verify(sha) for sha in manifest["photos"]["files"])

    again = backup(filled["settings"], dest)
    assert (again.photos_copied, again.photos_already_there) == (0, 4)
    assert (again.print_copies_copied, again.records_copied) == (0, 0)

    _send(
        filled["client"],
        filled["site"],
        store.list_bearings(db, site_id=filled["site"]["id"])[3],
        99,
    )
    third = backup(filled["settings"], dest)
    assert (third.photos_copied, third.photos_already_there, third.print_copies_copied) == (2, 4, 1)
    assert check_backup(dest)["database"]["counts"]["as_built_records"] == 3


def test_restore_into_a_new_folder_gives_back_the_same_data(filled, elsewhere, db):
    dest = elsewhere / "backup"
    # The nightly upkeep runs while the backup is taken: its lease must not come back with it.
    assert store.take_lease(db, name="maintenance", holder="old-server:1", lease_s=3600)
    backup(filled["settings"], dest)
    new_home = elsewhere / "restored"
    report = restore(dest, _settings(new_home))
    assert report.counts["as_built_records"] == 2 and report.replaced is None
    assert store.integrity_problems(new_home / "sitecheck.db") == []
    assert report.counts["leases"] == 0
    assert (new_home / "secret_key").read_bytes() == (filled["home"] / "secret_key").read_bytes()
    db = store.open_db(new_home / "sitecheck.db")
    try:
        assert {r["uuid"] for r in db.query("SELECT uuid FROM as_built_records")} == set(
            filled["uuids"]
        )
        named = store.photo_files_named(new_home / "sitecheck.db")
    finally:
        db.conn.close()
    assert all(PhotoStore(new_home / "photos").verify(sha) for sha in named)
    assert (new_home / "records" / filled["site"]["id"] / ("a" * 32 + ".pdf")).is_file()


def test_restore_refuses_a_database_that_is_there_unless_told_and_then_keeps_it(
    filled, elsewhere, capsys
):
    home = filled["home"]
    dest = elsewhere / "backup"
    backup(filled["settings"], dest)
    database = home / "site.db"
    before = database.stat().st_mtime_ns
    assert cli.main(["restore", str(dest), "--db", str(database)]) == 2
    err = capsys.readouterr().err
    assert f"a database is already at {database}; nothing was restored" in err
    assert "--replace" in err
    assert database.stat().st_mtime_ns == before

    assert cli.main(["restore", str(dest), "--db", str(database), "--replace"]) == 0
    out = capsys.readouterr().out
    kept = next(home.glob("site.db.before-restore-*"))
    assert f"kept as {kept}" in out
    assert store.row_counts(kept)["as_built_records"] == 2


@pytest.mark.parametrize(
    "damage", ["photo", "counts", "database", "schema", "manifest", "print copy"]
)
def test_restore_refuses_a_backup_that_is_not_whole_and_restores_nothing(filled, elsewhere, damage):
    dest = elsewhere / "backup"
    backup(filled["settings"], dest)
    manifest_path = dest / "manifest.json"
    manifest = json.loads(manifest_path.read_text())
    if damage == "photo":
        sha = manifest["photos"]["files"][0]
        path = PhotoStore(dest / "photos").path_for(sha)
        path.write_bytes(path.read_bytes()[:-10] + b"0123456789")
        expected = f"photo {sha} in the backup does not match its hash"
    elif damage == "print copy":
        sha = next(iter(manifest["print_copies"]))
        PhotoStore(dest / "photos").print_path_for(sha).unlink()
        expected = f"the print copy of photo {sha} is missing or differs"
    elif damage == "counts":
        manifest["database"]["counts"]["as_built_records"] = 3
        manifest_path.write_text(json.dumps(manifest))
        expected = "as_built_records: 2 rows, the manifest says 3"
    elif damage == "database":
        data = bytearray((dest / "sitecheck.db").read_bytes())
        page = 4096 * 2  # the third page's b-tree header: an unknown page type
        data[page : page + 8] = b"\x07" * 8
        (dest / "sitecheck.db").write_bytes(bytes(data))
        manifest["database"]["sha256"] = hashlib.sha256(data).hexdigest()
        manifest_path.write_text(json.dumps(manifest))
        expected = "integrity check:"
    elif damage == "schema":
        manifest["schema"].append("m999_from_the_future")
        manifest_path.write_text(json.dumps(manifest))
        expected = "made by a newer sitecheck"
    else:
        manifest_path.unlink()
        expected = "has no manifest.json: it is not a finished sitecheck backup"
    new_home = elsewhere / "restored"
    with pytest.raises(BackupError, match=re.escape(expected)):
        restore(dest, _settings(new_home))
    assert not new_home.exists() or not any(new_home.iterdir())


def test_backup_refuses_a_folder_inside_the_data_folder_or_holding_other_files(filled, elsewhere):
    home = filled["home"]
    with pytest.raises(BackupError, match="is inside the data folder"):
        backup(filled["settings"], home / "backups")
    other = elsewhere / "other"
    other.mkdir()
    (other / "holiday.jpg").write_bytes(b"not ours")
    with pytest.raises(BackupError, match="holds other files and no manifest.json"):
        backup(filled["settings"], other)
    assert sorted(p.name for p in other.iterdir()) == ["holiday.jpg"]


def test_the_drill_records_sent_while_a_backup_runs_are_all_there_when_restored(tmp_path):
    home = tmp_path / "data"
    info = prepare_home(home, inspectors=4)
    bearings = info["bearings"]
    server = Served(home, workers=2)
    acked: list[tuple[float, str, str]] = []  # (time acknowledged, record uuid, photo uuid)
    failures: list[str] = []
    stop = threading.Event()

    def inspector(n: int) -> None:
        person = Client(server.url)
        assert person.log_in(info["inspectors"][n], PASSWORD).status == 302
        token = person.token()
        i = 0
        while not stop.is_set() and i < 400:
            body = as_built_record(info["site_id"], bearings[(n * 5 + i) % len(bearings)])
            answer = person.post_json("/api/records", body, token=token)
            photo = person.post_photo(body["uuid"], noisy_jpeg(n * 1000 + i, 320, 240), token=token)
            if answer.status != 201 or photo.status != 201:
                failures.append(f"{answer.status} {photo.status} {photo.text[:200]}")
                return
            acked.append((time.monotonic(), body["uuid"], photo.json()["uuid"]))
            i += 1

    writers = [threading.Thread(target=inspector, args=(n,)) for n in range(4)]
    try:
        for w in writers:
            w.start()
        while len(acked) < 12 and not failures:
            time.sleep(0.05)
        began = time.monotonic()
        done = subprocess.run(
            [SITECHECK, "backup", str(tmp_path / "backup"), "--home", str(home)],
            capture_output=True,
            text=True,
        )
        ended = time.monotonic()
        time.sleep(0.5)  # the inspectors go on after the backup
    finally:
        stop.set()
        for w in writers:
            w.join(60)
        server.stop()
    assert not failures, failures
    assert done.returncode == 0, done.stderr
    before = [a for a in acked if a[0] < began]
    during = [a for a in acked if began <= a[0] <= ended]
    assert len(before) >= 12 and during, "the backup ran while records were being sent"

    restored = tmp_path / "restored"
    done = subprocess.run(
        [SITECHECK, "restore", str(tmp_path / "backup"), "--home", str(restored)],
        capture_output=True,
        text=True,
    )
    assert done.returncode == 0, done.stderr
    assert "every hash and the integrity check are ok" in done.stdout
    conn = sqlite3.connect(restored / "sitecheck.db")
    try:
        records = {r[0] for r in conn.execute("SELECT uuid FROM as_built_records")}
        photos = {
            r[0]: (r[1], r[2])
            for r in conn.execute("SELECT uuid, sha256, thumb_sha256 FROM photos")
        }
        assert conn.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
    finally:
        conn.close()
    for _at, record_uuid, photo_uuid in before:
        assert record_uuid in records and photo_uuid in photos
    assert len(records) <= len(acked)
    store_ = PhotoStore(restored / "photos")
    for sha, thumb in photos.values():
        assert store_.verify(sha) and store_.verify(thumb)

    # The restored folder serves, and an inspector logs in as before.
    again = Served(restored)
    try:
        person = Client(again.url)
        assert person.log_in(info["inspectors"][0], PASSWORD).status == 302
        assert person.get(f"/api/sites/{info['site_id']}/pack").status == 200
    finally:
        again.stop()
