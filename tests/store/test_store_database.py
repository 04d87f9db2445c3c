"""The database file and the processes that share it, against real SQLite files: the
connection's pragmas, the migrations (in order, once, all or nothing), leases."""

from __future__ import annotations

import threading
from datetime import timedelta

import pytest
from sqlite_utils import Migrations

from kit.store_rows import count, snapshot
from sitecheck import store


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


def test_a_migration_that_cannot_run_in_a_transaction_is_refused_with_the_fix(db):
    trial = Migrations("trial")

    @trial(transactional=False)
    def vacuum(db):
        db.execute("VACUUM")

    with pytest.raises(ValueError, match="outside a transaction"):
        store.apply_migrations(db, trial)
    assert [m.name for m in trial.pending(db)] == ["vacuum"]


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


def test_a_lease_is_one_holders_until_it_runs_out_or_is_given_up(db):

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
