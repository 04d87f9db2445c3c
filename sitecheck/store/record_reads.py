"""Reading a whole site for its record (the PDF and the data export), a batch at a time.

A site of 10,000 bearings holds about 30 KB of stored calculations per bearing; reading it
all at once held hundreds of MB before a line was written. These functions hand out a few
hundred bearings at a time, each with everything the record prints about it, so a caller
that writes as it reads holds one batch at most. Run them inside ``read_snapshot`` so that
every batch comes from the same moment of the database, however long the writing takes.
"""

import contextlib
from collections.abc import Generator, Iterator

import sqlite_utils

from sitecheck.store.base import many, one, placeholders
from sitecheck.store.bearings import _NEWEST_FIRST, _RECORD_COLUMNS

# Bearings read at a time: big enough that the per-query cost vanishes, small enough that a
# batch's decoded calculations (about 100 KB a bearing as Python objects) stay a few tens of MB.
BATCH = 200
EVENTS_BATCH = 2000


@contextlib.contextmanager
def read_snapshot(db: sqlite_utils.Database) -> Generator[sqlite_utils.Database, None, None]:
    """Every read inside the block sees the database as it was at the block's first read.

    A long record (minutes for a large site's PDF) read batch by batch would otherwise mix
    what the site held when it started with what arrived meanwhile. In WAL mode a reader
    blocks no writer; the WAL only grows a little until the block ends.
    """
    if db.conn.in_transaction:
        yield db
        return
    changes = db.conn.total_changes
    db.conn.execute("BEGIN")
    try:
        yield db
    finally:
        if db.conn.in_transaction:
            db.conn.execute("ROLLBACK")  # nothing was written: ending the read is all it does
    if db.conn.total_changes != changes:
        raise RuntimeError(
            "something was written inside read_snapshot and has been rolled back; write on "
            "another connection"
        )


def count_bearings(db: sqlite_utils.Database, *, site_id: str) -> int:
    row = one(db, "SELECT count(*) AS n FROM bearings WHERE site_id = ?", [site_id])
    return row["n"] if row else 0


def bearing_batches(
    db: sqlite_utils.Database, *, site_id: str, size: int | None = None
) -> Iterator[list[dict]]:
    """The site's bearings in reference order, ``size`` at a time, each as a dict:

    ``bearing`` (its row), ``records`` (newest by measured time first), ``photos`` (record
    uuid → its photos, in the order received), ``decisions``, ``releases``, ``reopenings``,
    ``releases_kept`` (each oldest first).
    """
    size = BATCH if size is None else size
    if size < 1:
        raise ValueError(f"batch size must be at least 1; got {size}")
    after: tuple[str, str] | None = None
    while True:
        if after is None:
            bearings = many(
                db,
                "SELECT * FROM bearings WHERE site_id = ? ORDER BY reference, id LIMIT ?",
                [site_id, size],
            )
        else:
            bearings = many(
                db,
                "SELECT * FROM bearings WHERE site_id = ? AND (reference, id) > (?, ?) "
                "ORDER BY reference, id LIMIT ?",
                [site_id, *after, size],
            )
        if not bearings:
            return
        yield _with_their_rows(db, site_id, bearings)
        if len(bearings) < size:
            return
        after = (bearings[-1]["reference"], bearings[-1]["id"])


def _with_their_rows(db: sqlite_utils.Database, site_id: str, bearings: list[dict]) -> list[dict]:
    ids = [b["id"] for b in bearings]
    marks = placeholders(ids)
    records = many(
        db,
        f"""
        SELECT {_RECORD_COLUMNS} FROM as_built_records r JOIN bearings b ON b.id = r.bearing_id
        WHERE b.site_id = ? AND r.bearing_id IN ({marks})
        ORDER BY r.bearing_id, {_NEWEST_FIRST}
        """,
        [site_id, *ids],
    )
    photos = many(
        db,
        f"""
        SELECT p.*, r.bearing_id FROM photos p
        JOIN as_built_records r ON r.uuid = p.record_uuid JOIN bearings b ON b.id = r.bearing_id
        WHERE b.site_id = ? AND r.bearing_id IN ({marks}) ORDER BY p.created_at, p.uuid
        """,
        [site_id, *ids],
    )
    out = {
        b["id"]: {
            "bearing": b,
            "records": [],
            "photos": {},
            "decisions": [],
            "releases": [],
            "reopenings": [],
            "releases_kept": [],
        }
        for b in bearings
    }
    for r in records:
        out[r["bearing_id"]]["records"].append(r)
    for p in photos:
        out[p["bearing_id"]]["photos"].setdefault(p["record_uuid"], []).append(p)
    # Fixed table names, never from a caller.
    for table in ("decisions", "releases", "reopenings", "releases_kept"):
        for row in many(
            db,
            f"""
            SELECT t.* FROM {table} t JOIN bearings b ON b.id = t.bearing_id
            WHERE b.site_id = ? AND t.bearing_id IN ({marks}) ORDER BY t.created_at, t.id
            """,
            [site_id, *ids],
        ):
            out[row["bearing_id"]][table].append(row)
    return [out[i] for i in ids]


def site_events(
    db: sqlite_utils.Database, *, site_id: str, size: int | None = None
) -> Iterator[dict]:
    """Every event of a site, oldest first, read ``size`` at a time."""
    size = EVENTS_BATCH if size is None else size
    after = 0
    while True:
        rows = many(
            db,
            "SELECT * FROM events WHERE site_id = ? AND id > ? ORDER BY id LIMIT ?",
            [site_id, after, size],
        )
        yield from rows
        if len(rows) < size:
            return
        after = rows[-1]["id"]


def count_events(db: sqlite_utils.Database, *, site_id: str) -> int:
    row = one(db, "SELECT count(*) AS n FROM events WHERE site_id = ?", [site_id])
    return row["n"] if row else 0
