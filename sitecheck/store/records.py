"""As-built records: stored once per client UUID, each moving its bearing's state, and read
back whole (with the re-check's result) or as a line (without it).

Nothing measured is overwritten: a correction is a new record, and the newest by measuring
time drives the bearing's state (``bearings.NEWEST_FIRST``).
"""

import json
from collections.abc import Callable
from dataclasses import dataclass
from datetime import datetime
from typing import Any

import sqlite_utils

from sitecheck.store.base import (
    Row,
    canonical_uuid,
    decode_row,
    many,
    one,
    pack_json,
    parse_timestamp,
    placeholders,
    present,
    the_row,
    timestamp,
    to_json,
    transaction,
    utc_now,
)
from sitecheck.store.bearings import (
    NEWEST_FIRST,
    RELEASED,
    bearing_to_move,
    known_state,
    move_state,
    newest_record_uuid,
)
from sitecheck.store.errors import SameIdOtherValues, UuidInUse
from sitecheck.store.events import add_event
from sitecheck.store.releases import add_after_release


@dataclass(frozen=True)
class RecordStored:
    """An as-built record as stored, whether this call stored it, and the bearing's state now."""

    row: Row
    created: bool
    state: str


def insert_record(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    uuid: str,
    bearing_id: str,
    design_revision: int,
    inspector_id: int,
    measured_at: str | datetime,
    measurements: dict[str, Any],
    checklist: dict[str, Any] | None,
    notes: str,
    result: dict[str, Any],
    reasons: list[Any],
    utilisation: float | None,
    passed: bool,
    blocking: int,
    state_after_record: Callable[[str, int, bool], str],
    now: datetime | None = None,
    why_not_measured: str | None = None,
) -> RecordStored:
    """Store an as-built record once per client UUID, and move the bearing's state.

    Sending the same UUID again with the same values returns the row first stored,
    ``created=False``, and changes nothing; with other values it raises ``SameIdOtherValues``
    naming the fields that differ. The same UUID for another bearing or inspector raises
    ``UuidInUse`` without revealing the stored row. A record arriving after release is stored
    with ``late`` set, leaves the bearing released, and is listed for the engineer as
    recorded after release (``after_release_evidence``) until the engineer reopens the
    bearing or keeps its release. ``state_after_record`` is ``workflow.state_after_record``:
    it is called with (state, blocking, record is newest) inside the transaction, so two
    records arriving together cannot both decide from the same old state.
    """
    uuid = canonical_uuid(uuid)
    measured = parse_timestamp(measured_at, field="measured_at")
    if blocking < 0:
        raise ValueError(f"blocking {blocking} is negative; count the blocking review reasons")
    # What the phone sent: the same uuid sent again must carry the same.
    sent = {
        "design_revision": design_revision,
        "measured_at": measured,
        "measurements": measurements,
        "checklist": checklist or {},
        "notes": (notes or "").strip(),
        "why_not_measured": why_not_measured,
    }
    with transaction(db):
        bearing = bearing_to_move(db, site_id, bearing_id)
        _revision_exists(bearing, design_revision)
        received = timestamp(now or utc_now())
        late = bearing["state"] == RELEASED
        kept = {
            "uuid": uuid,
            "bearing_id": bearing_id,
            "inspector_id": inspector_id,
            "received_at": received,
            "result": pack_json(result),
            "governing": result.get("governing"),
            "reasons": to_json(reasons),
            "utilisation": utilisation,
            "passed": int(bool(passed)),
            "blocking": blocking,
            "late": int(late),
        }
        if (inserted := _insert_once(db, sent, kept)) is None:
            return _stored_already(db, site_id, uuid, bearing, inspector_id, sent)
        is_newest = newest_record_uuid(db, bearing_id) == uuid
        if late:
            add_after_release(db, bearing_id, record_uuid=uuid, received=received)
        state = known_state(state_after_record(bearing["state"], blocking, is_newest))
        detail = {
            "record_uuid": uuid,
            "newest": is_newest,
            "late": late,
            "design_revision": design_revision,
            "bearing_revision": bearing["revision"],
            "blocking": blocking,
        }
        _record_received(db, bearing, state, detail, inspector_id, received)
    return _as_inserted(inserted, site_id, design_revision < bearing["revision"], state)


def _as_inserted(inserted: Row, site_id: str, older_revision: bool, state: str) -> RecordStored:
    """A record just stored, as :func:`record_line` reads it, from the row its insert
    returned."""
    row = {**inserted, "site_id": site_id, "older_revision": older_revision}
    return RecordStored(row=present(decode_row(row), "the record"), created=True, state=state)


def _revision_exists(bearing: Row, design_revision: int) -> None:
    if not 1 <= design_revision <= bearing["revision"]:
        raise ValueError(
            f"design_revision {design_revision} does not exist for bearing "
            f"{bearing['reference']} (latest is {bearing['revision']}); refresh the site pack"
        )


def _insert_once(
    db: sqlite_utils.Database, sent: dict[str, Any], kept: dict[str, Any]
) -> Row | None:
    """Insert the record unless its uuid is stored already: the row as stored (the columns
    :func:`record_line` reads, undecoded), or None when the uuid was stored before. The row
    comes back from the insert itself, so the answer needs no second read."""
    columns = {
        **sent,
        "measurements": to_json(sent["measurements"]),
        "checklist": to_json(sent["checklist"]),
        **kept,
    }
    cursor = db.execute(
        f"INSERT INTO as_built_records ({', '.join(columns)}) "
        f"VALUES ({placeholders(columns)}) ON CONFLICT (uuid) DO NOTHING "
        f"RETURNING {', '.join(RECORD_LINE_KEYS)}",
        list(columns.values()),
    )
    found = cursor.fetchone()
    return None if found is None else dict(zip(RECORD_LINE_KEYS, found, strict=True))


def _stored_already(
    db: sqlite_utils.Database,
    site_id: str,
    uuid: str,
    bearing: Row,
    inspector_id: int,
    sent: dict[str, Any],
) -> RecordStored:
    """The record as first stored, when the same inspector sends it again for the same
    bearing with the same values (a phone that did not hear the answer); else refused."""
    row = the_row(db, f"SELECT {RECORD_LINE} FROM as_built_records r WHERE r.uuid = ?", [uuid])
    if row["bearing_id"] != bearing["id"] or row["inspector_id"] != inspector_id:
        raise UuidInUse(
            "This record's UUID is already used by another record; the phone must make "
            "a new UUID for each record"
        )
    differs = tuple(name for name, value in sent.items() if not _same(value, row[name]))
    if differs:
        raise SameIdOtherValues(
            "An as-built record with this id was already stored with other values ("
            + ", ".join(_FIELD_WORDS[name] for name in differs)
            + "). These values were not stored: record the bearing again from them, "
            "which gives the record a new id.",
            differs,
        )
    return _as_stored(db, site_id, uuid, created=False, state=bearing["state"])


def _as_stored(
    db: sqlite_utils.Database, site_id: str, uuid: str, *, created: bool, state: str
) -> RecordStored:
    row = present(record_line(db, site_id=site_id, uuid=uuid), "the record")
    return RecordStored(row=row, created=created, state=state)


def _record_received(
    db: sqlite_utils.Database,
    bearing: Row,
    state: str,
    detail: dict[str, Any],
    inspector_id: int,
    received: str,
) -> None:
    """The event of a new record, moving the bearing where the record moves it."""
    if detail["newest"] and not detail["late"]:
        move_state(
            db,
            bearing,
            new_state=state,
            user_id=inspector_id,
            kind="record received",
            at=received,
            latest_record_uuid=detail["record_uuid"],
            detail=detail,
        )
    elif state != bearing["state"]:
        # The rule moved the state without this record becoming the latest; the lock
        # triggers still refuse this for a released bearing.
        move_state(
            db,
            bearing,
            new_state=state,
            user_id=inspector_id,
            kind="record received",
            at=received,
            detail=detail,
        )
    else:
        add_event(
            db,
            kind="record received",
            user_id=inspector_id,
            site_id=bearing["site_id"],
            bearing_id=bearing["id"],
            detail=detail,
        )


_FIELD_WORDS = {
    "why_not_measured": "whether it could be measured",
    "design_revision": "design revision",
    "measured_at": "time measured",
    "measurements": "measurements",
    "checklist": "checklist",
    "notes": "notes",
}


def _same(sent: Any, stored: Any) -> bool:
    """Equal as stored JSON, strictly: 1 and true, or 100 and 100.0, are not the same value."""
    return json.dumps(json.loads(to_json(sent)), sort_keys=True) == json.dumps(
        stored, sort_keys=True
    )


RECORD_COLUMNS = """
    r.*, b.site_id,
    r.design_revision < b.revision AS older_revision
"""


# A record without its packed result: what a list or an answer shows of it.
RECORD_LINE_KEYS = (
    "uuid",
    "bearing_id",
    "design_revision",
    "inspector_id",
    "measured_at",
    "received_at",
    "measurements",
    "checklist",
    "notes",
    "governing",
    "reasons",
    "utilisation",
    "passed",
    "blocking",
    "late",
    "why_not_measured",
    "kind",
)
RECORD_LINE = ", ".join(f"r.{key}" for key in RECORD_LINE_KEYS)


def record_line(db: sqlite_utils.Database, *, site_id: str, uuid: str) -> Row | None:
    """One record as :func:`get_record` gives it, but for its ``result``: the governing check
    (``governing``), utilisation, verdict and reasons are columns of their own."""
    try:
        uuid = canonical_uuid(uuid)
    except ValueError:
        return None
    return one(
        db,
        f"""
        SELECT {RECORD_LINE}, b.site_id, r.design_revision < b.revision AS older_revision
        FROM as_built_records r JOIN bearings b ON b.id = r.bearing_id
        WHERE r.uuid = ? AND b.site_id = ?
        """,
        [uuid, site_id],
    )


def get_record(db: sqlite_utils.Database, *, site_id: str, uuid: str) -> Row | None:
    """One record; ``older_revision`` is True if it was measured against an older design."""
    try:
        uuid = canonical_uuid(uuid)
    except ValueError:
        return None
    return one(
        db,
        f"""
        SELECT {RECORD_COLUMNS} FROM as_built_records r JOIN bearings b ON b.id = r.bearing_id
        WHERE r.uuid = ? AND b.site_id = ?
        """,
        [uuid, site_id],
    )


def records_for_bearing(db: sqlite_utils.Database, *, site_id: str, bearing_id: str) -> list[Row]:
    """Every record of a bearing, newest by measured time first (the first drives the state)."""
    return many(
        db,
        f"""
        SELECT {RECORD_COLUMNS} FROM as_built_records r JOIN bearings b ON b.id = r.bearing_id
        WHERE b.site_id = ? AND r.bearing_id = ? ORDER BY {NEWEST_FIRST}
        """,
        [site_id, bearing_id],
    )


def records_for_site(db: sqlite_utils.Database, *, site_id: str) -> list[Row]:
    """Every record on a site (for the site pack and the data export), by bearing, newest first."""
    return many(
        db,
        f"""
        SELECT {RECORD_COLUMNS} FROM as_built_records r JOIN bearings b ON b.id = r.bearing_id
        WHERE b.site_id = ? ORDER BY b.reference, r.bearing_id, {NEWEST_FIRST}
        """,
        [site_id],
    )


def latest_record_summaries(db: sqlite_utils.Database, *, site_id: str) -> dict[str, Row]:
    """Each bearing's latest record (the one that sets its state), by bearing id, without
    the stored result and reasons: the site page needs a line per bearing, and a site's
    history of full re-checks grows with every visit to it."""
    rows = many(
        db,
        """
        SELECT r.bearing_id, r.uuid, r.measured_at, r.utilisation, r.passed, r.blocking,
               r.design_revision < b.revision AS older_revision
        FROM bearings b JOIN as_built_records r ON r.uuid = b.latest_record_uuid
        WHERE b.site_id = ?
        """,
        [site_id],
    )
    return {row.pop("bearing_id"): row for row in rows}
