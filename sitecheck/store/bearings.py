"""Bearings, their design revisions, as-built records, photos, decisions, releases, reopenings.

Every read and write takes the ``site_id`` the caller has authorised, and matches it in SQL:
an id from another site behaves exactly like an id that does not exist.

The store knows the state names (the schema checks them) but not the rules for moving between
them; those live in ``sitecheck.workflow``. Functions that change a state either take the new
state from the caller together with the state the caller based it on (``expected_state``:
if the bearing moved meanwhile, ``StaleState`` is raised), or, where the new state depends on
what is stored at that moment, take the rule itself (``state_after_record``).
"""

import json
import sqlite3
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from datetime import datetime
from typing import Any

import sqlite_utils

from sitecheck.store.base import (
    canonical_uuid,
    decode_row,
    many,
    new_id,
    one,
    pack_json,
    parse_timestamp,
    placeholders,
    required_text,
    rows,
    timestamp,
    to_json,
    transaction,
    utc_now,
)
from sitecheck.store.errors import (
    DuplicateReference,
    NotFound,
    SameIdOtherValues,
    StaleState,
    TooManyPhotos,
    UuidInUse,
)
from sitecheck.store.events import add_event
from sitecheck.store.migrations import DECISION_KINDS, STATES
from sitecheck.store.survey import reference_order_key

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


def _bearing_to_move(db: sqlite_utils.Database, site_id: str, bearing_id: str) -> dict:
    """The bearing as a move reads it (state, revision, latest record), without its design:
    a record's transaction reads it again, as it stands once the write lock is held."""
    bearing = one(
        db,
        """
        SELECT id, site_id, reference, revision, state, state_changed_at, latest_record_uuid
        FROM bearings WHERE id = ? AND site_id = ?
        """,
        [bearing_id, site_id],
    )
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
    if new_state != bearing["state"]:
        db.execute(
            """
            UPDATE bearings SET state = ?, state_changed_at = ?, latest_record_uuid = ?
            WHERE id = ?
            """,
            [new_state, at, latest, bearing["id"]],
        )
    else:
        # A state left as it was is not written: the indexes and guards on the state (four
        # indexes, the hold point's trigger) then have nothing to do, as most records
        # leave the state where it was.
        db.execute(
            "UPDATE bearings SET latest_record_uuid = ? WHERE id = ?", [latest, bearing["id"]]
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
                    design_governing, design_governing_title, design_utilisation, design_passed,
                    state, state_changed_at, created_by, created_at, reference_key)
                VALUES (?, ?, ?, ?, 1, ?, ?, ?, ?, ?, 'awaiting survey', ?, ?, ?, ?)
                """,
                [
                    bearing_id,
                    site_id,
                    reference,
                    (location or "").strip(),
                    to_json(design_input),
                    *governing_of(design_result),
                    utilisation,
                    int(bool(passed)),
                    now,
                    user_id,
                    now,
                    reference_order_key(reference),
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
            kind=BEARING_ADDED,
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
            pack_json(design_result),
            utilisation,
            int(bool(passed)),
            user_id,
            at,
        ],
    )


def governing_of(result: dict[str, Any]) -> tuple[str | None, str | None]:
    """The governing check's code and title in a calculation's result, kept beside the
    packed trace so that lists need not unpack it."""
    code = result.get("governing")
    title = next((c.get("title") for c in result.get("checks", ()) if c.get("code") == code), None)
    return code, title


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
            UPDATE bearings SET revision = ?, location = ?, design_input = ?,
                design_governing = ?, design_governing_title = ?, design_utilisation = ?,
                design_passed = ?
            WHERE id = ?
            """,
            [
                revision,
                location,
                to_json(design_input),
                *governing_of(design_result),
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


# A bearing with its current design result, which is kept on its design revision only.
_WITH_RESULT = """
    SELECT b.*, v.design_result FROM bearings b
    JOIN bearing_revisions v ON v.bearing_id = b.id AND v.revision = b.revision
"""


def get_bearing(
    db: sqlite_utils.Database, *, site_id: str, bearing_id: str, with_result: bool = False
) -> dict | None:
    """A bearing; ``with_result`` adds its current ``design_result`` (the whole trace, to
    show the calculation: every other use has the governing check, utilisation and verdict
    in the bearing's own columns)."""
    if with_result:
        return one(db, f"{_WITH_RESULT} WHERE b.id = ? AND b.site_id = ?", [bearing_id, site_id])
    return one(db, "SELECT * FROM bearings WHERE id = ? AND site_id = ?", [bearing_id, site_id])


def bearing_by_reference(
    db: sqlite_utils.Database, *, site_id: str, reference: str, with_result: bool = False
) -> dict | None:
    """Find by reference, ignoring case and surrounding spaces (as the schedule import needs);
    ``with_result`` as for :func:`get_bearing`."""
    select = _WITH_RESULT if with_result else "SELECT b.* FROM bearings b"
    return one(
        db,
        f"{select} WHERE b.site_id = ? AND b.reference = ?",
        [site_id, (reference or "").strip()],
    )


def list_bearings(
    db: sqlite_utils.Database, *, site_id: str, states: Iterable[str] | None = None
) -> list[dict]:
    """A site's bearings by reference, each with its whole design result, optionally only
    those in the given states: for the site record and the data export. Lists use
    :func:`bearing_lines`, which unpacks nothing."""
    if states is None:
        return many(
            db,
            f"{_WITH_RESULT} WHERE b.site_id = ? ORDER BY b.reference, b.id",
            [site_id],
        )
    wanted = [_state(s) for s in states]
    if not wanted:
        return []
    return many(
        db,
        f"""
        {_WITH_RESULT} WHERE b.site_id = ? AND b.state IN ({placeholders(wanted)})
        ORDER BY b.reference, b.id
        """,
        [site_id, *wanted],
    )


# --- lists: what a page of many bearings shows, never a trace -----------------------------------

_LINE = """
    b.id, b.reference, b.location, b.state, b.revision, b.design_utilisation, b.design_passed,
    b.design_governing, b.design_governing_title, b.latest_record_uuid, b.state_changed_at
"""
_LATEST = """
    r.measured_at AS latest_measured_at, r.utilisation AS latest_utilisation,
    r.passed AS latest_passed, r.blocking AS latest_blocking,
    r.design_revision < b.revision AS latest_older_revision
"""


def _line_filter(
    site_id: str, states: Iterable[str] | None, words: Iterable[str]
) -> tuple[str, list]:
    """WHERE for a site's bearings in ``states`` whose reference or location holds every one
    of ``words`` (compared as Python lowers text, as the survey list's search does)."""
    where, params = ["b.site_id = ?"], [site_id]
    if states is not None:
        wanted = [_state(s) for s in states]
        where.append(f"b.state IN ({placeholders(wanted)})" if wanted else "0")
        params += wanted
    for word in words:
        where.append("instr(sitecheck_lower(b.reference || ' ' || b.location), ?) > 0")
        params.append(word.lower())
    return " AND ".join(where), params


def bearing_lines(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    states: Iterable[str] | None = None,
    words: Iterable[str] = (),
    with_latest: bool = False,
    limit: int | None = None,
    offset: int = 0,
) -> list[dict]:
    """A site's bearings by reference, as a list shows them: the governing check's code and
    title, the design's utilisation and verdict, and with ``with_latest`` the latest record's
    ``latest_measured_at``, ``latest_utilisation``, ``latest_passed``, ``latest_blocking``
    and ``latest_older_revision`` (None when nothing was recorded). Only those in ``states``
    and matching every one of ``words``, if given; ``limit`` and ``offset`` give one page."""
    where, params = _line_filter(site_id, states, list(words))
    latest = f", {_LATEST}" if with_latest else ""
    join = "LEFT JOIN as_built_records r ON r.uuid = b.latest_record_uuid" if with_latest else ""
    page = ""
    if limit is not None:
        page = "LIMIT ? OFFSET ?"
        params += [limit, offset]
    return many(
        db,
        f"SELECT {_LINE}{latest} FROM bearings b {join} WHERE {where} "
        f"ORDER BY b.reference, b.id {page}",
        params,
    )


def count_bearing_lines(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    states: Iterable[str] | None = None,
    words: Iterable[str] = (),
) -> int:
    """How many bearings :func:`bearing_lines` would list with no page."""
    where, params = _line_filter(site_id, states, list(words))
    return one(db, f"SELECT count(*) AS n FROM bearings b WHERE {where}", params)["n"]


def bearing_counts(db: sqlite_utils.Database, *, site_id: str) -> dict:
    """A site's bearings counted: ``states`` (every state, 0 where none) and
    ``failing_at_design``."""
    counts = dict.fromkeys(STATES, 0)
    failing = 0
    for row in rows(
        db,
        "SELECT state, count(*) AS n, sum(design_passed = 0) AS failing FROM bearings "
        "WHERE site_id = ? GROUP BY state",
        [site_id],
    ):
        counts[row["state"]] = row["n"]
        failing += row["failing"]
    return {"states": counts, "failing_at_design": failing}


# --- the site pack: what the phone keeps, and what changed since it last asked ----------------

BEARING_ADDED = "bearing added"  # the event of a new bearing (add_bearing writes it)


@dataclass(frozen=True)
class PackRows:
    """A site's bearings for the site pack, as of ``version``.

    ``full``: ``bearings`` holds every bearing; otherwise only those changed since the
    version the phone holds, and ``removed`` the ids it holds that are gone. Each bearing
    carries its design input as stored (``design_input_json``, text): bearings of one design
    share it, and ``designs`` decodes each distinct text once.
    """

    version: str
    full: bool
    bearings: list[dict]
    removed: list[str]
    designs: dict[str, dict]


_PACK_LINE = """
    b.id, b.reference, b.location, b.state, b.revision, b.design_input AS design_input_json,
    b.design_utilisation, b.design_passed, b.design_governing
"""


def pack_rows(db: sqlite_utils.Database, *, site_id: str, since: str | None = None) -> PackRows:
    """The site pack's bearings: all of them, or, given the ``version`` of a pack the phone
    holds, those changed since.

    A version names the site's newest event when the pack was made, by id and time. Every
    change to a bearing writes an event on it, so the bearings changed since are those with
    a later event. The whole pack is sent instead when the version is not one of this
    site's events as written (a database restored from a backup, a pack from elsewhere) and
    when a bearing was added since (every bearing's place in the survey order may move).
    Read in one snapshot, so the version and the rows agree.
    """
    outer = db.conn.in_transaction
    if not outer:
        db.conn.execute("BEGIN")
    try:
        newest = one(
            db, "SELECT id, at FROM events WHERE site_id = ? ORDER BY id DESC LIMIT 1", [site_id]
        )
        version = f"{newest['id']}.{newest['at']}" if newest else "0."
        changed = _changed_since(db, site_id, since) if since else None
        if changed is None:
            lines = many(
                db,
                # By reference, as every list of the site: the survey order breaks ties so.
                f"SELECT {_PACK_LINE} FROM bearings b WHERE b.site_id = ? "
                "ORDER BY b.reference, b.id",
                [site_id],
            )
            removed: list[str] = []
        else:
            lines = []
            for start in range(0, len(changed), 400):
                batch = changed[start : start + 400]
                lines += many(
                    db,
                    f"SELECT {_PACK_LINE} FROM bearings b WHERE b.site_id = ? "
                    f"AND b.id IN ({placeholders(batch)})",
                    [site_id, *batch],
                )
            found = {line["id"] for line in lines}
            removed = [bid for bid in changed if bid not in found]
    finally:
        if not outer:
            db.conn.execute("COMMIT")
    designs = {text: json.loads(text) for text in {line["design_input_json"] for line in lines}}
    return PackRows(version, changed is None, lines, removed, designs)


def _changed_since(db, site_id: str, since: str) -> list[str] | None:
    """Ids of the bearings with an event after the version ``since``, or None when the whole
    pack must be sent (see :func:`pack_rows`)."""
    event_id, _dot, at = since.partition(".")
    if not event_id.isdigit():
        return None
    if event_id == "0" and not at:
        known = True  # the phone's pack was made before the site had any event
    else:
        known = one(
            db,
            "SELECT 1 AS x FROM events WHERE id = ? AND site_id = ? AND at = ?",
            [int(event_id), site_id, at],
        )
    if not known:
        return None
    changed = many(
        db,
        """
        SELECT bearing_id, max(kind = ?) AS added FROM events
        WHERE site_id = ? AND id > ? AND bearing_id IS NOT NULL GROUP BY bearing_id
        """,
        [BEARING_ADDED, site_id, int(event_id)],
    )
    if any(row["added"] for row in changed):
        return None
    return sorted(row["bearing_id"] for row in changed)


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
    with transaction(db):
        bearing = _bearing_to_move(db, site_id, bearing_id)
        if not 1 <= design_revision <= bearing["revision"]:
            raise ValueError(
                f"design_revision {design_revision} does not exist for bearing "
                f"{bearing['reference']} (latest is {bearing['revision']}); refresh the site pack"
            )
        received = timestamp(now or utc_now())
        late = bearing["state"] == RELEASED
        # The row as stored comes back from the insert itself (nothing when the id is taken):
        # the answer is built from it, with no second read.
        cursor = db.execute(
            f"""
            INSERT INTO as_built_records (uuid, bearing_id, design_revision, inspector_id,
                measured_at, received_at, measurements, checklist, notes, result, governing,
                reasons, utilisation, passed, blocking, late, why_not_measured)
            VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)
            ON CONFLICT (uuid) DO NOTHING
            RETURNING {_RECORD_LINE_OWN}
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
                pack_json(result),
                result.get("governing"),
                to_json(reasons),
                utilisation,
                int(bool(passed)),
                blocking,
                int(late),
                why_not_measured,
            ],
        )
        inserted = cursor.fetchone()
        created = inserted is not None
        if not created:
            row = one(db, f"SELECT {_RECORD_LINE} FROM as_built_records r WHERE r.uuid = ?", [uuid])
            if row["bearing_id"] != bearing_id or row["inspector_id"] != inspector_id:
                raise UuidInUse(
                    "This record's UUID is already used by another record; the phone must make "
                    "a new UUID for each record"
                )
            sent = {
                "design_revision": design_revision,
                "measured_at": measured,
                "measurements": measurements,
                "checklist": checklist or {},
                "notes": (notes or "").strip(),
                "why_not_measured": why_not_measured,
            }
            differs = tuple(name for name, value in sent.items() if not _same(value, row[name]))
            if differs:
                raise SameIdOtherValues(
                    "An as-built record with this id was already stored with other values ("
                    + ", ".join(_FIELD_WORDS[name] for name in differs)
                    + "). These values were not stored: record the bearing again from them, "
                    "which gives the record a new id.",
                    differs,
                )
            return RecordStored(
                row=record_line(db, site_id=site_id, uuid=uuid),
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
        if late:
            _add_after_release(db, bearing_id, record_uuid=uuid, received=received)
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
    row = decode_row(
        {
            **dict(zip(_RECORD_LINE_KEYS, inserted, strict=True)),
            "site_id": site_id,
            "older_revision": design_revision < bearing["revision"],
        }
    )
    return RecordStored(row=row, created=True, state=state)


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


_RECORD_COLUMNS = """
    r.*, b.site_id,
    r.design_revision < b.revision AS older_revision
"""


# A record without its packed result: what a list or an answer shows of it.
_RECORD_LINE_KEYS = (
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
_RECORD_LINE = ", ".join(f"r.{key}" for key in _RECORD_LINE_KEYS)
# The same of the row an insert returns (RETURNING names its table's columns bare).
_RECORD_LINE_OWN = ", ".join(_RECORD_LINE_KEYS)


def record_line(db: sqlite_utils.Database, *, site_id: str, uuid: str) -> dict | None:
    """One record as :func:`get_record` gives it, but for its ``result``: the governing check
    (``governing``), utilisation, verdict and reasons are columns of their own."""
    try:
        uuid = canonical_uuid(uuid)
    except ValueError:
        return None
    return one(
        db,
        f"""
        SELECT {_RECORD_LINE}, b.site_id, r.design_revision < b.revision AS older_revision
        FROM as_built_records r JOIN bearings b ON b.id = r.bearing_id
        WHERE r.uuid = ? AND b.site_id = ?
        """,
        [uuid, site_id],
    )


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
    upload_sha256: str | None = None,
    max_photos: int | None = None,
    keep_files: Callable[[], None] | None = None,
) -> Stored:
    """Store a photo's facts once per client UUID (the file itself is stored by its sha256).

    Everything is decided inside one write transaction, in this order: the same UUID again
    with the same upload returns the row first stored (``created=False``) and writes nothing;
    the same UUID for another record raises ``UuidInUse``, with another picture
    ``SameIdOtherValues``; a record that already has ``max_photos`` raises ``TooManyPhotos``.
    Only then is ``keep_files`` called (it writes the picture's files) and the row inserted,
    so a refused photo never writes a file, and two uploads at once cannot both be the last
    one a record may take.
    """
    uuid = canonical_uuid(uuid)
    record_uuid = canonical_uuid(record_uuid, field="record_uuid")
    captured = None if captured_at is None else parse_timestamp(captured_at, field="captured_at")
    with transaction(db):
        record = get_record(db, site_id=site_id, uuid=record_uuid)
        if record is None:
            raise NotFound(
                "No such as-built record on this site; send the record before its photos"
            )
        row = one(db, "SELECT * FROM photos WHERE uuid = ?", [uuid])
        if row is not None:
            if row["record_uuid"] != record_uuid:
                raise UuidInUse(
                    "This photo's UUID is already used by another photo; the phone must make a "
                    "new UUID for each photo"
                )
            if _other_picture(row, upload_sha256, sha256):
                raise SameIdOtherValues(
                    "A photo with this id was already stored with another picture. This "
                    "picture was not stored: add it to the record again, which gives it a new "
                    "id.",
                    ("picture",),
                )
            return Stored(row=row, created=False)
        if max_photos is not None:
            count = one(
                db, "SELECT count(*) AS n FROM photos WHERE record_uuid = ?", [record_uuid]
            )["n"]
            if count >= max_photos:
                raise TooManyPhotos(
                    f"At most {max_photos} photos for one as-built record; this record has "
                    f"{count} already, so this photo was not stored."
                )
        if keep_files is not None:
            keep_files()
        db.execute(
            """
            INSERT INTO photos (uuid, record_uuid, sha256, thumb_sha256, width, height, size_bytes,
                captured_at, gps_lat, gps_lon, created_at, upload_sha256)
            VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)
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
                upload_sha256,
            ],
        )
        row = one(db, "SELECT * FROM photos WHERE uuid = ?", [uuid])
        detail = {"photo_uuid": uuid, "record_uuid": record_uuid, "sha256": sha256}
        state = one(db, "SELECT state FROM bearings WHERE id = ?", [record["bearing_id"]])
        if state["state"] == RELEASED:
            # Kept, and listed for the engineer: the release may rest on this very record.
            _add_after_release(
                db,
                record["bearing_id"],
                record_uuid=record_uuid,
                photo_uuid=uuid,
                received=row["created_at"],
            )
            detail["after_release"] = True
        add_event(
            db,
            kind="photo received",
            user_id=user_id,
            site_id=site_id,
            bearing_id=record["bearing_id"],
            detail=detail,
        )
    return Stored(row=row, created=True)


def _add_after_release(
    db, bearing_id: str, *, record_uuid: str, received: str, photo_uuid: str | None = None
) -> None:
    release = one(db, "SELECT max(id) AS id FROM releases WHERE bearing_id = ?", [bearing_id])
    db.execute(
        """
        INSERT INTO after_release_evidence (bearing_id, release_id, record_uuid, photo_uuid,
            received_at)
        VALUES (?, ?, ?, ?, ?)
        """,
        [bearing_id, release["id"], record_uuid, photo_uuid, received],
    )


def _other_picture(row: dict, upload_sha256: str | None, sha256: str) -> bool:
    # Rows stored before uploads were hashed compare by the picture kept, which the same
    # upload always gives again.
    if row["upload_sha256"] is not None and upload_sha256 is not None:
        return row["upload_sha256"] != upload_sha256
    return row["sha256"] != sha256


def photo_files_in_use(db: sqlite_utils.Database, shas: Iterable[str]) -> set[str]:
    """Which of these picture hashes a stored photo names (as its picture or thumbnail).

    Across every site: files are shared by content, so a file is free to remove only when
    no row anywhere names it.
    """
    wanted = list(dict.fromkeys(shas))
    found: set[str] = set()
    for start in range(0, len(wanted), 400):
        batch = wanted[start : start + 400]
        marks = placeholders(batch)
        found.update(
            r["sha"]
            for r in db.query(
                f"SELECT sha256 AS sha FROM photos WHERE sha256 IN ({marks}) "
                f"UNION SELECT thumb_sha256 FROM photos WHERE thumb_sha256 IN ({marks})",
                [*batch, *batch],
            )
        )
    return found


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


def latest_decisions(
    db: sqlite_utils.Database, *, site_id: str, bearing_id: str | None = None
) -> dict[str, dict]:
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


def releases_for(db: sqlite_utils.Database, *, site_id: str, bearing_id: str) -> list[dict]:
    return _for_bearing(db, "releases", site_id, bearing_id)


def reopenings_for(db: sqlite_utils.Database, *, site_id: str, bearing_id: str) -> list[dict]:
    return _for_bearing(db, "reopenings", site_id, bearing_id)


# --- evidence recorded after release ----------------------------------------------------------

# Evidence for bearing b (alias) not yet answered: recorded since its current release, and
# after the last time the engineer kept that release. Reopening ends the release, so it
# answers everything recorded before it.
_OPEN_EVIDENCE = """
    e.bearing_id = b.id AND b.state = 'released'
    AND e.release_id = (SELECT max(x.id) FROM releases x WHERE x.bearing_id = b.id)
    AND e.id > coalesce(
        (SELECT max(k.evidence_up_to) FROM releases_kept k
         WHERE k.bearing_id = b.id AND k.release_id = e.release_id), 0)
"""


def after_release_evidence(
    db: sqlite_utils.Database, *, site_id: str, bearing_id: str
) -> list[dict]:
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
        WHERE b.site_id = ? AND b.id = ? AND {_OPEN_EVIDENCE}
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
) -> dict:
    """The engineer has looked at what was recorded after release and keeps the release.

    ``seen_up_to`` is the newest evidence the engineer saw (its id): if more arrived since,
    ``StaleState``, so a release is never kept over evidence nobody looked at.
    """
    reason = required_text(reason, "The reason for keeping the release")
    with transaction(db):
        bearing = _bearing(db, site_id, bearing_id)
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
    return one(db, "SELECT * FROM releases_kept WHERE id = ?", [kept_id])


def releases_kept_for(db: sqlite_utils.Database, *, site_id: str, bearing_id: str) -> list[dict]:
    """The engineer's answers keeping a bearing's release after later evidence, oldest first."""
    return _for_bearing(db, "releases_kept", site_id, bearing_id)


# --- queues -------------------------------------------------------------------------------------


def review_queue(db: sqlite_utils.Database, *, user_id: int) -> list[dict]:
    """Bearings waiting for this user's decision, across the sites where they are engineer:
    those 'engineer to decide', and released ones with evidence recorded after release that
    the engineer has not answered yet.

    Highest utilisation first (of the latest record, or of the worst record after release),
    then most blocking reasons, then longest waiting (the review page orders by severity on
    top of this). Each row is the bearing (without its design and trace, which a queue of a
    thousand would read for nothing) plus ``site_name``, ``utilisation``, ``passed``,
    ``blocking``, ``measured_at`` and ``reasons`` of its latest record, and
    ``records_after_release``, ``photos_after_release``, ``worst_after_release``,
    ``first_after_release`` (None when nothing is waiting).
    """
    return many(
        db,
        f"""
        SELECT b.id, b.site_id, b.reference, b.location, b.revision, b.state,
               b.state_changed_at, b.latest_record_uuid,
               s.name AS site_name, r.utilisation, r.passed, r.blocking, r.measured_at,
               r.reasons, r.design_revision < b.revision AS older_revision,
               ev.records_after_release, ev.photos_after_release, ev.worst_after_release,
               ev.first_after_release
        FROM memberships m
        JOIN sites s ON s.id = m.site_id
        JOIN bearings b ON b.site_id = m.site_id
        LEFT JOIN as_built_records r ON r.uuid = b.latest_record_uuid
        LEFT JOIN (
            SELECT e.bearing_id,
                   count(CASE WHEN e.photo_uuid IS NULL THEN 1 END) AS records_after_release,
                   count(e.photo_uuid) AS photos_after_release,
                   max(CASE WHEN e.photo_uuid IS NULL THEN er.utilisation END)
                       AS worst_after_release,
                   min(e.received_at) AS first_after_release
            FROM after_release_evidence e
            JOIN bearings b ON b.id = e.bearing_id
            JOIN as_built_records er ON er.uuid = e.record_uuid
            WHERE {_OPEN_EVIDENCE}
            GROUP BY e.bearing_id
        ) ev ON ev.bearing_id = b.id
        WHERE m.user_id = ? AND m.role = 'engineer'
          AND (b.state = 'engineer to decide' OR ev.bearing_id IS NOT NULL)
        ORDER BY coalesce(ev.worst_after_release, r.utilisation) DESC NULLS LAST,
                 r.blocking DESC NULLS LAST, b.state_changed_at ASC, b.id
        """,
        [user_id],
    )
