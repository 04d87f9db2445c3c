"""What the database itself refuses, whoever calls it and however: the field history and
the events are append-only, a released bearing is locked until a later reopening, and only
a release row makes a bearing released."""

from __future__ import annotations

import sqlite3

import pytest

from kit.store_rows import count
from sitecheck import store, workflow


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
    w.reopen("Wrong padstone size on the drawing.")
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
    w.reopen("Check the spreader again.")
    w.decide(w.bearing_now()["latest_record_uuid"], "Spreader confirmed.", new_state="accepted")
    w.release()
    with pytest.raises(sqlite3.IntegrityError, match="released and locked"):
        w.db.execute(
            "UPDATE bearings SET state = 'engineer to decide' WHERE id = ?", [w.bearing["id"]]
        )


def test_only_a_release_row_can_make_a_bearing_released(world):
    w = world
    w.send()
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
    w.send(utilisation=1.2, blocking=1)
    assert not workflow.can_release("engineer to decide")
    with pytest.raises(sqlite3.IntegrityError, match="only a release"):
        w.release()
    assert store.releases_for(w.db, site_id=w.site["id"], bearing_id=w.bearing["id"]) == []
