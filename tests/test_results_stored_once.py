"""A database made before each calculation was stored once (migration m011) is carried over
with every result a reader sees unchanged.

tests/data/demo-m010.sqlite.gz is the demo database as `sitecheck.demo.build_demo` wrote it
with the schema up to m010_could_not_measure, when a bearing's design result was stored on the
bearing and on its revision and each record's result as JSON text (its photo files are not
kept: nothing here looks at pictures). It stands for the databases already in use, and is
never written again.
"""

from __future__ import annotations

import contextlib
import gzip
import json
import re
import sqlite3
import zlib
from pathlib import Path

import pytest

from sitecheck import store
from sitecheck.demo import DEMO_PEOPLE
from sitecheck.web import create_app

FIXTURE = Path(__file__).parent / "data" / "demo-m010.sqlite.gz"


@pytest.fixture
def older(tmp_path):
    """A copy of the older database, and what it held, read with plain sqlite3."""
    path = tmp_path / "older.db"
    path.write_bytes(gzip.decompress(FIXTURE.read_bytes()))
    with contextlib.closing(sqlite3.connect(path)) as con:
        con.row_factory = sqlite3.Row
        applied = [r[0] for r in con.execute("SELECT name FROM _sqlite_migrations")]
        assert applied[-1] == "m010_could_not_measure"
        before = {
            table: [dict(r) for r in con.execute(f"SELECT * FROM {table} ORDER BY {key}")]
            for table, key in (
                ("bearings", "id"),
                ("bearing_revisions", "bearing_id, revision"),
                ("as_built_records", "uuid"),
                ("events", "id"),
                ("decisions", "id"),
                ("releases", "id"),
                ("photos", "uuid"),
            )
        }
    return path, before


def _without(row: dict, *keys: str) -> dict:
    return {k: v for k, v in row.items() if k not in keys}


def test_every_result_reads_back_the_same_after_the_upgrade(older):
    path, before = older
    db = store.open_db(path)
    try:
        assert store.MIGRATIONS.pending(db) == []
        bearings = {b["id"]: b for b in before["bearings"]}
        assert len(bearings) == 15 and len(before["as_built_records"]) == 11
        for old in before["bearings"]:
            design = json.loads(old["design_result"])
            now = store.get_bearing(db, site_id=old["site_id"], bearing_id=old["id"])
            assert "design_result" not in now  # a list's bearing carries no trace
            assert now["design_governing"] == design["governing"]
            title = next(c["title"] for c in design["checks"] if c["code"] == design["governing"])
            assert now["design_governing_title"] == title
            full = store.get_bearing(
                db, site_id=old["site_id"], bearing_id=old["id"], with_result=True
            )
            assert full["design_result"] == design
            # Every other column as it was (the reference's sort key is a later migration's).
            assert _without(
                full, "design_result", "design_governing", "design_governing_title", "reference_key"
            ) == {
                **_without(old, "design_result", "design_input"),
                "design_input": json.loads(old["design_input"]),
                "design_passed": bool(old["design_passed"]),
            }
        for old in before["bearing_revisions"]:
            site_id = bearings[old["bearing_id"]]["site_id"]
            (now,) = [
                v
                for v in store.bearing_revisions(db, site_id=site_id, bearing_id=old["bearing_id"])
                if v["revision"] == old["revision"]
            ]
            assert now["design_result"] == json.loads(old["design_result"])
            assert now["location"] == old["location"] and now["created_at"] == old["created_at"]
        for old in before["as_built_records"]:
            site_id = bearings[old["bearing_id"]]["site_id"]
            now = store.get_record(db, site_id=site_id, uuid=old["uuid"])
            result = json.loads(old["result"])
            assert now["result"] == result
            assert now["governing"] == result["governing"]
            assert now["reasons"] == json.loads(old["reasons"])
            assert now["measurements"] == json.loads(old["measurements"])
            line = store.record_line(db, site_id=site_id, uuid=old["uuid"])
            assert line == _without(now, "result")
        # The export's and the record's bearings, by reference, with their whole results.
        for site_id in {b["site_id"] for b in before["bearings"]}:
            for b in store.list_bearings(db, site_id=site_id):
                assert b["design_result"] == json.loads(bearings[b["id"]]["design_result"])
        # The rest of the history is untouched.
        for table in ("events", "decisions", "releases", "photos"):
            rows = [dict(r) for r in db.query(f"SELECT * FROM {table}")]
            assert len(rows) == len(before[table])
        assert db.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        assert db.execute("PRAGMA foreign_key_check").fetchall() == []
    finally:
        db.close()


def test_the_upgraded_database_keeps_its_guards(older):
    path, before = older
    db = store.open_db(path)
    try:
        (released,) = [b for b in before["bearings"] if b["state"] == "released"]
        record = before["as_built_records"][0]
        for sql, params, message in (
            (
                "UPDATE as_built_records SET notes = 'changed' WHERE uuid = ?",
                [record["uuid"]],
                "append-only",
            ),
            ("DELETE FROM as_built_records WHERE uuid = ?", [record["uuid"]], "append-only"),
            (
                "UPDATE bearing_revisions SET location = 'moved' WHERE bearing_id = ?",
                [released["id"]],
                "append-only",
            ),
            (
                "UPDATE bearings SET location = 'moved' WHERE id = ?",
                [released["id"]],
                "released and locked",
            ),
            (
                "UPDATE bearings SET design_governing = 'other' WHERE id = ?",
                [released["id"]],
                "released and locked",
            ),
            (
                "INSERT INTO bearing_revisions (bearing_id, revision, location, design_input, "
                "design_result, design_passed, created_by, created_at) "
                "VALUES (?, 99, '', '{}', NULL, 1, 1, '2026-01-01T00:00:00Z')",
                [released["id"]],
                "must be packed JSON",
            ),
            (
                "INSERT INTO bearing_revisions (bearing_id, revision, location, design_input, "
                "design_result, design_passed, created_by, created_at) "
                "VALUES (?, 99, '', '{}', '{}', 1, 1, '2026-01-01T00:00:00Z')",
                [released["id"]],
                "cannot store TEXT value in BLOB column",
            ),
        ):
            with pytest.raises(sqlite3.IntegrityError, match=message):
                db.execute(sql, params)
        # Compare what the migration kept against what it was given, row for row.
        assert db.execute("SELECT count(*) FROM as_built_records").fetchone()[0] == len(
            before["as_built_records"]
        )
        columns = {r[1]: r[2] for r in db.execute("PRAGMA table_info(as_built_records)")}
        assert columns["result"] == "BLOB" and columns["governing"] == "TEXT"
        assert "design_result" not in {r[1] for r in db.execute("PRAGMA table_info(bearings)")}
    finally:
        db.close()


def test_the_pages_of_an_upgraded_database_show_the_results_it_had(older, tmp_path):
    """Through the real app: the calculation on each bearing's page, its review page and
    each record's page is the value stored before the upgrade."""
    path, before = older
    app = create_app(path, TESTING=True, MAIL_SENDER=False)
    client = app.test_client()
    email, _name, password = DEMO_PEOPLE["engineer"]
    page = client.get("/login").get_data(as_text=True)
    token = re.search(r'name="csrf_token" type="hidden" value="([^"]+)"', page).group(1)
    answer = client.post("/login", data={"email": email, "password": password, "csrf_token": token})
    assert answer.status_code == 302
    bearings = {b["id"]: b for b in before["bearings"]}
    for old in before["bearings"]:
        base = f"/sites/{old['site_id']}/bearings/{old['id']}"
        page = client.get(base + ".json").get_json()
        assert page["result"] == json.loads(old["design_result"])
        review = client.get(base + "/review.json").get_json()
        assert review["design_result"] == json.loads(old["design_result"])
    for old in before["as_built_records"]:
        site_id = bearings[old["bearing_id"]]["site_id"]
        page = client.get(f"/sites/{site_id}/records/{old['uuid']}.json").get_json()
        assert page["result"] == json.loads(old["result"])
        assert page["reasons"] == json.loads(old["reasons"])


def test_a_trace_is_packed_with_zstd_and_reads_back_whole_and_older_packs_still_read(db, site):
    from sitecheck import services
    from sitecheck.bearing.recheck import check_bearing
    from sitecheck.store.base import pack_json, unpack_json

    bearing = store.list_bearings(db, site_id=site["id"])[0]
    result = check_bearing(services.design_of(bearing), services.basis_for(site)).as_dict()
    packed = pack_json(result)
    assert packed[:4] == b"\x28\xb5\x2f\xfd"  # a zstd frame (RFC 8878, 3.1.1: its magic number)
    assert unpack_json(packed) == result  # every float, text and flag as the re-check gave it
    assert len(packed) < len(json.dumps(result)) / 3
    # Packs written before zstd are zlib streams of the json module's text.
    older = zlib.compress(json.dumps(result, ensure_ascii=False).encode(), 6)
    assert unpack_json(older) == result
    # JSON has no infinity: a value that is not finite is kept as null, as the core's own
    # results carry an unbounded utilisation.
    assert unpack_json(pack_json({"u": float("inf"), "v": float("nan")})) == {"u": None, "v": None}
