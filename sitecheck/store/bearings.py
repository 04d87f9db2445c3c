"""A bearing: its row, its design revisions, and how its state moves.

Every read and write takes the ``site_id`` the caller has authorised, and matches it in SQL:
an id from another site behaves exactly like an id that does not exist.

The store knows the state names (the schema checks them) but not the rules for moving between
them; those live in ``sitecheck.workflow``. Functions that change a state either take the new
state from the caller together with the state the caller based it on (``expected_state``:
if the bearing moved meanwhile, ``StaleState`` is raised), or, where the new state depends on
what is stored at that moment, take the rule itself (``state_after_record``).

The bearing's neighbours live beside it, each a job of its own: its as-built records
(``records``) and their photos (``photos``), the engineer's decisions (``decisions``), the
release and what follows it (``releases``), the engineer's queue (``queue``), lists of many
bearings (``lines``) and the site pack (``pack``). The helpers here without a leading
underscore (``existing_bearing``, ``expect_state``, ``move_state``...) are theirs to share;
the package's own names are those ``sitecheck.store`` exports.
"""

import sqlite3
from collections.abc import Iterable
from datetime import datetime
from typing import Any

import sqlite_utils

from sitecheck.store.base import (
    Row,
    many,
    new_id,
    one,
    pack_json,
    placeholders,
    required_text,
    timestamp,
    to_json,
    transaction,
    utc_now,
)
from sitecheck.store.errors import DuplicateReference, NotFound, StaleState
from sitecheck.store.events import add_event
from sitecheck.store.migrations import STATES
from sitecheck.store.survey import reference_order_key

RELEASED = "released"
# Mirrors sitecheck.workflow.can_release (the store may not import the layer above it); a test
# holds the two equal, and a trigger enforces the same rule in the database.
RELEASABLE_STATES = ("within design", "accepted")

# Newest first by the device's measuring time; arrival time and uuid break ties so the order
# (and so which record drives the state) is the same every time it is asked.
NEWEST_FIRST = "r.measured_at DESC, r.received_at DESC, r.uuid DESC"

BEARING_ADDED = "bearing added"  # the event of a new bearing (add_bearing writes it)


def known_state(state: str) -> str:
    if state not in STATES:
        raise ValueError(f"state {state!r} is not one of {', '.join(STATES)}")
    return state


def existing_bearing(db: sqlite_utils.Database, site_id: str, bearing_id: str) -> Row:
    bearing = get_bearing(db, site_id=site_id, bearing_id=bearing_id)
    if bearing is None:
        raise NotFound("No such bearing on this site")
    return bearing


def bearing_to_move(db: sqlite_utils.Database, site_id: str, bearing_id: str) -> Row:
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


def expect_state(bearing: Row, expected_state: str) -> None:
    if bearing["state"] != expected_state:
        raise StaleState(
            f"Bearing {bearing['reference']} is now '{bearing['state']}', "
            f"not '{expected_state}'; reload it and look again"
        )


def not_before(moment: datetime | None, floor: str) -> str:
    # The lock triggers compare these rows' times with state_changed_at; a server clock that
    # stepped back must not make a legitimate release or reopening look older than the state.
    return max(timestamp(moment or utc_now()), floor)


def move_state(
    db: sqlite_utils.Database,
    bearing: Row,
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
) -> Row:
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
    return existing_bearing(db, site_id, bearing_id)


def _insert_revision(
    db: sqlite_utils.Database,
    bearing_id: str,
    revision: int,
    location: str | None,
    design_input: dict[str, Any],
    design_result: dict[str, Any],
    utilisation: float | None,
    passed: bool,
    user_id: int,
    at: str,
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
) -> Row:
    """Store a new design revision; earlier ones stay in bearing_revisions.

    ``new_state`` comes from ``workflow.state_after_revision``. ``expected_revision`` stops two
    engineers' edits from overwriting each other.
    """
    known_state(new_state)
    with transaction(db):
        bearing = existing_bearing(db, site_id, bearing_id)
        if bearing["revision"] != expected_revision:
            raise StaleState(
                f"Bearing {bearing['reference']} is at revision {bearing['revision']}, not "
                f"{expected_revision}; reload it and make the change again"
            )
        expect_state(bearing, expected_state)
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
        move_state(
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
    return existing_bearing(db, site_id, bearing_id)


# A bearing with its current design result, which is kept on its design revision only.
_WITH_RESULT = """
    SELECT b.*, v.design_result FROM bearings b
    JOIN bearing_revisions v ON v.bearing_id = b.id AND v.revision = b.revision
"""


def get_bearing(
    db: sqlite_utils.Database, *, site_id: str, bearing_id: str, with_result: bool = False
) -> Row | None:
    """A bearing; ``with_result`` adds its current ``design_result`` (the whole trace, to
    show the calculation: every other use has the governing check, utilisation and verdict
    in the bearing's own columns)."""
    if with_result:
        return one(db, f"{_WITH_RESULT} WHERE b.id = ? AND b.site_id = ?", [bearing_id, site_id])
    return one(db, "SELECT * FROM bearings WHERE id = ? AND site_id = ?", [bearing_id, site_id])


def bearing_by_reference(
    db: sqlite_utils.Database, *, site_id: str, reference: str, with_result: bool = False
) -> Row | None:
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
) -> list[Row]:
    """A site's bearings by reference, each with its whole design result, optionally only
    those in the given states: for the site record and the data export. Lists use
    :func:`bearing_lines`, which unpacks nothing."""
    if states is None:
        return many(
            db,
            f"{_WITH_RESULT} WHERE b.site_id = ? ORDER BY b.reference, b.id",
            [site_id],
        )
    wanted = [known_state(s) for s in states]
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


def bearing_revisions(db: sqlite_utils.Database, *, site_id: str, bearing_id: str) -> list[Row]:
    """Every design revision of a bearing, oldest first."""
    return many(
        db,
        """
        SELECT v.* FROM bearing_revisions v JOIN bearings b ON b.id = v.bearing_id
        WHERE b.site_id = ? AND v.bearing_id = ? ORDER BY v.revision
        """,
        [site_id, bearing_id],
    )


def releasable(db: sqlite_utils.Database, *, site_id: str) -> list[Row]:
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
) -> Row:
    """Move a bearing from ``expected_state`` to ``new_state`` and write the event.

    Releasing and reopening have their own functions, which also write their own rows; the
    database refuses them here.
    """
    if RELEASED in (known_state(new_state), expected_state):
        raise ValueError("use record_release or record_reopening to move into or out of 'released'")
    with transaction(db):
        bearing = existing_bearing(db, site_id, bearing_id)
        expect_state(bearing, expected_state)
        move_state(
            db,
            bearing,
            new_state=new_state,
            user_id=user_id,
            kind=kind,
            at=timestamp(),
            detail=detail,
        )
    return existing_bearing(db, site_id, bearing_id)


def newest_record_uuid(db: sqlite_utils.Database, bearing_id: str) -> str | None:
    """The uuid of the bearing's record that drives its state (None: nothing recorded)."""
    newest = one(
        db,
        f"SELECT r.uuid FROM as_built_records r WHERE r.bearing_id = ? "
        f"ORDER BY {NEWEST_FIRST} LIMIT 1",
        [bearing_id],
    )
    return newest["uuid"] if newest else None


def rows_of_bearing(
    db: sqlite_utils.Database, table: str, site_id: str, bearing_id: str
) -> list[Row]:
    """A bearing's rows of ``table``, oldest first. ``table`` is always one of the store's
    fixed names (decisions, releases, reopenings, releases_kept), never a caller's text."""
    return many(
        db,
        f"""
        SELECT t.* FROM {table} t JOIN bearings b ON b.id = t.bearing_id
        WHERE b.site_id = ? AND t.bearing_id = ? ORDER BY t.created_at, t.id
        """,
        [site_id, bearing_id],
    )
