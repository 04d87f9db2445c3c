"""The audit trail: one row per change, never updated or deleted (triggers refuse it)."""

from datetime import datetime
from typing import Any

import sqlite_utils

from sitecheck.store.base import Row, inserted_id, many, timestamp, to_json, utc_now


def add_event(
    db: sqlite_utils.Database,
    *,
    kind: str,
    user_id: int | None = None,
    site_id: str | None = None,
    bearing_id: str | None = None,
    before: Any = None,
    after: Any = None,
    detail: dict[str, Any] | None = None,
    now: datetime | None = None,
) -> int:
    """Append one event; ``detail`` holds ``before`` and ``after`` plus any extra keys."""
    if not kind:
        raise ValueError("kind is empty; name what happened, e.g. 'release'")
    body: dict[str, Any] = dict(detail or {})
    if before is not None:
        body["before"] = before
    if after is not None:
        body["after"] = after
    cursor = db.execute(
        """
        INSERT INTO events (at, user_id, site_id, bearing_id, kind, detail)
        VALUES (?, ?, ?, ?, ?, ?)
        """,
        [timestamp(now or utc_now()), user_id, site_id, bearing_id, kind, to_json(body)],
    )
    return inserted_id(cursor)


def events_for(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    bearing_id: str | None = None,
    limit: int = 1000,
) -> list[Row]:
    """A site's events (or one bearing's on that site), newest first."""
    if bearing_id is None:
        return many(
            db,
            "SELECT * FROM events WHERE site_id = ? ORDER BY id DESC LIMIT ?",
            [site_id, limit],
        )
    return many(
        db,
        "SELECT * FROM events WHERE site_id = ? AND bearing_id = ? ORDER BY id DESC LIMIT ?",
        [site_id, bearing_id, limit],
    )


def events_for_user(db: sqlite_utils.Database, *, user_id: int, limit: int = 1000) -> list[Row]:
    """Events a user caused, newest first (for account pages; not scoped to one site)."""
    return many(
        db,
        "SELECT * FROM events WHERE user_id = ? ORDER BY id DESC LIMIT ?",
        [user_id, limit],
    )
