"""The engineer's decisions on a bearing's latest as-built record: accept as built, remedial
work, measure again, each with its reason, as signed."""

from datetime import datetime
from typing import Any

import sqlite_utils

from sitecheck.store.base import (
    Row,
    canonical_uuid,
    many,
    required_text,
    the_row,
    timestamp,
    to_json,
    transaction,
    utc_now,
)
from sitecheck.store.bearings import (
    existing_bearing,
    expect_state,
    known_state,
    move_state,
    rows_of_bearing,
)
from sitecheck.store.errors import StaleState
from sitecheck.store.migrations import DECISION_KINDS


def record_decision(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    bearing_id: str,
    record_uuid: str,
    engineer_id: int,
    kind: str,
    reason: str,
    expected_state: str,
    new_state: str,
    engineer_name: str | None = None,
    accepted_failing: dict[str, Any] | None = None,
    now: datetime | None = None,
) -> Row:
    """Store the engineer's decision on the bearing's latest record and move its state.

    ``new_state`` is ``workflow.state_after_decision(kind)``. If a newer record arrived since
    the engineer looked, ``StaleState``: a decision must be about what is now the latest record.
    ``engineer_name`` is kept as signed; ``accepted_failing`` (what fails, as the engineer
    confirmed it) only with an acceptance.
    """
    if accepted_failing is not None and kind != "accept":
        raise ValueError("accepted_failing goes only with an acceptance")
    if kind not in DECISION_KINDS:
        raise ValueError(f"decision kind {kind!r} is not one of {', '.join(DECISION_KINDS)}")
    reason = required_text(reason, "The reason for the decision")
    known_state(new_state)
    record_uuid = canonical_uuid(record_uuid, field="record_uuid")
    with transaction(db):
        bearing = existing_bearing(db, site_id, bearing_id)
        expect_state(bearing, expected_state)
        if bearing["latest_record_uuid"] != record_uuid:
            raise StaleState(
                f"Bearing {bearing['reference']} has a newer as-built record than the one "
                "decided on; reload it and decide on the latest record"
            )
        at = timestamp(now or utc_now())
        cursor = db.execute(
            """
            INSERT INTO decisions (bearing_id, record_uuid, engineer_id, kind, reason, created_at,
                engineer_name, accepted_failing)
            VALUES (?, ?, ?, ?, ?, ?, ?, ?)
            """,
            [
                bearing_id,
                record_uuid,
                engineer_id,
                kind,
                reason,
                at,
                engineer_name,
                None if accepted_failing is None else to_json(accepted_failing),
            ],
        )
        decision_id = cursor.lastrowid
        move_state(
            db,
            bearing,
            new_state=new_state,
            user_id=engineer_id,
            kind="decision",
            at=at,
            detail={
                "decision": decision_id,
                "kind": kind,
                "reason": reason,
                "record_uuid": record_uuid,
                **({"engineer_name": engineer_name} if engineer_name else {}),
                **({"accepted_failing": accepted_failing} if accepted_failing else {}),
            },
        )
    return the_row(db, "SELECT * FROM decisions WHERE id = ?", [decision_id])


def decisions_for(db: sqlite_utils.Database, *, site_id: str, bearing_id: str) -> list[Row]:
    """A bearing's decisions, oldest first."""
    return rows_of_bearing(db, "decisions", site_id, bearing_id)


def latest_decisions(
    db: sqlite_utils.Database, *, site_id: str, bearing_id: str | None = None
) -> dict[str, Row]:
    """Each bearing's newest decision on a site (or only ``bearing_id``'s), by bearing id,
    with the engineer's name as signed (or as the account is called, for a decision from
    before names were kept)."""
    one_bearing = "AND b.id = ?" if bearing_id else ""
    rows = many(
        db,
        f"""
        SELECT d.*, coalesce(d.engineer_name, u.name) AS signed_by FROM decisions d
        JOIN bearings b ON b.id = d.bearing_id LEFT JOIN users u ON u.id = d.engineer_id
        WHERE b.site_id = ? {one_bearing} AND d.id = (
            SELECT d2.id FROM decisions d2 WHERE d2.bearing_id = d.bearing_id
            ORDER BY d2.created_at DESC, d2.id DESC LIMIT 1
        )
        """,
        [site_id, *([bearing_id] if bearing_id else [])],
    )
    return {row["bearing_id"]: row for row in rows}
