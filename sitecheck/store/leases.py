"""Named leases: which one of several processes does a piece of work alone.

A process takes a lease for a while and renews it while it works; another process asking
meanwhile is told no. A holder that stops (killed, restarted) simply stops renewing, and the
lease is free again once its time runs out.
"""

from datetime import datetime, timedelta

import sqlite_utils

from sitecheck.store.base import Row, one, timestamp, transaction, utc_now


def take_lease(
    db: sqlite_utils.Database,
    *,
    name: str,
    holder: str,
    lease_s: float,
    now: datetime | None = None,
) -> bool:
    """Take or renew the lease ``name`` for ``holder`` until ``lease_s`` from now; False if
    another holder has it and its time has not run out."""
    if not name or not holder:
        raise ValueError("a lease needs a name and a holder")
    now = now or utc_now()
    at, until = timestamp(now), timestamp(now + timedelta(seconds=lease_s))
    with transaction(db):
        row = one(db, "SELECT holder, until FROM leases WHERE name = ?", [name])
        if row is not None and row["holder"] != holder and row["until"] > at:
            return False
        db.execute(
            """
            INSERT INTO leases (name, holder, taken_at, until) VALUES (?, ?, ?, ?)
            ON CONFLICT (name) DO UPDATE SET
              holder = excluded.holder,
              taken_at = CASE WHEN leases.holder = excluded.holder THEN leases.taken_at
                              ELSE excluded.taken_at END,
              until = excluded.until
            """,
            [name, holder, at, until],
        )
    return True


def release_lease(db: sqlite_utils.Database, *, name: str, holder: str) -> None:
    """Give the lease up at once (a process stopping cleanly), if ``holder`` has it."""
    db.execute("DELETE FROM leases WHERE name = ? AND holder = ?", [name, holder])


def lease_holder(
    db: sqlite_utils.Database, *, name: str, now: datetime | None = None
) -> Row | None:
    """Who holds the lease now, since when and until when; None if nobody does."""
    return one(
        db,
        "SELECT holder, taken_at, until FROM leases WHERE name = ? AND until > ?",
        [name, timestamp(now or utc_now())],
    )


def clear_leases(db: sqlite_utils.Database) -> int:
    """Drop every lease: for a database just restored, whose holders were processes of
    another server (a nightly upkeep held while the backup was taken would block the next
    one for an hour)."""
    return db.execute("DELETE FROM leases").rowcount
