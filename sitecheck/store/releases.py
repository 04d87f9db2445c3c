"""The hold point: a bearing released for closing up, what is recorded for it after its
release (kept, and listed for the engineer until answered), the engineer keeping the release
over it, and reopening.

A released bearing is locked: the database's triggers refuse any other change to it.
"""

from datetime import datetime

import sqlite_utils

from sitecheck.store.base import (
    Row,
    many,
    required_text,
    the_row,
    timestamp,
    transaction,
    utc_now,
)
from sitecheck.store.bearings import (
    RELEASED,
    existing_bearing,
    expect_state,
    known_state,
    move_state,
    newest_record_uuid,
    not_before,
    rows_of_bearing,
)
from sitecheck.store.errors import StaleState
from sitecheck.store.events import add_event


def record_release(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    bearing_id: str,
    contractor_id: int,
    contractor_name: str,
    statement: str,
    expected_state: str,
    now: datetime | None = None,
) -> Row:
    """Release a bearing for closing up; from now on it is locked.

    The caller checks ``workflow.can_release(expected_state)`` first; the database refuses a
    release from any other state as well.
    """
    contractor_name = required_text(contractor_name, "The contractor's name")
    statement = required_text(statement, "The release statement")
    with transaction(db):
        bearing = existing_bearing(db, site_id, bearing_id)
        expect_state(bearing, expected_state)
        at = not_before(now, bearing["state_changed_at"])
        cursor = db.execute(
            """
            INSERT INTO releases (bearing_id, record_uuid, contractor_id, contractor_name,
                statement, created_at)
            VALUES (?, ?, ?, ?, ?, ?)
            """,
            [
                bearing_id,
                bearing["latest_record_uuid"],
                contractor_id,
                contractor_name,
                statement,
                at,
            ],
        )
        release_id = cursor.lastrowid
        move_state(
            db,
            bearing,
            new_state=RELEASED,
            user_id=contractor_id,
            kind="release",
            at=at,
            detail={
                "release": release_id,
                "contractor_name": contractor_name,
                "statement": statement,
            },
        )
    return the_row(db, "SELECT * FROM releases WHERE id = ?", [release_id])


def record_reopening(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    bearing_id: str,
    engineer_id: int,
    reason: str,
    new_state: str,
    now: datetime | None = None,
) -> Row:
    """Reopen a released bearing (``new_state`` from ``workflow.reopen``); both stay on record.

    The newest record, including any that arrived late, becomes the bearing's latest record.
    """
    reason = required_text(reason, "The reason for reopening")
    known_state(new_state)
    with transaction(db):
        bearing = existing_bearing(db, site_id, bearing_id)
        expect_state(bearing, RELEASED)
        at = not_before(now, bearing["state_changed_at"])
        cursor = db.execute(
            """
            INSERT INTO reopenings (bearing_id, engineer_id, reason, created_at)
            VALUES (?, ?, ?, ?)
            """,
            [bearing_id, engineer_id, reason, at],
        )
        reopening_id = cursor.lastrowid
        move_state(
            db,
            bearing,
            new_state=new_state,
            user_id=engineer_id,
            kind="reopening",
            at=at,
            latest_record_uuid=newest_record_uuid(db, bearing_id),
            detail={"reopening": reopening_id, "reason": reason},
        )
    return the_row(db, "SELECT * FROM reopenings WHERE id = ?", [reopening_id])


def releases_for(db: sqlite_utils.Database, *, site_id: str, bearing_id: str) -> list[Row]:
    return rows_of_bearing(db, "releases", site_id, bearing_id)


def reopenings_for(db: sqlite_utils.Database, *, site_id: str, bearing_id: str) -> list[Row]:
    return rows_of_bearing(db, "reopenings", site_id, bearing_id)


# --- evidence recorded after release ----------------------------------------------------------

# Evidence for bearing b (alias) not yet answered: recorded since its current release, and
# after the last time the engineer kept that release. Reopening ends the release, so it
# answers everything recorded before it.
OPEN_EVIDENCE = """
    e.bearing_id = b.id AND b.state = 'released'
    AND e.release_id = (SELECT max(x.id) FROM releases x WHERE x.bearing_id = b.id)
    AND e.id > coalesce(
        (SELECT max(k.evidence_up_to) FROM releases_kept k
         WHERE k.bearing_id = b.id AND k.release_id = e.release_id), 0)
"""


def after_release_evidence(
    db: sqlite_utils.Database, *, site_id: str, bearing_id: str
) -> list[Row]:
    """What was recorded for a released bearing since its release and not yet answered by
    the engineer, oldest first: one row per record (``photo_uuid`` None) or photo, with the
    record's inspector, times, utilisation and verdict. Empty for a bearing not released."""
    return many(
        db,
        f"""
        SELECT e.id, e.release_id, e.record_uuid, e.photo_uuid, e.received_at,
               r.measured_at, r.inspector_id, r.utilisation, r.passed, r.blocking,
               r.reasons, p.width, p.height, p.captured_at
        FROM after_release_evidence e
        JOIN bearings b ON b.id = e.bearing_id
        JOIN as_built_records r ON r.uuid = e.record_uuid
        LEFT JOIN photos p ON p.uuid = e.photo_uuid
        WHERE b.site_id = ? AND b.id = ? AND {OPEN_EVIDENCE}
        ORDER BY e.id
        """,
        [site_id, bearing_id],
    )


def keep_release(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    bearing_id: str,
    engineer_id: int,
    reason: str,
    seen_up_to: int,
    now: datetime | None = None,
) -> Row:
    """The engineer has looked at what was recorded after release and keeps the release.

    ``seen_up_to`` is the newest evidence the engineer saw (its id): if more arrived since,
    ``StaleState``, so a release is never kept over evidence nobody looked at.
    """
    reason = required_text(reason, "The reason for keeping the release")
    with transaction(db):
        bearing = existing_bearing(db, site_id, bearing_id)
        if bearing["state"] != RELEASED:
            raise StaleState(
                f"Bearing {bearing['reference']} is now '{bearing['state']}', not released; "
                "reload it and look again"
            )
        waiting = after_release_evidence(db, site_id=site_id, bearing_id=bearing_id)
        if not waiting:
            raise StaleState(
                f"Nothing recorded after the release of bearing {bearing['reference']} waits "
                "for an answer; reload it and look again"
            )
        if waiting[-1]["id"] != seen_up_to:
            raise StaleState(
                f"More was recorded for bearing {bearing['reference']} after its release since "
                "the page was opened; look at it and answer again"
            )
        at = timestamp(now or utc_now())
        cursor = db.execute(
            """
            INSERT INTO releases_kept (bearing_id, release_id, engineer_id, reason,
                evidence_up_to, created_at)
            VALUES (?, ?, ?, ?, ?, ?)
            """,
            [bearing_id, waiting[-1]["release_id"], engineer_id, reason, seen_up_to, at],
        )
        kept_id = cursor.lastrowid
        add_event(
            db,
            kind="release kept",
            user_id=engineer_id,
            site_id=site_id,
            bearing_id=bearing_id,
            detail={
                "release_kept": kept_id,
                "reason": reason,
                "records": sorted({w["record_uuid"] for w in waiting if not w["photo_uuid"]}),
                "photos": [w["photo_uuid"] for w in waiting if w["photo_uuid"]],
            },
        )
    return the_row(db, "SELECT * FROM releases_kept WHERE id = ?", [kept_id])


def releases_kept_for(db: sqlite_utils.Database, *, site_id: str, bearing_id: str) -> list[Row]:
    """The engineer's answers keeping a bearing's release after later evidence, oldest first."""
    return rows_of_bearing(db, "releases_kept", site_id, bearing_id)


def add_after_release(
    db: sqlite_utils.Database,
    bearing_id: str,
    *,
    record_uuid: str,
    received: str,
    photo_uuid: str | None = None,
) -> None:
    release = the_row(db, "SELECT max(id) AS id FROM releases WHERE bearing_id = ?", [bearing_id])
    db.execute(
        """
        INSERT INTO after_release_evidence (bearing_id, release_id, record_uuid, photo_uuid,
            received_at)
        VALUES (?, ?, ?, ?, ?)
        """,
        [bearing_id, release["id"], record_uuid, photo_uuid, received],
    )
