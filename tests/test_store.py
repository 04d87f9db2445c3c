"""The storage layer against real SQLite files: schema, triggers, idempotency, scoping."""

import sqlite3
import threading
import uuid as uuid_module
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta

import pytest
from sqlite_utils import Migrations

from sitecheck import credentials, store, workflow

T0 = datetime(2026, 3, 2, 8, 0, tzinfo=UTC)


# --- helpers ------------------------------------------------------------------------------------


@pytest.fixture
def db(tmp_path):
    db = store.open_db(tmp_path / "site.db")
    yield db
    db.close()


def make_user(db, name):
    return store.create_user(
        db, email=f"{name}@example.test", name=name.title(), password_hash="test-hash-not-real"
    )


def make_bearing(db, site, user, reference, *, utilisation=0.6):
    return store.add_bearing(
        db,
        site_id=site["id"],
        reference=reference,
        location="level 1, grid C-4",
        design_input={"reaction_kN": 40, "bearing_length_mm": 150},
        design_result={"utilisation": utilisation},
        utilisation=utilisation,
        passed=utilisation <= 1,
        user_id=user["id"],
    )


def send_record(
    db,
    site,
    bearing,
    inspector,
    *,
    uuid=None,
    measured_at=T0,
    utilisation=0.7,
    blocking=0,
    measurements=None,
    revision=1,
):
    return store.insert_record(
        db,
        site_id=site["id"],
        uuid=uuid or str(uuid_module.uuid4()),
        bearing_id=bearing["id"],
        design_revision=revision,
        inspector_id=inspector["id"],
        measured_at=measured_at,
        measurements=measurements or {"bearing_length_mm": 140},
        checklist={"mortar bed full": True},
        notes="",
        result={"utilisation": utilisation},
        reasons=[{"code": "short-bearing", "blocking": True}] * blocking,
        utilisation=utilisation,
        passed=utilisation <= 1,
        blocking=blocking,
        state_after_record=workflow.state_after_record,
    )


def count(db, table):
    return db.execute(f"SELECT count(*) FROM {table}").fetchone()[0]


def snapshot(db):
    schema = db.execute(
        "SELECT type, name, tbl_name, sql FROM sqlite_master ORDER BY type, name"
    ).fetchall()
    tables = [row[1] for row in schema if row[0] == "table" and not row[1].startswith("sqlite_")]
    counts = {table: count(db, table) for table in tables}
    applied = db.execute(
        "SELECT migration_set, name, applied_at FROM _sqlite_migrations"
    ).fetchall()
    return schema, counts, applied


@dataclass
class Site:
    db: object
    engineer: dict
    inspector: dict
    contractor: dict
    viewer: dict
    site: dict
    bearing: dict


@pytest.fixture
def world(db):
    engineer = make_user(db, "engineer")
    inspector = make_user(db, "inspector")
    contractor = make_user(db, "contractor")
    viewer = make_user(db, "viewer")
    site = store.create_site(
        db,
        name="Mill Lane",
        address="1 Mill Lane",
        code_basis={"code": "EN 1996-1-1", "gamma_M": 2.5},
        review_settings={"utilisation_review": 0.9},
        created_by=engineer["id"],
    )
    for person, role in ((inspector, "inspector"), (contractor, "contractor"), (viewer, "viewer")):
        store.add_membership(
            db, user_id=person["id"], site_id=site["id"], role=role, invited_by=engineer["id"]
        )
    bearing = make_bearing(db, site, engineer, "B1")
    return Site(db, engineer, inspector, contractor, viewer, site, bearing)


def release(w, bearing=None):
    bearing = store.get_bearing(w.db, site_id=w.site["id"], bearing_id=(bearing or w.bearing)["id"])
    return store.record_release(
        w.db,
        site_id=w.site["id"],
        bearing_id=bearing["id"],
        contractor_id=w.contractor["id"],
        contractor_name="C. Builder",
        statement="Released for closing up.",
        expected_state=bearing["state"],
    )


@pytest.fixture
def released(world):
    """B1 measured, needing a decision, accepted, released."""
    w = world
    rec = send_record(w.db, w.site, w.bearing, w.inspector, utilisation=0.95, blocking=1)
    store.insert_photo(
        w.db,
        site_id=w.site["id"],
        uuid=str(uuid_module.uuid4()),
        record_uuid=rec.row["uuid"],
        sha256="a" * 64,
        thumb_sha256="b" * 64,
        width=1600,
        height=1200,
        size_bytes=250_000,
        captured_at=T0,
        gps_lat=51.5,
        gps_lon=-0.1,
        user_id=w.inspector["id"],
    )
    store.record_decision(
        w.db,
        site_id=w.site["id"],
        bearing_id=w.bearing["id"],
        record_uuid=rec.row["uuid"],
        engineer_id=w.engineer["id"],
        kind="accept",
        reason="Padstone checked by hand; bearing length is adequate.",
        expected_state="engineer to decide",
        new_state=workflow.state_after_decision("accept"),
    )
    release(w)
    return w


# --- connection and migrations ------------------------------------------------------------------


def test_connection_pragmas(db):
    assert db.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    assert db.execute("PRAGMA foreign_keys").fetchone()[0] == 1
    assert db.execute("PRAGMA synchronous").fetchone()[0] == 2  # FULL
    assert db.execute("PRAGMA busy_timeout").fetchone()[0] == 5000


def test_first_open_applies_every_migration_in_order(db):
    assert [m.name for m in store.MIGRATIONS.applied(db)] == [
        "m001_initial_schema",
        "m002_password_to_change",
        "m003_may_make_sites",
        "m004_outgoing_mail",
        "m005_invitations",
        "m006_single_use_links",
        "m007_photo_files",
        "m008_recorded_after_release",
        "m009_record_jobs",
        "m010_could_not_measure",
        "m011_leases",
        "m012_notices",
        "m013_decision_signatures",
        "m014_sign_offs",
        "m015_results_stored_once",
        "m016_record_job_kinds",
        "m017_survey_order",
    ]
    assert store.MIGRATIONS.pending(db) == []


def test_a_database_of_the_first_schema_is_brought_up_to_date_keeping_its_people(tmp_path):
    import sqlite_utils

    path = tmp_path / "older.db"
    older = sqlite_utils.Database(path)
    store.MIGRATIONS.apply(older, stop_before="m002_password_to_change")
    older.execute(
        "INSERT INTO users (email, name, password_hash, created_at) VALUES (?, ?, ?, ?)",
        ["kept@example.test", "Kept", "test-hash-not-real", "2026-01-05T09:00:00Z"],
    )
    older.conn.commit()
    older.close()
    db = store.open_db(path)
    try:
        user = store.get_user_by_email(db, "kept@example.test")
        assert user["name"] == "Kept" and user["must_change_password"] is False
    finally:
        db.close()


def test_accounts_that_made_a_site_before_the_permission_keep_making_sites(tmp_path):
    import sqlite_utils

    path = tmp_path / "older.db"
    older = sqlite_utils.Database(path)
    store.MIGRATIONS.apply(older, stop_before="m003_may_make_sites")
    for n, email in enumerate(("maker@example.test", "other@example.test"), start=1):
        older.execute(
            "INSERT INTO users (id, email, name, password_hash, created_at) VALUES (?, ?, ?, ?, ?)",
            [n, email, email, "test-hash-not-real", "2026-01-05T09:00:00Z"],
        )
    older.execute(
        "INSERT INTO sites (id, name, code_basis, review_settings, created_by, created_at)"
        " VALUES ('s1', 'Old site', '{}', '{}', 1, '2026-01-05T09:00:00Z')"
    )
    older.conn.commit()
    older.close()
    db = store.open_db(path)
    try:
        assert store.get_user_by_email(db, "maker@example.test")["may_make_sites"] is True
        assert store.get_user_by_email(db, "other@example.test")["may_make_sites"] is False
    finally:
        db.close()


def test_migrations_applied_twice_change_nothing(world, tmp_path):
    before = snapshot(world.db)
    assert store.apply_migrations(world.db) == []
    assert snapshot(world.db) == before
    again = store.open_db(tmp_path / "site.db")
    try:
        assert snapshot(again) == before
    finally:
        again.close()


def test_a_failing_migration_leaves_the_database_as_it_was(db):
    trial = Migrations("trial")

    @trial()
    def t1_add_table(db):
        db.execute("CREATE TABLE trial_one (x TEXT)")

    @trial()
    def t2_fails_midway(db):
        db.execute("CREATE TABLE trial_two (x TEXT)")
        raise RuntimeError("disk on fire")

    before = snapshot(db)
    with pytest.raises(RuntimeError, match="disk on fire"):
        store.apply_migrations(db, trial)
    assert snapshot(db) == before
    assert [m.name for m in trial.pending(db)] == ["t1_add_table", "t2_fails_midway"]


def test_processes_opening_a_fresh_file_together_migrate_once(tmp_path):
    path = tmp_path / "fresh.db"
    barrier = threading.Barrier(4)
    errors = []

    def open_and_close():
        barrier.wait()
        try:
            store.open_db(path).close()
        except Exception as error:  # collected and asserted below
            errors.append(error)

    threads = [threading.Thread(target=open_and_close) for _ in range(4)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    assert errors == []
    db = store.open_db(path)
    try:
        # Each migration once, however many processes raced to apply it.
        every = [m.name for m in store.MIGRATIONS.applied(db)]
        assert count(db, "_sqlite_migrations") == len(every) == len(set(every))
        assert store.MIGRATIONS.pending(db) == [] and every[0] == "m001_initial_schema"
    finally:
        db.close()


# --- append-only tables and the release lock ----------------------------------------------------


def test_events_cannot_be_updated_or_deleted(world):
    db = world.db
    assert count(db, "events") > 0
    with pytest.raises(sqlite3.IntegrityError, match="events are append-only"):
        db.execute("UPDATE events SET kind = 'nothing happened'")
    with pytest.raises(sqlite3.IntegrityError, match="events are append-only"):
        db.execute("DELETE FROM events")


@pytest.mark.parametrize(
    ("table", "column"),
    [
        ("as_built_records", "notes"),
        ("photos", "sha256"),
        ("decisions", "reason"),
        ("releases", "statement"),
        ("bearing_revisions", "location"),
    ],
)
def test_field_history_is_append_only(released, table, column):
    db = released.db
    rows = count(db, table)
    assert rows > 0
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        db.execute(f"UPDATE {table} SET {column} = 'x'")
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        db.execute(f"DELETE FROM {table}")
    assert count(db, table) == rows


def test_reopenings_are_append_only(released):
    w = released
    store.record_reopening(
        w.db,
        site_id=w.site["id"],
        bearing_id=w.bearing["id"],
        engineer_id=w.engineer["id"],
        reason="Wrong padstone size on the drawing.",
        new_state="engineer to decide",
    )
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        w.db.execute("UPDATE reopenings SET reason = 'x'")
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        w.db.execute("DELETE FROM reopenings")


@pytest.mark.parametrize(
    "sql",
    [
        "UPDATE bearings SET state = 'within design' WHERE id = :id",
        "UPDATE bearings SET state = 'engineer to decide' WHERE id = :id",
        "UPDATE bearings SET location = 'somewhere else' WHERE id = :id",
        "UPDATE bearings SET design_input = '{}' WHERE id = :id",
        "UPDATE bearings SET revision = revision + 1 WHERE id = :id",
        "UPDATE bearings SET latest_record_uuid = NULL WHERE id = :id",
        "UPDATE bearings SET state_changed_at = '2000-01-01T00:00:00.000000Z' WHERE id = :id",
        "DELETE FROM bearings WHERE id = :id",
    ],
)
def test_a_released_bearing_cannot_be_changed_by_direct_sql(released, sql):
    db = released.db
    before = db.execute("SELECT * FROM bearings WHERE id = ?", [released.bearing["id"]]).fetchone()
    with pytest.raises(sqlite3.IntegrityError, match="bearing is released and locked"):
        db.execute(sql, {"id": released.bearing["id"]})
    after = db.execute("SELECT * FROM bearings WHERE id = ?", [released.bearing["id"]]).fetchone()
    assert after == before


def test_a_reopening_row_unlocks_only_the_state(released):
    db, bearing_id = released.db, released.bearing["id"]
    db.execute(
        "INSERT INTO reopenings (bearing_id, engineer_id, reason, created_at) VALUES (?, ?, ?, ?)",
        [bearing_id, released.engineer["id"], "test", "2999-01-01T00:00:00.000000Z"],
    )
    with pytest.raises(sqlite3.IntegrityError, match="released and locked"):
        db.execute(
            "UPDATE bearings SET state = 'engineer to decide', location = 'moved' WHERE id = ?",
            [bearing_id],
        )


def test_a_reopening_older_than_the_release_does_not_unlock(released):
    w = released
    store.record_reopening(
        w.db,
        site_id=w.site["id"],
        bearing_id=w.bearing["id"],
        engineer_id=w.engineer["id"],
        reason="Check the spreader again.",
        new_state="engineer to decide",
    )
    store.record_decision(
        w.db,
        site_id=w.site["id"],
        bearing_id=w.bearing["id"],
        record_uuid=store.get_bearing(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"])[
            "latest_record_uuid"
        ],
        engineer_id=w.engineer["id"],
        kind="accept",
        reason="Spreader confirmed.",
        expected_state="engineer to decide",
        new_state="accepted",
    )
    release(w)
    with pytest.raises(sqlite3.IntegrityError, match="released and locked"):
        w.db.execute(
            "UPDATE bearings SET state = 'engineer to decide' WHERE id = ?", [w.bearing["id"]]
        )


def test_reopening_through_the_store_keeps_release_and_reason(released):
    w = released
    reopening = store.record_reopening(
        w.db,
        site_id=w.site["id"],
        bearing_id=w.bearing["id"],
        engineer_id=w.engineer["id"],
        reason="Wall found to be a different block.",
        new_state=workflow.reopen(
            state="released", role="engineer", reason="Wall found to be a different block."
        ),
    )
    bearing = store.get_bearing(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"])
    assert bearing["state"] == "engineer to decide"
    assert reopening["reason"] == "Wall found to be a different block."
    assert len(store.releases_for(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"])) == 1
    kinds = [e["kind"] for e in store.events_for(w.db, site_id=w.site["id"])]
    assert kinds[:2] == ["reopening", "release"]


def test_reopening_a_bearing_that_is_not_released_is_stale(world):
    with pytest.raises(store.StaleState):
        store.record_reopening(
            world.db,
            site_id=world.site["id"],
            bearing_id=world.bearing["id"],
            engineer_id=world.engineer["id"],
            reason="No reason",
            new_state="engineer to decide",
        )


def test_only_a_release_row_can_make_a_bearing_released(world):
    w = world
    send_record(w.db, w.site, w.bearing, w.inspector)
    with pytest.raises(sqlite3.IntegrityError, match="only a release"):
        w.db.execute("UPDATE bearings SET state = 'released' WHERE id = ?", [w.bearing["id"]])
    with pytest.raises(ValueError, match="record_release"):
        store.set_state(
            w.db,
            site_id=w.site["id"],
            bearing_id=w.bearing["id"],
            expected_state="within design",
            new_state="released",
            user_id=w.engineer["id"],
        )


def test_the_database_refuses_a_release_the_workflow_would_refuse(world):
    """A caller that forgot workflow.can_release still cannot release."""
    w = world
    send_record(w.db, w.site, w.bearing, w.inspector, utilisation=1.2, blocking=1)
    assert not workflow.can_release("engineer to decide")
    with pytest.raises(sqlite3.IntegrityError, match="only a release"):
        release(w)
    assert store.releases_for(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"]) == []


def test_release_refused_when_the_state_moved_since_it_was_read(world):
    w = world
    send_record(w.db, w.site, w.bearing, w.inspector)
    send_record(
        w.db,
        w.site,
        w.bearing,
        w.inspector,
        measured_at=T0 + timedelta(hours=1),
        utilisation=1.1,
        blocking=1,
    )
    with pytest.raises(store.StaleState, match="engineer to decide"):
        store.record_release(
            w.db,
            site_id=w.site["id"],
            bearing_id=w.bearing["id"],
            contractor_id=w.contractor["id"],
            contractor_name="C. Builder",
            statement="Released.",
            expected_state="within design",
        )


# --- as-built records ---------------------------------------------------------------------------


def test_sending_a_record_twice_stores_it_once_and_returns_the_original(world):
    w = world
    uuid = str(uuid_module.uuid4())
    first = send_record(w.db, w.site, w.bearing, w.inspector, uuid=uuid)
    events = count(w.db, "events")
    second = send_record(
        w.db,
        w.site,
        w.bearing,
        w.inspector,
        uuid=uuid.upper(),
        # The server's own answer may differ (a later re-check); what was sent is the same.
        utilisation=1.5,
        blocking=2,
    )
    assert first.created is True
    assert second.created is False
    assert second.row == first.row
    assert second.row["measurements"] == {"bearing_length_mm": 140}
    assert second.state == "within design"
    assert count(w.db, "as_built_records") == 1
    assert count(w.db, "events") == events


def test_the_same_record_id_with_other_values_is_refused_naming_what_differs(world):
    w = world
    uuid = str(uuid_module.uuid4())
    first = send_record(w.db, w.site, w.bearing, w.inspector, uuid=uuid)
    events = count(w.db, "events")
    with pytest.raises(store.SameIdOtherValues) as refused:
        send_record(
            w.db, w.site, w.bearing, w.inspector, uuid=uuid, measurements={"bearing_length_mm": 99}
        )
    assert refused.value.differs == ("measurements",)
    assert "already stored with other values (measurements)" in str(refused.value)
    assert isinstance(refused.value, store.UuidInUse)  # callers that know only the older error
    assert store.record_line(w.db, site_id=w.site["id"], uuid=uuid) == first.row
    assert count(w.db, "as_built_records") == 1
    assert count(w.db, "events") == events


def test_a_record_of_a_bearing_that_could_not_be_measured_is_its_own_kind(world):
    w = world
    measured = send_record(w.db, w.site, w.bearing, w.inspector)
    assert (measured.row["kind"], measured.row["why_not_measured"]) == ("measured", None)
    unmeasured = store.insert_record(
        w.db,
        site_id=w.site["id"],
        uuid=str(uuid_module.uuid4()),
        bearing_id=w.bearing["id"],
        design_revision=1,
        inspector_id=w.inspector["id"],
        measured_at=T0 + timedelta(hours=1),
        measurements={},
        checklist={},
        notes="Behind the new stud wall.",
        result={"utilisation": 0.5},
        reasons=[{"code": "could-not-measure"}],
        utilisation=0.5,
        passed=True,
        blocking=1,
        state_after_record=workflow.state_after_record,
        why_not_measured="covered",
    )
    assert (unmeasured.row["kind"], unmeasured.row["why_not_measured"]) == (
        "could not measure",
        "covered",
    )
    assert unmeasured.state == "engineer to decide"
    # Only the core's codes: anything else is refused by the database itself.
    with pytest.raises(sqlite3.IntegrityError, match="CHECK"):
        w.db.execute(
            "INSERT INTO as_built_records (uuid, bearing_id, design_revision, inspector_id, "
            "measured_at, received_at, measurements, result, passed, blocking, why_not_measured) "
            "VALUES (?, ?, 1, ?, ?, ?, '{}', X'789C', 1, 1, 'too dark')",
            [
                str(uuid_module.uuid4()),
                w.bearing["id"],
                w.inspector["id"],
                "2026-01-01T00:00:00Z",
                "2026-01-01T00:00:00Z",
            ],
        )


def test_a_uuid_already_used_for_another_bearing_is_refused(world):
    w = world
    other = make_bearing(w.db, w.site, w.engineer, "B2")
    uuid = str(uuid_module.uuid4())
    send_record(w.db, w.site, w.bearing, w.inspector, uuid=uuid)
    with pytest.raises(store.UuidInUse):
        send_record(w.db, w.site, other, w.inspector, uuid=uuid)
    assert count(w.db, "as_built_records") == 1


def test_a_record_for_another_sites_bearing_is_not_found(world):
    w = world
    other_site = store.create_site(
        w.db,
        name="Elsewhere",
        address="",
        code_basis={},
        review_settings={},
        created_by=w.engineer["id"],
    )
    with pytest.raises(store.NotFound):
        send_record(w.db, other_site, w.bearing, w.inspector)


def test_two_connections_sending_the_same_uuid_together_store_one_row(world, tmp_path):
    w = world
    uuid = str(uuid_module.uuid4())
    barrier = threading.Barrier(4)
    results, errors = [], []

    def send():
        db = store.open_db(tmp_path / "site.db")
        try:
            barrier.wait()
            results.append(send_record(db, w.site, w.bearing, w.inspector, uuid=uuid))
        except Exception as error:  # collected and asserted below
            errors.append(error)
        finally:
            db.close()

    threads = [threading.Thread(target=send) for _ in range(4)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    assert errors == []
    assert sorted(r.created for r in results) == [False, False, False, True]
    assert len({tuple(sorted(map(str, r.row.items()))) for r in results}) == 1
    assert count(w.db, "as_built_records") == 1


def test_the_newest_record_by_measured_time_drives_the_state(world):
    w = world
    a = send_record(
        w.db,
        w.site,
        w.bearing,
        w.inspector,
        measured_at=T0 + timedelta(hours=2),
        utilisation=1.1,
        blocking=1,
    )
    assert a.state == "engineer to decide"
    # Measured earlier by a second inspector who was offline longer: kept, does not drive.
    b = send_record(w.db, w.site, w.bearing, w.inspector, measured_at=T0, utilisation=0.5)
    assert b.created and b.state == "engineer to decide"
    bearing = store.get_bearing(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"])
    assert bearing["latest_record_uuid"] == a.row["uuid"]
    c = send_record(w.db, w.site, w.bearing, w.inspector, measured_at=T0 + timedelta(hours=3))
    assert c.state == "within design"
    records = store.records_for_bearing(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"])
    assert [r["uuid"] for r in records] == [c.row["uuid"], a.row["uuid"], b.row["uuid"]]


def test_a_record_after_release_is_kept_late_and_the_bearing_stays_released(released):
    w = released
    before = store.get_bearing(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"])
    late = send_record(w.db, w.site, w.bearing, w.inspector, measured_at=T0 + timedelta(days=1))
    after = store.get_bearing(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"])
    assert late.created and late.row["late"] is True
    assert late.state == "released"
    assert after == before
    # Reopening makes the late record the one the engineer decides on.
    store.record_reopening(
        w.db,
        site_id=w.site["id"],
        bearing_id=w.bearing["id"],
        engineer_id=w.engineer["id"],
        reason="A later measurement arrived.",
        new_state="engineer to decide",
    )
    reopened = store.get_bearing(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"])
    assert reopened["latest_record_uuid"] == late.row["uuid"]


def test_a_failed_recheck_without_a_blocking_reason_is_refused(world):
    w = world
    with pytest.raises(sqlite3.IntegrityError, match="CHECK"):
        send_record(w.db, w.site, w.bearing, w.inspector, utilisation=1.3, blocking=0)
    assert count(w.db, "as_built_records") == 0
    assert store.get_bearing(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"])["state"] == (
        "awaiting survey"
    )


def test_records_keep_their_json_and_times_in_utc(world):
    w = world
    rec = send_record(w.db, w.site, w.bearing, w.inspector, measured_at="2026-06-01T10:15:00+01:00")
    assert rec.row["measured_at"] == "2026-06-01T09:15:00.000000Z"
    assert rec.row["received_at"].endswith("Z")
    assert rec.row["checklist"] == {"mortar bed full": True}
    assert rec.row["passed"] is True
    with pytest.raises(ValueError, match="time zone"):
        send_record(w.db, w.site, w.bearing, w.inspector, measured_at="2026-06-01T10:15:00")
    with pytest.raises(ValueError, match="not a UUID"):
        send_record(w.db, w.site, w.bearing, w.inspector, uuid="record-1")


def test_revising_a_bearing_keeps_history_and_flags_older_records(world):
    w = world
    rec = send_record(w.db, w.site, w.bearing, w.inspector)
    revised = store.revise_bearing(
        w.db,
        site_id=w.site["id"],
        bearing_id=w.bearing["id"],
        expected_revision=1,
        expected_state="within design",
        new_state=workflow.state_after_revision("within design", has_records=True),
        design_input={"reaction_kN": 55, "bearing_length_mm": 150},
        design_result={"utilisation": 0.8},
        utilisation=0.8,
        passed=True,
        user_id=w.engineer["id"],
    )
    assert revised["revision"] == 2 and revised["state"] == "engineer to decide"
    history = store.bearing_revisions(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"])
    assert [h["design_input"]["reaction_kN"] for h in history] == [40, 55]
    old = store.get_record(w.db, site_id=w.site["id"], uuid=rec.row["uuid"])
    assert old["older_revision"] is True
    with pytest.raises(store.StaleState, match="revision 2"):
        store.revise_bearing(
            w.db,
            site_id=w.site["id"],
            bearing_id=w.bearing["id"],
            expected_revision=1,
            expected_state="engineer to decide",
            new_state="engineer to decide",
            design_input={},
            design_result={},
            utilisation=0.1,
            passed=True,
            user_id=w.engineer["id"],
        )
    with pytest.raises(ValueError, match="design_revision 3"):
        send_record(w.db, w.site, w.bearing, w.inspector, revision=3)


# --- photos, decisions --------------------------------------------------------------------------


def test_photos_are_idempotent_and_scoped(world):
    w = world
    rec = send_record(w.db, w.site, w.bearing, w.inspector)
    photo = {
        "uuid": str(uuid_module.uuid4()),
        "record_uuid": rec.row["uuid"],
        "sha256": "c" * 64,
        "thumb_sha256": None,
        "width": 800,
        "height": 600,
        "size_bytes": 90_000,
        "captured_at": None,
        "gps_lat": None,
        "gps_lon": None,
        "user_id": w.inspector["id"],
    }
    first = store.insert_photo(w.db, site_id=w.site["id"], **photo)
    second = store.insert_photo(w.db, site_id=w.site["id"], **photo)
    assert first.created and not second.created
    assert second.row == first.row
    # Another picture under the same id is not a resend.
    with pytest.raises(store.SameIdOtherValues):
        store.insert_photo(w.db, site_id=w.site["id"], **{**photo, "sha256": "d" * 64})
    other = store.create_site(
        w.db,
        name="Other",
        address="",
        code_basis={},
        review_settings={},
        created_by=w.engineer["id"],
    )
    with pytest.raises(store.NotFound):
        store.insert_photo(w.db, site_id=other["id"], **{**photo, "uuid": str(uuid_module.uuid4())})
    assert store.get_photo(w.db, site_id=other["id"], uuid=photo["uuid"]) is None
    assert store.get_photo(w.db, site_id=w.site["id"], uuid=photo["uuid"])["sha256"] == "c" * 64


def test_a_decision_on_an_outdated_record_is_refused(world):
    w = world
    old = send_record(w.db, w.site, w.bearing, w.inspector, utilisation=1.1, blocking=1)
    send_record(
        w.db,
        w.site,
        w.bearing,
        w.inspector,
        measured_at=T0 + timedelta(hours=1),
        utilisation=1.05,
        blocking=1,
    )
    decide = dict(
        site_id=w.site["id"],
        bearing_id=w.bearing["id"],
        engineer_id=w.engineer["id"],
        kind="measure-again",
        reason="Photo does not show the padstone edge.",
        expected_state="engineer to decide",
        new_state=workflow.state_after_decision("measure-again"),
    )
    with pytest.raises(store.StaleState, match="newer as-built record"):
        store.record_decision(w.db, record_uuid=old.row["uuid"], **decide)
    latest = store.get_bearing(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"])
    store.record_decision(w.db, record_uuid=latest["latest_record_uuid"], **decide)
    after = store.get_bearing(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"])
    assert after["state"] == "awaiting survey"
    with pytest.raises(ValueError, match="reason"):
        store.record_decision(
            w.db, record_uuid=latest["latest_record_uuid"], **{**decide, "reason": "   "}
        )


# --- users, sessions, throttling ----------------------------------------------------------------


def test_users_are_found_by_lower_case_email_and_never_show_the_hash(db):
    user = store.create_user(db, email="  Ann.Smith@Example.TEST ", name="Ann", password_hash="h")
    assert user["email"] == "ann.smith@example.test"
    assert "password_hash" not in user
    assert store.get_user_by_email(db, "ANN.SMITH@example.test")["id"] == user["id"]
    assert store.login_credentials(db, "ann.smith@example.test")["password_hash"] == "h"
    with pytest.raises(store.DuplicateEmail):
        store.create_user(db, email="ann.smith@example.test", name="Ann 2", password_hash="h")


def test_sessions_end_on_revoke_disable_idle_and_age(db):
    user = make_user(db, "inspector")

    def start(now=T0):
        token = credentials.new_session_token()
        store.create_session(db, session_id=token.session_id, user_id=user["id"], now=now)
        return token.session_id

    live = start()
    assert store.get_session_user(db, live, now=T0 + timedelta(hours=1))["id"] == user["id"]
    assert store.get_session_user(db, "not-a-session") is None

    revoked = start()
    assert store.revoke_session(db, revoked)
    assert store.get_session_user(db, revoked, now=T0) is None

    assert store.get_session_user(db, live, now=T0 + timedelta(hours=12, seconds=1)) is None
    # Kept in use every 11 hours it lives on, but never past the absolute limit of 7 days.
    moment = T0
    while moment < T0 + timedelta(days=6, hours=20):
        moment += timedelta(hours=11)
        assert store.get_session_user(db, live, now=moment) is not None
        assert store.touch_session(db, live, now=moment)
    assert store.get_session_user(db, live, now=T0 + timedelta(days=7, seconds=1)) is None

    fresh = start(now=datetime.now(UTC))
    assert store.get_session_user(db, fresh) is not None
    store.set_disabled(db, user_id=user["id"], disabled=True, by_user_id=None)
    assert store.get_session_user(db, fresh) is None
    store.set_disabled(db, user_id=user["id"], disabled=False, by_user_id=None)
    assert store.get_session_user(db, fresh) is None, "disabling revoked the session for good"


def test_touch_writes_at_most_once_a_minute(db):
    user = make_user(db, "inspector")
    token = credentials.new_session_token()
    store.create_session(db, session_id=token.session_id, user_id=user["id"], now=T0)
    assert not store.touch_session(db, token.session_id, now=T0 + timedelta(seconds=30))
    assert store.touch_session(db, token.session_id, now=T0 + timedelta(seconds=61))


def test_a_raw_token_is_never_stored_as_a_session_id(db):
    user = make_user(db, "inspector")
    with pytest.raises(ValueError, match="sha256"):
        store.create_session(
            db, session_id=credentials.new_session_token().token, user_id=user["id"]
        )


def test_failed_log_ins_are_counted_per_account_at_an_address_and_per_address(db):
    def fail(email="ann@example.test", addr="10.0.0.1", at=T0):
        store.record_login_attempt(db, email=email, remote_addr=addr, ok=False, now=at)

    def failures(email="ann@example.test", addr="10.0.0.1"):
        pair, address = store.failed_log_ins(
            db, email=email, remote_addr=addr, window_s=900, now=T0 + timedelta(minutes=1)
        )
        return pair.count, address.count

    fail(at=T0 - timedelta(minutes=20))  # outside the window
    fail(at=T0 - timedelta(minutes=2))  # before the success below: forgiven for the pair
    store.record_login_attempt(
        db, email="ann@example.test", remote_addr="10.0.0.1", ok=True, now=T0 - timedelta(minutes=1)
    )
    for _ in range(4):
        fail()
    assert failures() == (4, 5)
    pair, _address = store.failed_log_ins(
        db, email="ann@example.test", remote_addr="10.0.0.1", window_s=900, now=T0
    )
    assert pair.last_at == store.timestamp(T0)
    # The same account from elsewhere counts there, not here.
    fail(addr="10.9.9.9")
    assert failures() == (4, 5)
    assert failures(addr="10.9.9.9") == (1, 1)
    # Many accounts tried from one address count against that address.
    for n in range(5):
        fail(email=f"person{n}@example.test", addr="10.0.0.66")
    assert failures(email="new@example.test", addr="10.0.0.66") == (0, 5)
    assert failures(email="new@example.test", addr="10.0.0.2") == (0, 0)
    assert store.prune_login_attempts(db, older_than_s=900, now=T0 + timedelta(minutes=1)) == 1


# --- sites, memberships, scoping ----------------------------------------------------------------


def test_memberships_and_roles(world):
    w = world
    assert store.role_of(w.db, user_id=w.engineer["id"], site_id=w.site["id"]) == "engineer"
    assert store.role_of(w.db, user_id=w.viewer["id"], site_id=w.site["id"]) == "viewer"
    with pytest.raises(store.AlreadyMember):
        store.add_membership(
            w.db,
            user_id=w.viewer["id"],
            site_id=w.site["id"],
            role="viewer",
            invited_by=w.engineer["id"],
        )
    with pytest.raises(ValueError, match="role"):
        store.set_role(
            w.db,
            user_id=w.viewer["id"],
            site_id=w.site["id"],
            role="admin",
            by_user_id=w.engineer["id"],
        )
    assert [s["role"] for s in store.sites_for_user(w.db, w.inspector["id"])] == ["inspector"]
    assert store.remove_membership(
        w.db, user_id=w.viewer["id"], site_id=w.site["id"], by_user_id=w.engineer["id"]
    )
    assert store.role_of(w.db, user_id=w.viewer["id"], site_id=w.site["id"]) is None


def test_the_last_engineer_is_kept_by_the_store(world):
    w = world
    for change in (
        lambda: store.set_role(
            w.db,
            user_id=w.engineer["id"],
            site_id=w.site["id"],
            role="viewer",
            by_user_id=w.engineer["id"],
        ),
        lambda: store.remove_membership(
            w.db, user_id=w.engineer["id"], site_id=w.site["id"], by_user_id=w.engineer["id"]
        ),
    ):
        with pytest.raises(store.LastEngineer, match="only engineer"):
            change()
        assert store.role_of(w.db, user_id=w.engineer["id"], site_id=w.site["id"]) == "engineer"


def test_two_engineers_stepping_down_at_once_leave_one(world, tmp_path):
    """Each sees a second engineer if both read before either writes; the check inside the
    write transaction makes the later one see the truth."""
    w = world
    store.set_role(
        w.db,
        user_id=w.viewer["id"],
        site_id=w.site["id"],
        role="engineer",
        by_user_id=w.engineer["id"],
    )
    path = w.db.conn.execute("PRAGMA database_list").fetchone()[2]
    start = threading.Barrier(2)
    outcomes: dict[str, str] = {}

    def step_down(name: str, user_id: int) -> None:
        db = store.open_db(path)
        try:
            start.wait()
            store.set_role(
                db, user_id=user_id, site_id=w.site["id"], role="inspector", by_user_id=user_id
            )
            outcomes[name] = "stepped down"
        except store.LastEngineer:
            outcomes[name] = "refused"
        finally:
            db.close()

    threads = [
        threading.Thread(target=step_down, args=("first", w.engineer["id"])),
        threading.Thread(target=step_down, args=("second", w.viewer["id"])),
    ]
    for t in threads:
        t.start()
    for t in threads:
        t.join(10)
    assert sorted(outcomes.values()) == ["refused", "stepped down"]
    roles = [m["role"] for m in store.members_of(w.db, site_id=w.site["id"])]
    assert roles.count("engineer") == 1


def test_site_settings_change_with_an_event(world):
    w = world
    site = store.update_site_settings(
        w.db,
        site_id=w.site["id"],
        user_id=w.engineer["id"],
        review_settings={"utilisation_review": 0.85},
    )
    assert site["review_settings"] == {"utilisation_review": 0.85}
    assert site["code_basis"] == w.site["code_basis"]
    event = store.events_for(w.db, site_id=w.site["id"])[0]
    assert event["kind"] == "site settings changed"
    assert event["detail"]["before"] == {"review_settings": {"utilisation_review": 0.9}}


def test_references_are_unique_per_site_ignoring_case(world):
    w = world
    with pytest.raises(store.DuplicateReference, match="'b1'"):
        make_bearing(w.db, w.site, w.engineer, "b1")
    found = store.bearing_by_reference(w.db, site_id=w.site["id"], reference=" b1 ")
    assert found["id"] == w.bearing["id"]
    other = store.create_site(
        w.db,
        name="Other",
        address="",
        code_basis={},
        review_settings={},
        created_by=w.engineer["id"],
    )
    assert make_bearing(w.db, other, w.engineer, "B1")["reference"] == "B1"


def test_reads_are_scoped_to_the_site(world):
    w = world
    send_record(w.db, w.site, w.bearing, w.inspector)
    other = store.create_site(
        w.db,
        name="Other",
        address="",
        code_basis={},
        review_settings={},
        created_by=w.engineer["id"],
    )
    sid, bid = other["id"], w.bearing["id"]
    assert store.get_bearing(w.db, site_id=sid, bearing_id=bid) is None
    assert store.records_for_bearing(w.db, site_id=sid, bearing_id=bid) == []
    assert store.records_for_site(w.db, site_id=sid) == []
    assert store.decisions_for(w.db, site_id=sid, bearing_id=bid) == []
    assert store.bearing_revisions(w.db, site_id=sid, bearing_id=bid) == []
    assert store.events_for(w.db, site_id=sid, bearing_id=bid) == []
    assert all(e["site_id"] == sid for e in store.events_for(w.db, site_id=sid))
    assert store.list_bearings(w.db, site_id=sid) == []


def test_review_queue_shows_only_the_engineers_own_sites_most_serious_first(world):
    w = world
    db = w.db
    a1, a2, a3 = (
        w.bearing,
        make_bearing(db, w.site, w.engineer, "B2"),
        make_bearing(db, w.site, w.engineer, "B3"),
    )
    send_record(db, w.site, a2, w.inspector, utilisation=0.92, blocking=2)
    send_record(db, w.site, a1, w.inspector, utilisation=1.2, blocking=1)
    send_record(db, w.site, a3, w.inspector, utilisation=0.5)  # within design: not in queue

    other_engineer = make_user(db, "other")
    site_b = store.create_site(
        db,
        name="Site B",
        address="",
        code_basis={},
        review_settings={},
        created_by=other_engineer["id"],
    )
    b1 = make_bearing(db, site_b, other_engineer, "B1")
    store.add_membership(
        db,
        user_id=w.inspector["id"],
        site_id=site_b["id"],
        role="inspector",
        invited_by=other_engineer["id"],
    )
    send_record(db, site_b, b1, w.inspector, utilisation=1.5, blocking=3)
    # Being a viewer on site B does not put B's bearings in the queue.
    store.add_membership(
        db,
        user_id=w.engineer["id"],
        site_id=site_b["id"],
        role="viewer",
        invited_by=other_engineer["id"],
    )

    queue = store.review_queue(db, user_id=w.engineer["id"])
    assert [(q["site_name"], q["reference"]) for q in queue] == [
        ("Mill Lane", "B1"),
        ("Mill Lane", "B2"),
    ]
    assert queue[0]["utilisation"] == 1.2 and queue[0]["reasons"][0]["code"] == "short-bearing"
    assert [q["id"] for q in store.review_queue(db, user_id=other_engineer["id"])] == [b1["id"]]
    assert store.review_queue(db, user_id=w.inspector["id"]) == []


def test_releasable_follows_the_workflow(world):
    assert store.STATES == workflow.STATES
    assert store.ROLES == workflow.ROLES
    assert store.DECISION_KINDS == workflow.DECISION_KINDS
    assert set(store.RELEASABLE_STATES) == {s for s in workflow.STATES if workflow.can_release(s)}
    w = world
    b2 = make_bearing(w.db, w.site, w.engineer, "B2")
    send_record(w.db, w.site, w.bearing, w.inspector)
    send_record(w.db, w.site, b2, w.inspector, utilisation=1.1, blocking=1)
    assert [b["reference"] for b in store.releasable(w.db, site_id=w.site["id"])] == ["B1"]


def test_every_state_change_writes_an_event_with_before_and_after(released):
    w = released
    events = store.events_for(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"])
    moves = [
        (e["detail"]["before"]["state"], e["detail"]["after"]["state"])
        for e in reversed(events)
        if "before" in e["detail"]
        and e["detail"]["before"]["state"] != e["detail"]["after"]["state"]
    ]
    assert moves == [
        ("awaiting survey", "engineer to decide"),
        ("engineer to decide", "accepted"),
        ("accepted", "released"),
    ]


def test_a_migration_that_cannot_run_in_a_transaction_is_refused_with_the_fix(db):
    trial = Migrations("trial")

    @trial(transactional=False)
    def vacuum(db):
        db.execute("VACUUM")

    with pytest.raises(ValueError, match="outside a transaction"):
        store.apply_migrations(db, trial)
    assert [m.name for m in trial.pending(db)] == ["vacuum"]


def test_latest_record_summaries_hold_the_record_that_sets_each_state(world):
    w = world
    second = make_bearing(w.db, w.site, w.engineer, "B2")
    later = send_record(w.db, w.site, w.bearing, w.inspector, measured_at=T0, utilisation=0.8)
    # Sent afterwards but measured earlier: kept, and not the one that sets the state.
    send_record(
        w.db, w.site, w.bearing, w.inspector, measured_at="2026-01-01T08:00:00Z", utilisation=0.5
    )
    summaries = store.latest_record_summaries(w.db, site_id=w.site["id"])
    assert set(summaries) == {w.bearing["id"]}  # B2 has no record yet
    latest = summaries[w.bearing["id"]]
    assert latest["uuid"] == later.row["uuid"] and latest["utilisation"] == 0.8
    assert latest["passed"] is True and latest["older_revision"] is False
    assert "result" not in latest and "reasons" not in latest  # the heavy columns stay out
    assert second["id"] not in summaries


def test_a_lease_is_one_holders_until_it_runs_out_or_is_given_up(db):
    from datetime import timedelta

    now = store.utc_now()
    assert store.take_lease(db, name="mail sender", holder="a", lease_s=60, now=now)
    assert not store.take_lease(db, name="mail sender", holder="b", lease_s=60, now=now)
    later = now + timedelta(seconds=30)
    assert store.take_lease(db, name="mail sender", holder="a", lease_s=60, now=later)  # renewed
    held = store.lease_holder(db, name="mail sender", now=later)
    assert held["holder"] == "a" and held["taken_at"] == store.timestamp(now)
    # a's renewal holds it to later + 60 s; after that, b may take it.
    assert not store.take_lease(
        db, name="mail sender", holder="b", lease_s=60, now=now + timedelta(seconds=89)
    )
    assert store.take_lease(
        db, name="mail sender", holder="b", lease_s=60, now=now + timedelta(seconds=91)
    )
    store.release_lease(db, name="mail sender", holder="a")  # not a's any more: nothing
    assert (
        store.lease_holder(db, name="mail sender", now=now + timedelta(seconds=92))["holder"] == "b"
    )
    store.release_lease(db, name="mail sender", holder="b")
    assert store.lease_holder(db, name="mail sender") is None
    assert store.take_lease(db, name="mail sender", holder="c", lease_s=60)
