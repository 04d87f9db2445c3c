"""Notices: telling each person it is their turn.

Two ways, both read here:

- By e-mail. The mail sender reads the audit trail after ``notice_cursor`` and keeps a
  ``notices`` row for each person an event concerns (the rule of who is concerned is the
  caller's, :mod:`sitecheck.notices`); a person's waiting notices then go out together in
  one message, at most one per ``QUIET_S``.
- In the app ("since you last looked"): what moved into a person's hands on a site since
  they last opened one of its lists, read from the bearings themselves, so a bearing that
  has moved on meanwhile is not counted.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from datetime import datetime, timedelta
from typing import Any

import sqlite_utils

from sitecheck.store.base import (
    Row,
    many,
    one,
    placeholders,
    the_row,
    timestamp,
    transaction,
    utc_now,
)
from sitecheck.store.releases import OPEN_EVIDENCE

# At most one notice message per person in this many seconds; the first after a quiet spell
# goes at once, later ones wait and go together.
QUIET_S = 15 * 60
# A sender that finds no sender looked for this long takes it that mail was off (or the
# events came from a command, such as the demo builder): what happened meanwhile is not news
# to mail, and "since you last looked" shows it. A running sender looks every half minute.
NOTICE_GAP_S = 10 * 60
# Events read per round: a long backlog (mail switched on after a busy week) is worked
# through a slice at a time, each slice in its own short transaction.
EVENTS_PER_ROUND = 500

# (user_id, kind, words, by_user_id) for one event, given the site's members.
NoticeRule = Callable[[Row, list[Row]], Iterable[tuple[int, str, str, int | None]]]


# --- from the audit trail to notices -------------------------------------------------------------


def derive_notices(
    db: sqlite_utils.Database,
    *,
    rule: NoticeRule,
    now: datetime | None = None,
    limit: int = EVENTS_PER_ROUND,
) -> int:
    """Read the events after the cursor (up to ``limit``), keep the notices ``rule`` finds
    in them, and move the cursor past them, all in one transaction: two processes doing
    this at once each read a different slice. Returns how many events were read."""
    moment = now or utc_now()
    at = timestamp(moment)
    with transaction(db):
        cursor = the_row(db, "SELECT last_event_id, checked_at FROM notice_cursor WHERE id = 1")
        db.execute("UPDATE notice_cursor SET checked_at = ? WHERE id = 1", [at])
        if cursor["checked_at"] < timestamp(moment - timedelta(seconds=NOTICE_GAP_S)):
            skip_notices(db)
            return 0
        after = cursor["last_event_id"]
        events = many(db, "SELECT * FROM events WHERE id > ? ORDER BY id LIMIT ?", [after, limit])
        members: dict[str, list[Row]] = {}
        for event in events:
            site_id = event["site_id"]
            if not site_id or not event["bearing_id"]:
                continue
            if site_id not in members:
                members[site_id] = many(
                    db,
                    """
                    SELECT u.id, u.name, u.disabled, m.role
                    FROM memberships m JOIN users u ON u.id = m.user_id WHERE m.site_id = ?
                    """,
                    [site_id],
                )
            for user_id, kind, words, by in rule(event, members[site_id]):
                if _is_off(db, user_id, kind):
                    continue
                db.execute(
                    """
                    INSERT INTO notices (user_id, site_id, bearing_id, kind, event_id,
                        by_user_id, words, created_at)
                    VALUES (?, ?, ?, ?, ?, ?, ?, ?)
                    ON CONFLICT (user_id, event_id, kind) DO NOTHING
                    """,
                    [user_id, site_id, event["bearing_id"], kind, event["id"], by, words, at],
                )
        if events:
            db.execute(
                "UPDATE notice_cursor SET last_event_id = ? WHERE id = 1", [events[-1]["id"]]
            )
    return len(events)


def skip_notices(db: sqlite_utils.Database) -> None:
    """Move the notice cursor past every event so far: what happened until now is not news
    to mail (the demo builder's invented past, or events while mail was off)."""
    db.execute(
        "UPDATE notice_cursor SET last_event_id = (SELECT coalesce(max(id), 0) FROM events) "
        "WHERE id = 1"
    )


def _is_off(db: sqlite_utils.Database, user_id: int, kind: str) -> bool:
    return (
        one(db, "SELECT 1 AS x FROM notices_off WHERE user_id = ? AND kind = ?", [user_id, kind])
        is not None
    )


def _quiet_since(now: datetime) -> str:
    return timestamp(now - timedelta(seconds=QUIET_S))


def waiting_notices(db: sqlite_utils.Database, *, now: datetime | None = None) -> list[Row]:
    """Waiting notices of the people whose last notice message went at least QUIET_S ago
    (or never), oldest first, each with what a message needs and what shows whether it
    still holds: the bearing's state now, the person's role on the site now, the latest
    decision's kind, the latest record's utilisation and review reasons."""
    quiet_since = _quiet_since(now or utc_now())
    return many(
        db,
        f"""
        SELECT n.id, n.user_id, n.site_id, n.bearing_id, n.kind, n.words, n.created_at,
               n.event_id, by.name AS by_name,
               u.email, u.name AS user_name, u.disabled,
               m.role AS role_now, s.name AS site_name,
               b.reference, b.location, b.state,
               r.utilisation, r.passed, r.reasons,
               (SELECT d.kind FROM decisions d WHERE d.bearing_id = b.id
                ORDER BY d.created_at DESC, d.id DESC LIMIT 1) AS last_decision,
               (SELECT count(*) FROM notices_off o
                WHERE o.user_id = n.user_id AND o.kind = n.kind) AS turned_off,
               EXISTS (SELECT 1 FROM after_release_evidence e WHERE {OPEN_EVIDENCE})
                   AS after_release
        FROM notices n
        JOIN users u ON u.id = n.user_id
        JOIN sites s ON s.id = n.site_id
        JOIN bearings b ON b.id = n.bearing_id
        LEFT JOIN users by ON by.id = n.by_user_id
        LEFT JOIN memberships m ON m.user_id = n.user_id AND m.site_id = n.site_id
        LEFT JOIN as_built_records r ON r.uuid = b.latest_record_uuid
        WHERE n.mailed_at IS NULL AND n.dropped_at IS NULL
          AND NOT EXISTS (
              SELECT 1 FROM notices last
              WHERE last.user_id = n.user_id AND last.mailed_at > ?
          )
        ORDER BY n.user_id, s.name COLLATE NOCASE, n.site_id, b.reference, n.id
        """,
        [quiet_since],
    )


def next_notice_due_at(db: sqlite_utils.Database) -> str | None:
    """When the next person's waiting notices may go (None: nothing waits)."""
    rows = many(
        db,
        """
        SELECT min(n.created_at) AS first_waiting,
               (SELECT max(last.mailed_at) FROM notices last
                WHERE last.user_id = n.user_id) AS last_mailed
        FROM notices n
        WHERE n.mailed_at IS NULL AND n.dropped_at IS NULL
        GROUP BY n.user_id
        """,
    )
    due = []
    for row in rows:
        if row["last_mailed"] is None:
            due.append(row["first_waiting"])
        else:
            last = datetime.fromisoformat(row["last_mailed"])
            due.append(max(row["first_waiting"], timestamp(last + timedelta(seconds=QUIET_S))))
    return min(due) if due else None


def notices_still_waiting(
    db: sqlite_utils.Database, *, ids: list[int], now: datetime | None = None
) -> bool:
    """Whether all these notices still wait and their person has had no notice message in
    the last QUIET_S (call inside the transaction that sends them: another process may have
    sent them meanwhile)."""
    if not ids:
        return False
    row = the_row(
        db,
        f"""
        SELECT count(*) AS waiting,
               (SELECT count(*) FROM notices last
                WHERE last.user_id = (SELECT user_id FROM notices WHERE id = ?)
                  AND last.mailed_at > ?) AS recent
        FROM notices WHERE id IN ({placeholders(ids)})
          AND mailed_at IS NULL AND dropped_at IS NULL
        """,
        [ids[0], _quiet_since(now or utc_now()), *ids],
    )
    return bool(row["waiting"] == len(ids) and row["recent"] == 0)


def notices_mailed(
    db: sqlite_utils.Database, *, ids: list[int], mail_id: int, now: datetime | None = None
) -> None:
    if ids:
        db.execute(
            f"UPDATE notices SET mailed_at = ?, mail_id = ? WHERE id IN ({placeholders(ids)})",
            [timestamp(now or utc_now()), mail_id, *ids],
        )


def notices_dropped(
    db: sqlite_utils.Database, *, ids: list[int], now: datetime | None = None
) -> None:
    """Notices overtaken before they were mailed (the bearing moved on, the person left the
    site or turned the kind off): kept, but never sent."""
    if ids:
        db.execute(
            f"UPDATE notices SET dropped_at = ? WHERE id IN ({placeholders(ids)})",
            [timestamp(now or utc_now()), *ids],
        )


def notices_of(db: sqlite_utils.Database, *, user_id: int, limit: int = 50) -> list[Row]:
    """A person's notices, newest first, with how each went (for their notices page)."""
    return many(
        db,
        """
        SELECT n.id, n.kind, n.site_id, n.bearing_id, n.created_at, n.mailed_at, n.dropped_at,
               s.name AS site_name, b.reference, o.sent_at, o.gave_up_at, o.last_error
        FROM notices n JOIN sites s ON s.id = n.site_id JOIN bearings b ON b.id = n.bearing_id
        LEFT JOIN outgoing_mail o ON o.id = n.mail_id
        WHERE n.user_id = ? ORDER BY n.id DESC LIMIT ?
        """,
        [user_id, limit],
    )


# --- what each person turned off -----------------------------------------------------------------


def notice_kinds_off(db: sqlite_utils.Database, *, user_id: int) -> set[str]:
    return {
        row["kind"] for row in many(db, "SELECT kind FROM notices_off WHERE user_id = ?", [user_id])
    }


def set_notice_kinds_off(
    db: sqlite_utils.Database, *, user_id: int, kinds: Iterable[str], known: Iterable[str]
) -> None:
    """Turn exactly ``kinds`` off (of the ``known`` kinds) for this person; the others on."""
    known = list(known)
    off = set(kinds)
    unknown = off - set(known)
    if unknown:
        raise ValueError(f"notice kinds {sorted(unknown)} are not among {known}")
    with transaction(db):
        db.execute("DELETE FROM notices_off WHERE user_id = ?", [user_id])
        for kind in sorted(off):
            db.execute("INSERT INTO notices_off (user_id, kind) VALUES (?, ?)", [user_id, kind])


# --- since you last looked ------------------------------------------------------------------------


def looked(
    db: sqlite_utils.Database,
    *,
    user_id: int,
    site_ids: Iterable[str],
    now: datetime | None = None,
) -> None:
    """The person has just looked at these sites' lists."""
    at = timestamp(now or utc_now())
    with transaction(db):
        for site_id in site_ids:
            db.execute(
                """
                INSERT INTO site_visits (user_id, site_id, looked_at) VALUES (?, ?, ?)
                ON CONFLICT (user_id, site_id) DO UPDATE SET looked_at = excluded.looked_at
                """,
                [user_id, site_id, at],
            )


# Each kind: the role it is for, and what makes a bearing count for it. A bearing counts
# when it is in that situation now and got there after the person last looked.
_SINCE_KINDS = (
    ("to-decide", "engineer", "b.state = 'engineer to decide'"),
    ("releasable", "contractor", "b.state IN ('within design', 'accepted')"),
    ("remedial", "contractor", "b.state = 'remedial'"),
    ("remedial", "inspector", "b.state = 'remedial'"),
    (
        "measure-again",
        "inspector",
        "b.state = 'awaiting survey' AND (SELECT d.kind FROM decisions d WHERE d.bearing_id = b.id "
        "ORDER BY d.created_at DESC, d.id DESC LIMIT 1) = 'measure-again'",
    ),
)


def since_last_looked(
    db: sqlite_utils.Database, *, user_id: int, site_id: str | None = None
) -> list[Row]:
    """Bearings that came into this person's hands since they last looked at their site
    (or since they joined it, if they never looked): ``site_id``, ``bearing_id``,
    ``reference``, ``kind``, ``at`` (when it got there) and ``looked_at``. One site, or all
    of the person's sites."""
    cases = " ".join(
        f"WHEN m.role = '{role}' AND {condition} THEN '{kind}'"
        for kind, role, condition in _SINCE_KINDS
    )
    where_site = "AND m.site_id = ?" if site_id else ""
    params: list[Any] = [user_id] + ([site_id] if site_id else [])
    # The kind is worked out from the index alone (site, changed, state, id), so only the
    # bearings that count are read whole. Each of the person's sites with when they last looked first, so that the bearings are
    # read by the (site, changed) index from that moment on only.
    return many(
        db,
        f"""
        WITH mine AS MATERIALIZED (
            SELECT m.site_id, m.role, coalesce(v.looked_at, m.created_at) AS looked_at
            FROM memberships m
            LEFT JOIN site_visits v ON v.user_id = m.user_id AND v.site_id = m.site_id
            WHERE m.user_id = ? {where_site}
        )
        SELECT b.site_id, b.id AS bearing_id, b.reference, b.state_changed_at AS at,
               m.looked_at, CASE {cases} END AS kind
        FROM mine m
        JOIN bearings b ON b.site_id = m.site_id AND b.state_changed_at > m.looked_at
        WHERE (CASE {cases} END) IS NOT NULL
        ORDER BY b.site_id, b.reference COLLATE NOCASE
        """,
        params,
    )


def last_looked(db: sqlite_utils.Database, *, user_id: int, site_id: str) -> str | None:
    row = one(
        db,
        "SELECT looked_at FROM site_visits WHERE user_id = ? AND site_id = ?",
        [user_id, site_id],
    )
    return row["looked_at"] if row else None
