"""``sitecheck maintain`` on a real data folder while a real server serves and an inspector
sends photos: damaged photos reported (never removed), old temporary and unnamed files
removed (young ones kept), old log-in attempts pruned, two runs never at once."""

from __future__ import annotations

import os
import subprocess
import threading
import time
from datetime import timedelta

import pytest

from kit.client import Client
from kit.data_folder import as_built_record, prepare_home
from kit.photo_samples import noisy_jpeg
from kit.servers import SITECHECK, Served
from kit.web import PASSWORD
from sitecheck import store
from sitecheck.photos import PhotoStore

pytestmark = pytest.mark.timeout(180)
TWO_DAYS_AGO = time.time() - 2 * 24 * 3600


def _maintain(home, *more) -> subprocess.CompletedProcess:
    return subprocess.run(
        [SITECHECK, "maintain", "--home", str(home), *more], capture_output=True, text=True
    )


def _old(path) -> None:
    os.utime(path, (TWO_DAYS_AGO, TWO_DAYS_AGO))


def test_maintain_while_serving_keeps_what_is_named_and_removes_what_is_old(tmp_path):
    home = tmp_path / "data"
    info = prepare_home(home, inspectors=1)
    server = Served(home, workers=2)
    sent: list[str] = []
    failures: list[str] = []
    stop = threading.Event()

    def inspector() -> None:
        person = Client(server.url)
        person.log_in(info["inspectors"][0], PASSWORD)
        token = person.token()
        i = 0
        while not stop.is_set() and i < 60:
            body = as_built_record(info["site_id"], info["bearings"][i % len(info["bearings"])])
            a = person.post_json("/api/records", body, token=token)
            b = person.post_photo(body["uuid"], noisy_jpeg(500 + i, 320, 240), token=token)
            if (a.status, b.status) != (201, 201):
                failures.append(f"{a.status} {b.status} {b.text[:200]}")
                return
            sent.append(body["uuid"])
            i += 1

    try:
        first = threading.Thread(target=inspector)
        first.start()
        while len(sent) < 3 and not failures:
            time.sleep(0.05)
        photos = PhotoStore(home / "photos")
        named = sorted(store.photo_files_named(home / "sitecheck.db"))
        damaged = photos.path_for(named[0])
        damaged.write_bytes(damaged.read_bytes()[:-100] + b"\0" * 100)

        fanout = photos.path_for("ab" * 32).parent
        fanout.mkdir(parents=True, exist_ok=True)
        old_temp, young_temp = fanout / ".incoming-old.part", fanout / ".incoming-young.part"
        old_temp.write_bytes(b"cut off by a crash")
        young_temp.write_bytes(b"being written now")
        _old(old_temp)
        old_orphan, young_orphan = photos.path_for("ab" * 32), photos.path_for("cd" * 32)
        young_orphan.parent.mkdir(parents=True, exist_ok=True)
        old_orphan.write_bytes(b"a picture whose row never came")
        young_orphan.write_bytes(b"a picture whose row is about to come")
        _old(old_orphan)
        records = home / "records" / info["site_id"]
        records.mkdir(parents=True, exist_ok=True)
        (records / "job.part").write_bytes(b"half a PDF")
        _old(records / "job.part")

        db = store.open_db(home / "sitecheck.db")
        try:
            long_ago = store.utc_now() - timedelta(days=3)
            store.record_login_attempt(
                db, email="someone@example.test", remote_addr="192.0.2.1", ok=False, now=long_ago
            )
        finally:
            db.conn.close()

        done = _maintain(home)  # while the inspector goes on sending
        stop.set()
        first.join(60)
    finally:
        stop.set()
        server.stop()
    assert not failures, failures
    assert done.returncode == 1, done.stderr
    assert f"photo file {named[0]} no longer matches its hash" in done.stderr
    lines = done.stdout.splitlines()
    assert "1 MISSING OR CHANGED" in lines[1]
    assert lines[2].endswith("temporary files removed: 2")  # the old photo part and PDF part
    assert lines[3].endswith("photo files no record names, removed: 1")
    assert lines[4].endswith("old log-in attempts removed: 1")
    assert damaged.is_file()  # evidence is never removed, even damaged
    assert not old_temp.exists() and young_temp.exists()
    assert not old_orphan.exists() and young_orphan.exists()
    assert not (records / "job.part").exists()
    # Everything sent before, during and after is whole.
    for sha in store.photo_files_named(home / "sitecheck.db"):
        if sha != named[0]:
            assert photos.verify(sha), sha
    assert store.integrity_problems(home / "sitecheck.db") == []


def test_two_runs_never_work_at_once(tmp_path):
    home = tmp_path / "data"
    prepare_home(home)
    db = store.open_db(home / "sitecheck.db")
    try:
        assert store.take_lease(db, name="maintenance", holder="elsewhere:1", lease_s=60)
        done = _maintain(home)
        assert done.returncode == 3
        assert "another sitecheck maintain has been running since" in done.stderr
        store.release_lease(db, name="maintenance", holder="elsewhere:1")
    finally:
        db.conn.close()
    done = _maintain(home)
    assert done.returncode == 0, done.stderr
    assert "photo files checked against their hashes: 0, all sound" in done.stdout


def test_a_young_file_cannot_be_declared_old(tmp_path):
    home = tmp_path / "data"
    prepare_home(home)
    done = _maintain(home, "--older-than-hours", "0")
    assert done.returncode == 2
    assert "a younger file may be one an upload is writing now" in done.stderr
