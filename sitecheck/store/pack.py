"""The site pack: what the phone keeps of a site for offline use, and what changed since
it last asked."""

import json
from dataclasses import dataclass
from typing import Any

import sqlite_utils

from sitecheck.store.base import Row, many, one, placeholders
from sitecheck.store.bearings import BEARING_ADDED


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
    bearings: list[Row]
    removed: list[str]
    designs: dict[str, dict[str, Any]]


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


def _changed_since(db: sqlite_utils.Database, site_id: str, since: str) -> list[str] | None:
    """Ids of the bearings with an event after the version ``since``, or None when the whole
    pack must be sent (see :func:`pack_rows`)."""
    event_id, _dot, at = since.partition(".")
    if not event_id.isdigit():
        return None
    if event_id == "0" and not at:
        known = True  # the phone's pack was made before the site had any event
    else:
        known = (
            one(
                db,
                "SELECT 1 AS x FROM events WHERE id = ? AND site_id = ? AND at = ?",
                [int(event_id), site_id, at],
            )
            is not None
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
