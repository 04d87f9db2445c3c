"""The engineer's sign-off of a site record, and what it covers."""

from __future__ import annotations

from datetime import datetime
from typing import Any

import sqlite_utils

from sitecheck.store.base import (
    Row,
    many,
    one,
    required_text,
    the_row,
    timestamp,
    to_json,
    transaction,
    utc_now,
)
from sitecheck.store.events import add_event


def site_extent(db: sqlite_utils.Database, *, site_id: str) -> dict[str, Any]:
    """What a site record holds right now: its bearings by state, its as-built records and
    photos, and its newest history entry (id and time). A sign-off keeps this as what it
    covers."""
    states = {
        row["state"]: row["n"]
        for row in many(
            db,
            "SELECT state, count(*) AS n FROM bearings WHERE site_id = ? GROUP BY state",
            [site_id],
        )
    }
    counts = the_row(
        db,
        """
        SELECT (SELECT count(*) FROM as_built_records r JOIN bearings b ON b.id = r.bearing_id
                WHERE b.site_id = ?) AS records,
               (SELECT count(*) FROM photos p JOIN as_built_records r ON r.uuid = p.record_uuid
                JOIN bearings b ON b.id = r.bearing_id WHERE b.site_id = ?) AS photos,
               (SELECT max(id) FROM events WHERE site_id = ?) AS last_event_id
        """,
        [site_id, site_id, site_id],
    )
    last = counts["last_event_id"]
    at = one(db, "SELECT at FROM events WHERE id = ?", [last]) if last else None
    return {
        "bearings": sum(states.values()),
        "states": states,
        "records": counts["records"],
        "photos": counts["photos"],
        "last_event_id": last,
        "last_event_at": at["at"] if at else None,
    }


def add_sign_off(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    engineer_id: int,
    engineer_name: str,
    statement: str,
    now: datetime | None = None,
) -> Row:
    """Keep the engineer's sign-off, covering the site record exactly as it is at this
    moment (read inside the same transaction, so nothing slips in between)."""
    engineer_name = required_text(engineer_name, "The engineer's name")
    statement = required_text(statement, "The sign-off statement")
    at = timestamp(now or utc_now())
    with transaction(db):
        covers = site_extent(db, site_id=site_id)
        cursor = db.execute(
            """
            INSERT INTO sign_offs (site_id, engineer_id, engineer_name, statement, covers,
                created_at)
            VALUES (?, ?, ?, ?, ?, ?)
            """,
            [site_id, engineer_id, engineer_name, statement, to_json(covers), at],
        )
        sign_off_id = cursor.lastrowid
        add_event(
            db,
            kind="engineer's sign-off",
            user_id=engineer_id,
            site_id=site_id,
            detail={"sign_off": sign_off_id, "engineer_name": engineer_name, "covers": covers},
            now=now,
        )
    return the_row(db, "SELECT * FROM sign_offs WHERE id = ?", [sign_off_id])


# History entries that change nothing in the record: tries that were refused, and the
# sign-offs themselves.
NOT_A_CHANGE = ("refused", "release refused", "engineer's sign-off")


def changes_since(db: sqlite_utils.Database, *, site_id: str, event_id: int | None) -> int:
    """How many entries changed the site record after history entry ``event_id``."""
    row = the_row(
        db,
        f"""
        SELECT count(*) AS n FROM events
        WHERE site_id = ? AND id > ? AND kind NOT IN ({", ".join("?" for _ in NOT_A_CHANGE)})
        """,
        [site_id, event_id or 0, *NOT_A_CHANGE],
    )
    return int(row["n"])


def sign_offs_for(db: sqlite_utils.Database, *, site_id: str) -> list[Row]:
    """A site's sign-offs, oldest first."""
    return many(db, "SELECT * FROM sign_offs WHERE site_id = ? ORDER BY id", [site_id])


def latest_sign_off(db: sqlite_utils.Database, *, site_id: str) -> Row | None:
    return one(db, "SELECT * FROM sign_offs WHERE site_id = ? ORDER BY id DESC LIMIT 1", [site_id])
