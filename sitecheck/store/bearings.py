"""Bearings, their design revisions, as-built records, photos, decisions, releases, reopenings.

Every read and write takes the ``site_id`` the caller has authorised, and matches it in SQL:
an id from another site behaves exactly like an id that does not exist.

The store knows the state names (the schema checks them) but not the rules for moving between
them; those live in ``sitecheck.workflow``. Functions that change a state either take the new
state from the caller together with the state the caller based it on (``expected_state``:
if the bearing moved meanwhile, ``StaleState`` is raised), or, where the new state depends on
what is stored at that moment, take the rule itself (``state_after_record``).
"""

import sqlite3
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from datetime import datetime
from typing import Any

import sqlite_utils

from sitecheck.store.base import (
    canonical_uuid,
    many,
    new_id,
    one,
    parse_timestamp,
    placeholders,
    required_text,
    timestamp,
    to_json,
    transaction,
    utc_now,
)
from sitecheck.store.errors import DuplicateReference, NotFound, StaleState, UuidInUse
from sitecheck.store.events import add_event
from sitecheck.store.migrations import DECISION_KINDS, STATES

RELEASED = "released"
# Mirrors sitecheck.workflow.can_release (the store may not import the layer above it); a test
# holds the two equal, and a trigger enforces the same rule in the database.
RELEASABLE_STATES = ("within design", "accepted")

# Newest first by the device's measuring time; arrival time and uuid break ties so the order
# (and so which record drives the state) is the same every time it is asked.
_NEWEST_FIRST = "r.measured_at DESC, r.received_at DESC, r.uuid DESC"


@dataclass(frozen=True)
class Stored:
    """The row as stored, and whether this call stored it (False: it was already there)."""

    row: dict
    created: bool


@dataclass(frozen=True)
class RecordStored:
    """An as-built record as stored, whether this call stored it, and the bearing's state now."""

    row: dict
    created: bool
    state: str


def _state(state: str) -> str:
    if state not in STATES:
        raise ValueError(f"state {state!r} is not one of {', '.join(STATES)}")
    return state


def _bearing(db: sqlite_utils.Database, site_id: str, bearing_id: str) -> dict:
    bearing = get_bearing(db, site_id=site_id, bearing_id=bearing_id)
    if bearing is None:
        raise NotFound("No such bearing on this site")
    return bearing


def _expect(bearing: dict, expected_state: str) -> None:
    if bearing["state"] != expected_state:
        raise StaleState(
            f"Bearing {bearing['reference']} is now '{bearing['state']}', "
            f"not '{expected_state}'; reload it and look again"
        )


def _not_before(moment: datetime | None, floor: str) -> str:
    # The lock triggers compare these rows' times with state_changed_at; a server clock that
    # stepped back must not make a legitimate release or reopening look older than the state.
    return max(timestamp(moment or utc_now()), floor)


def _move(
    db: sqlite_utils.Database,
    bearing: dict,
    *,
    new_state: str,
    user_id: int | None,
    kind: str,
    at: str,
    latest_record_uuid: str | None = None,
    detail: dict[str, Any] | None = None,
) -> None:
    """Set state (and optionally the latest record) and write the event, inside a transaction."""
    latest = bearing["latest_record_uuid"] if latest_record_uuid is None else latest_record_uuid
    changed = new_state != bearing["state"]
    db.execute(
        """
        UPDATE bearings SET state = ?, state_changed_at = ?, latest_record_uuid = ?
        WHERE id = ?
        """,
        [new_state, at if changed else bearing["state_changed_at"], latest, bearing["id"]],
    )
    add_event(
        db,
        kind=kind,
        user_id=user_id,
        site_id=bearing["site_id"],
        bearing_id=bearing["id"],
        before={"state": bearing["state"], "latest_record_uuid": bearing["latest_record_uuid"]},
        after={"state": new_state, "latest_record_uuid": latest},
        detail=detail,
    )


# --- bearings and design revisions -------------------------------------------------------------


def add_bearing(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    reference: str,
    location: str,
    design_input: dict[str, Any],
    design_result: dict[str, Any],
    utilisation: float | None,
    passed: bool,
    user_id: int,
) -> dict:
    """Add a bearing at revision 1, 'awaiting survey'. References are unique per site, any case."""
    reference = required_text(reference, "bearing reference")
    bearing_id = new_id()
    now = timestamp()
    with transaction(db):
        if one(db, "SELECT 1 AS x FROM sites WHERE id = ?", [site_id]) is None:
            raise NotFound("No such site")
        try:
            db.execute(
                """
                INSERT INTO bearings (id, site_id, reference, location, revision, design_input,
                    design_result, design_utilisation, design_passed, state, state_changed_at,
                    created_by, created_at)
                VALUES (?, ?, ?, ?, 1, ?, ?, ?, ?, 'awaiting survey', ?, ?, ?)
                """,
                [
                    bearing_id,
                    site_id,
                    reference,
                    (location or "").strip(),
                    to_json(design_input),
                    to_json(design_result),
                    utilisation,
                    int(bool(passed)),
                    now,
                    user_id,
                    now,
                ],
            )
        except sqlite3.IntegrityError as error:
            if "bearings.site_id, bearings.reference" in str(error):
                raise DuplicateReference(
                    f"Bearing reference {reference!r} is already used on this site; choose "
                    "another reference, or revise the existing bearing"
                ) from None
            raise
        _insert_revision(
            db,
            bearing_id,
            1,
            location,
            design_input,
            design_result,
            utilisation,
            passed,
            user_id,
            now,
        )
        add_event(
            db,
            kind="bearing added",
            user_id=user_id,
            site_id=site_id,
            bearing_id=bearing_id,
            after={"reference": reference, "revision": 1, "state": "awaiting survey"},
        )
    return get_bearing(db, site_id=site_id, bearing_id=bearing_id)


def _insert_revision(
    db,
    bearing_id,
    revision,
    location,
    design_input,
    design_result,
    utilisation,
    passed,
    user_id,
    at,
) -> None:
    db.execute(
        """
        INSERT INTO bearing_revisions (bearing_id, revision, location, design_input, design_result,
            design_utilisation, design_passed, created_by, created_at)
        VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)
        """,
        [
            bearing_id,
            revision,
            (location or "").strip(),
            to_json(design_input),
            to_json(design_result),
            utilisation,
            int(bool(passed)),
            user_id,
            at,
        ],
    )


def revise_bearing(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    bearing_id: str,
    expected_revision: int,
    expected_state: str,
    new_state: str,
    design_input: dict[str, Any],
    design_result: dict[str, Any],
    utilisation: float | None,
    passed: bool,
    user_id: int,
    location: str | None = None,
) -> dict:
    """Store a new design revision; earlier ones stay in bearing_revisions.

    ``new_state`` comes from ``workflow.state_after_revision``. ``expected_revision`` stops two
    engineers' edits from overwriting each other.
    """
    _state(new_state)
    with transaction(db):
        bearing = _bearing(db, site_id, bearing_id)
        if bearing["revision"] != expected_revision:
            raise StaleState(
                f"Bearing {bearing['reference']} is at revision {bearing['revision']}, not "
                f"{expected_revision}; reload it and make the change again"
            )
        _expect(bearing, expected_state)
        revision = bearing["revision"] + 1
        location = bearing["location"] if location is None else location.strip()
        now = timestamp()
        db.execute(
            """
            UPDATE bearings SET revision = ?, location = ?, design_input = ?, design_result = ?,
                design_utilisation = ?, design_passed = ?
            WHERE id = ?
            """,
            [
                revision,
                location,
                to_json(design_input),
                to_json(design_result),
                utilisation,
                int(bool(passed)),
                bearing_id,
            ],
        )
        _insert_revision(
            db,
            bearing_id,
            revision,
            location,
            design_input,
            design_result,
            utilisation,
            passed,
            user_id,
            now,
        )
        _move(
            db,
            bearing,
            new_state=new_state,
            user_id=user_id,
            kind="bearing revised",
            at=now,
            detail={
                "revision": {"before": bearing["revision"], "after": revision},
                "design_utilisation": {
                    "before": bearing["design_utilisation"],
                    "after": utilisation,
                },
            },
        )
    return get_bearing(db, site_id=site_id, bearing_id=bearing_id)


def get_bearing(db: sqlite_utils.Database, *, site_id: str, bearing_id: str) -> dict | None:
    return one(db, "SELECT * FROM bearings WHERE id = ? AND site_id = ?", [bearing_id, site_id])


def bearing_by_reference(db: sqlite_utils.Database, *, site_id: str, reference: str) -> dict | None:
    """Find by reference, ignoring case and surrounding spaces (as the schedule import needs)."""
    return one(
        db,
        "SELECT * FROM bearings WHERE site_id = ? AND reference = ?",
        [site_id, (reference or "").strip()],
    )


def list_bearings(
    db: sqlite_utils.Database, *, site_id: str, states: Iterable[str] | None = None
) -> list[dict]:
    """A site's bearings by reference, optionally only those in the given states."""
    if states is None:
        return many(
            db,
            "SELECT * FROM bearings WHERE site_id = ? ORDER BY reference, id",
            [site_id],
        )
    wanted = [_state(s) for s in states]
    if not wanted:
        return []
    return many(
        db,
        f"""
        SELECT * FROM bearings WHERE site_id = ? AND state IN ({placeholders(wanted)})
        ORDER BY reference, id
        """,
        [site_id, *wanted],
    )


def bearing_revisions(db: sqlite_utils.Database, *, site_id: str, bearing_id: str) -> list[dict]:
    """Every design revision of a bearing, oldest first."""
    return many(
        db,
        """
        SELECT v.* FROM bearing_revisions v JOIN bearings b ON b.id = v.bearing_id
        WHERE b.site_id = ? AND v.bearing_id = ? ORDER BY v.revision
        """,
        [site_id, bearing_id],
    )


def releasable(db: sqlite_utils.Database, *, site_id: str) -> list[dict]:
    """Bearings the contractor may release for closing up now."""
    return list_bearings(db, site_id=site_id, states=RELEASABLE_STATES)


def set_state(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    bearing_id: str,
    expected_state: str,
    new_state: str,
    user_id: int | None,
    kind: str = "state changed",
    detail: dict[str, Any] | None = None,
) -> dict:
    """Move a bearing from ``expected_state`` to ``new_state`` and write the event.

    Releasing and reopening have their own functions, which also write their own rows; the
    database refuses them here.
    """
    if RELEASED in (_state(new_state), expected_state):
        raise ValueError("use record_release or record_reopening to move into or out of 'released'")
    with transaction(db):
        bearing = _bearing(db, site_id, bearing_id)
        _expect(bearing, expected_state)
        _move(
            db,
            bearing,
            new_state=new_state,
            user_id=user_id,
            kind=kind,
            at=timestamp(),
            detail=detail,
        )
    return get_bearing(db, site_id=site_id, bearing_id=bearing_id)


# --- as-built records and photos ----------------------------------------------------------------


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
) -> RecordStored:
    """Store an as-built record once per client UUID, and move the bearing's state.

    Sending the same UUID again returns the row first stored, ``created=False``, and changes
    nothing. The same UUID for another bearing or inspector raises ``UuidInUse`` without
    revealing the stored row. A record arriving after release is stored with ``late`` set and
    leaves the bearing released. ``state_after_record`` is ``workflow.state_after_record``:
    it is called with (state, blocking, record is newest) inside the transaction, so two
    records arriving together cannot both decide from the same old state.
    """
    uuid = canonical_uuid(uuid)
    measured = parse_timestamp(measured_at, field="measured_at")
    if blocking < 0:
        raise ValueError(f"blocking {blocking} is negative; count the blocking review reasons")
    with transaction(db):
        bearing = _bearing(db, site_id, bearing_id)
        if not 1 <= design_revision <= bearing["revision"]:
            raise ValueError(
                f"design_revision {design_revision} does not exist for bearing "
                f"{bearing['reference']} (latest is {bearing['revision']}); refresh the site pack"
            )
        received = timestamp(now or utc_now())
        late = bearing["state"] == RELEASED
        cursor = db.execute(
            """
            INSERT INTO as_built_records (uuid, bearing_id, design_revision, inspector_id,
                measured_at, received_at, measurements, checklist, notes, result, reasons,
                utilisation, passed, blocking, late)
            VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)
            ON CONFLICT (uuid) DO NOTHING
            """,
            [
                uuid,
                bearing_id,
                design_revision,
                inspector_id,
                measured,
                received,
                to_json(measurements),
                to_json(checklist or {}),
                (notes or "").strip(),
                to_json(result),
                to_json(reasons),
                utilisation,
                int(bool(passed)),
                blocking,
                int(late),
            ],
        )
        created = cursor.rowcount == 1
        row = one(db, "SELECT * FROM as_built_records WHERE uuid = ?", [uuid])
        if not created:
            if row["bearing_id"] != bearing_id or row["inspector_id"] != inspector_id:
                raise UuidInUse(
                    "This record's UUID is already used by another record; the phone must make "
                    "a new UUID for each record"
                )
            return RecordStored(
                row=get_record(db, site_id=site_id, uuid=uuid),
                created=False,
                state=bearing["state"],
            )
        newest = one(
            db,
            f"SELECT r.uuid FROM as_built_records r WHERE r.bearing_id = ? "
            f"ORDER BY {_NEWEST_FIRST} LIMIT 1",
            [bearing_id],
        )
        is_newest = newest["uuid"] == uuid
        detail = {
            "record_uuid": uuid,
            "newest": is_newest,
            "late": late,
            "design_revision": design_revision,
            "bearing_revision": bearing["revision"],
            "blocking": blocking,
        }
        state = _state(state_after_record(bearing["state"], blocking, is_newest))
        if is_newest and not late:
            _move(
                db,
                bearing,
                new_state=state,
                user_id=inspector_id,
                kind="record received",
                at=received,
                latest_record_uuid=uuid,
                detail=detail,
            )
        elif state != bearing["state"]:
            # The rule moved the state without this record becoming the latest; the lock
            # triggers still refuse this for a released bearing.
            _move(
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
                site_id=site_id,
                bearing_id=bearing_id,
                detail=detail,
            )
    return RecordStored(row=get_record(db, site_id=site_id, uuid=uuid), created=True, state=state)


_RECORD_COLUMNS = """
    r.*, b.site_id,
    r.design_revision < b.revision AS older_revision
"""


def get_record(db: sqlite_utils.Database, *, site_id: str, uuid: str) -> dict | None:
    """One record; ``older_revision`` is True if it was measured against an older design."""
    try:
        uuid = canonical_uuid(uuid)
    except ValueError:
        return None
    return one(
        db,
        f"""
        SELECT {_RECORD_COLUMNS} FROM as_built_records r JOIN bearings b ON b.id = r.bearing_id
        WHERE r.uuid = ? AND b.site_id = ?
        """,
        [uuid, site_id],
    )


def records_for_bearing(db: sqlite_utils.Database, *, site_id: str, bearing_id: str) -> list[dict]:
    """Every record of a bearing, newest by measured time first (the first drives the state)."""
    return many(
        db,
        f"""
        SELECT {_RECORD_COLUMNS} FROM as_built_records r JOIN bearings b ON b.id = r.bearing_id
        WHERE b.site_id = ? AND r.bearing_id = ? ORDER BY {_NEWEST_FIRST}
        """,
        [site_id, bearing_id],
    )


def records_for_site(db: sqlite_utils.Database, *, site_id: str) -> list[dict]:
    """Every record on a site (for the site pack and the data export), by bearing, newest first."""
    return many(
        db,
        f"""
        SELECT {_RECORD_COLUMNS} FROM as_built_records r JOIN bearings b ON b.id = r.bearing_id
        WHERE b.site_id = ? ORDER BY b.reference, r.bearing_id, {_NEWEST_FIRST}
        """,
        [site_id],
    )


def latest_record_summaries(db: sqlite_utils.Database, *, site_id: str) -> dict[str, dict]:
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


def insert_photo(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    uuid: str,
    record_uuid: str,
    sha256: str,
    thumb_sha256: str | None,
    width: int,
    height: int,
    size_bytes: int,
    captured_at: str | datetime | None,
    gps_lat: float | None,
    gps_lon: float | None,
    user_id: int,
) -> Stored:
    """Store a photo's facts once per client UUID (the file itself is stored by its sha256)."""
    uuid = canonical_uuid(uuid)
    record_uuid = canonical_uuid(record_uuid, field="record_uuid")
    captured = None if captured_at is None else parse_timestamp(captured_at, field="captured_at")
    with transaction(db):
        record = get_record(db, site_id=site_id, uuid=record_uuid)
        if record is None:
            raise NotFound(
                "No such as-built record on this site; send the record before its photos"
            )
        cursor = db.execute(
            """
            INSERT INTO photos (uuid, record_uuid, sha256, thumb_sha256, width, height, size_bytes,
                captured_at, gps_lat, gps_lon, created_at)
            VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)
            ON CONFLICT (uuid) DO NOTHING
            """,
            [
                uuid,
                record_uuid,
                sha256,
                thumb_sha256,
                width,
                height,
                size_bytes,
                captured,
                gps_lat,
                gps_lon,
                timestamp(),
            ],
        )
        created = cursor.rowcount == 1
        row = one(db, "SELECT * FROM photos WHERE uuid = ?", [uuid])
        if not created and row["record_uuid"] != record_uuid:
            raise UuidInUse(
                "This photo's UUID is already used by another photo; the phone must make a new "
                "UUID for each photo"
            )
        if created:
            add_event(
                db,
                kind="photo received",
                user_id=user_id,
                site_id=site_id,
                bearing_id=record["bearing_id"],
                detail={"photo_uuid": uuid, "record_uuid": record_uuid, "sha256": sha256},
            )
    return Stored(row=row, created=created)


def get_photo(db: sqlite_utils.Database, *, site_id: str, uuid: str) -> dict | None:
    try:
        uuid = canonical_uuid(uuid)
    except ValueError:
        return None
    return one(
        db,
        """
        SELECT p.*, r.bearing_id FROM photos p
        JOIN as_built_records r ON r.uuid = p.record_uuid JOIN bearings b ON b.id = r.bearing_id
        WHERE p.uuid = ? AND b.site_id = ?
        """,
        [uuid, site_id],
    )


def photos_for_bearing(db: sqlite_utils.Database, *, site_id: str, bearing_id: str) -> list[dict]:
    """Photos of all a bearing's records, in the order they were received."""
    return many(
        db,
        """
        SELECT p.*, r.bearing_id FROM photos p
        JOIN as_built_records r ON r.uuid = p.record_uuid JOIN bearings b ON b.id = r.bearing_id
        WHERE b.site_id = ? AND r.bearing_id = ? ORDER BY p.created_at, p.uuid
        """,
        [site_id, bearing_id],
    )


def photos_for_record(db: sqlite_utils.Database, *, site_id: str, record_uuid: str) -> list[dict]:
    try:
        record_uuid = canonical_uuid(record_uuid, field="record_uuid")
    except ValueError:
        return []
    return many(
        db,
        """
        SELECT p.*, r.bearing_id FROM photos p
        JOIN as_built_records r ON r.uuid = p.record_uuid JOIN bearings b ON b.id = r.bearing_id
        WHERE b.site_id = ? AND p.record_uuid = ? ORDER BY p.created_at, p.uuid
        """,
        [site_id, record_uuid],
    )


# --- decisions, releases, reopenings ------------------------------------------------------------


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
) -> dict:
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
    _state(new_state)
    record_uuid = canonical_uuid(record_uuid, field="record_uuid")
    with transaction(db):
        bearing = _bearing(db, site_id, bearing_id)
        _expect(bearing, expected_state)
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
        _move(
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
    return one(db, "SELECT * FROM decisions WHERE id = ?", [decision_id])


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
) -> dict:
    """Release a bearing for closing up; from now on it is locked.

    The caller checks ``workflow.can_release(expected_state)`` first; the database refuses a
    release from any other state as well.
    """
    contractor_name = required_text(contractor_name, "The contractor's name")
    statement = required_text(statement, "The release statement")
    with transaction(db):
        bearing = _bearing(db, site_id, bearing_id)
        _expect(bearing, expected_state)
        at = _not_before(now, bearing["state_changed_at"])
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
        _move(
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
    return one(db, "SELECT * FROM releases WHERE id = ?", [release_id])


def record_reopening(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    bearing_id: str,
    engineer_id: int,
    reason: str,
    new_state: str,
    now: datetime | None = None,
) -> dict:
    """Reopen a released bearing (``new_state`` from ``workflow.reopen``); both stay on record.

    The newest record, including any that arrived late, becomes the bearing's latest record.
    """
    reason = required_text(reason, "The reason for reopening")
    _state(new_state)
    with transaction(db):
        bearing = _bearing(db, site_id, bearing_id)
        _expect(bearing, RELEASED)
        at = _not_before(now, bearing["state_changed_at"])
        cursor = db.execute(
            """
            INSERT INTO reopenings (bearing_id, engineer_id, reason, created_at)
            VALUES (?, ?, ?, ?)
            """,
            [bearing_id, engineer_id, reason, at],
        )
        reopening_id = cursor.lastrowid
        newest = one(
            db,
            f"SELECT r.uuid FROM as_built_records r WHERE r.bearing_id = ? "
            f"ORDER BY {_NEWEST_FIRST} LIMIT 1",
            [bearing_id],
        )
        _move(
            db,
            bearing,
            new_state=new_state,
            user_id=engineer_id,
            kind="reopening",
            at=at,
            latest_record_uuid=newest["uuid"] if newest else None,
            detail={"reopening": reopening_id, "reason": reason},
        )
    return one(db, "SELECT * FROM reopenings WHERE id = ?", [reopening_id])


def _for_bearing(db, table: str, site_id: str, bearing_id: str) -> list[dict]:
    # table is one of three fixed names below, never from a caller.
    return many(
        db,
        f"""
        SELECT t.* FROM {table} t JOIN bearings b ON b.id = t.bearing_id
        WHERE b.site_id = ? AND t.bearing_id = ? ORDER BY t.created_at, t.id
        """,
        [site_id, bearing_id],
    )


def decisions_for(db: sqlite_utils.Database, *, site_id: str, bearing_id: str) -> list[dict]:
    """A bearing's decisions, oldest first."""
    return _for_bearing(db, "decisions", site_id, bearing_id)


def latest_decisions(db: sqlite_utils.Database, *, site_id: str) -> dict[str, dict]:
    """Each bearing's newest decision on a site, by bearing id, with the engineer's name as
    signed (or as the account is called, for a decision from before names were kept)."""
    rows = many(
        db,
        """
        SELECT d.*, coalesce(d.engineer_name, u.name) AS signed_by FROM decisions d
        JOIN bearings b ON b.id = d.bearing_id LEFT JOIN users u ON u.id = d.engineer_id
        WHERE b.site_id = ? AND d.id = (
            SELECT d2.id FROM decisions d2 WHERE d2.bearing_id = d.bearing_id
            ORDER BY d2.created_at DESC, d2.id DESC LIMIT 1
        )
        """,
        [site_id],
    )
    return {row["bearing_id"]: row for row in rows}


def releases_for(db: sqlite_utils.Database, *, site_id: str, bearing_id: str) -> list[dict]:
    return _for_bearing(db, "releases", site_id, bearing_id)


def reopenings_for(db: sqlite_utils.Database, *, site_id: str, bearing_id: str) -> list[dict]:
    return _for_bearing(db, "reopenings", site_id, bearing_id)


# --- queues -------------------------------------------------------------------------------------


def review_queue(db: sqlite_utils.Database, *, user_id: int) -> list[dict]:
    """Bearings waiting for this user's decision, across the sites where they are engineer.

    Highest utilisation of the latest record first, then most blocking reasons, then
    longest waiting (the review page orders by severity on top of this). Each row is the
    bearing plus ``site_name``, ``utilisation``, ``passed``, ``blocking``, ``measured_at``
    and ``reasons`` of its latest record.
    """
    return many(
        db,
        """
        SELECT b.*, s.name AS site_name, r.utilisation, r.passed, r.blocking, r.measured_at,
               r.reasons, r.design_revision < b.revision AS older_revision
        FROM memberships m
        JOIN sites s ON s.id = m.site_id
        JOIN bearings b ON b.site_id = m.site_id
        LEFT JOIN as_built_records r ON r.uuid = b.latest_record_uuid
        WHERE m.user_id = ? AND m.role = 'engineer' AND b.state = 'engineer to decide'
        ORDER BY r.utilisation DESC NULLS LAST, r.blocking DESC NULLS LAST,
                 b.state_changed_at ASC, b.id
        """,
        [user_id],
    )
