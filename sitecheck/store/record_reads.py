"""Reading a whole site for its record (the PDF and the data export), a batch at a time.

A site of 10,000 bearings holds about 30 KB of stored calculations per bearing; reading it
all at once held hundreds of MB before a line was written. These functions hand out a few
hundred bearings at a time, each with everything the record prints about it, so a caller
that writes as it reads holds one batch at most. Run them inside ``read_snapshot`` so that
every batch comes from the same moment of the database, however long the writing takes.
"""

import contextlib
import json
from collections.abc import Callable, Generator, Iterator
from dataclasses import dataclass
from datetime import date, timedelta
from typing import Any

import sqlite_utils

from sitecheck.store.base import Params, Row, decoded, many, one, placeholders
from sitecheck.store.bearings import NEWEST_FIRST
from sitecheck.store.migrations import STATES
from sitecheck.store.records import RECORD_COLUMNS

# Bearings read at a time: big enough that the per-query cost vanishes, small enough that a
# batch's decoded calculations (about 100 KB a bearing as Python objects) stay a few tens of MB.
BATCH = 200
EVENTS_BATCH = 2000
# What a light walk leaves out: the design and the calculations, most of a bearing's bytes
# and nearly all the time spent reading it.
HEAVY = frozenset({"design_input", "design_result", "result", "reasons"})
# What a bearing's history holds that a date range can pick it by: each table's time.
_DATED = (
    ("as_built_records", "measured_at"),
    ("decisions", "created_at"),
    ("releases", "created_at"),
    ("reopenings", "created_at"),
)


@dataclass(frozen=True)
class Selection:
    """Part of a site, for a record of that part: bearings whose reference or location
    contains ``words`` (a level or an area: "GF", "level 3", "block B"; any letter case of
    the letters A to Z),
    in one of ``states``, and with anything in their history (an as-built record measured,
    a decision, a release, a reopening) from ``since`` to ``until``, both days included (UTC).
    Each is left out (None, or no states) to not select by it."""

    words: str | None = None
    states: tuple[str, ...] = ()
    since: date | None = None
    until: date | None = None

    def __post_init__(self) -> None:
        if self.words is not None and not self.words.strip():
            raise ValueError("words is empty; give a word of the reference or location, or None")
        unknown = [s for s in self.states if s not in STATES]
        if unknown:
            raise ValueError(f"states {unknown} are not states; each is one of {STATES}")
        if self.since and self.until and self.until < self.since:
            raise ValueError(f"until {self.until} is before since {self.since}")

    @property
    def whole(self) -> bool:
        return not (self.words or self.states or self.since or self.until)

    def key(self) -> str:
        """The same text for the same selection (the whole site: empty), to find a record
        made of it before."""
        if self.whole:
            return ""
        return json.dumps(
            {
                "words": self.words.strip() if self.words else None,
                "states": sorted(set(self.states)),
                "since": self.since.isoformat() if self.since else None,
                "until": self.until.isoformat() if self.until else None,
            },
            sort_keys=True,
        )

    @classmethod
    def from_key(cls, key: str) -> "Selection":
        if not key:
            return cls()
        values = json.loads(key)
        return cls(
            words=values["words"],
            states=tuple(values["states"]),
            since=date.fromisoformat(values["since"]) if values["since"] else None,
            until=date.fromisoformat(values["until"]) if values["until"] else None,
        )

    def _range(self) -> tuple[str, str]:
        """Stored times (fixed-width UTC text) from the first day's start to the day after
        the last's: text order is time order."""
        start = f"{self.since.isoformat()}T00:00:00.000000Z" if self.since else ""
        end = (
            f"{(self.until + timedelta(days=1)).isoformat()}T00:00:00.000000Z"
            if self.until
            else "~"
        )
        return start, end

    def where(self) -> tuple[str, list[Any]]:
        """SQL conditions on the bearings ``b`` this selection keeps, and their values."""
        sql, values = [], []
        if self.words:
            pattern = "%" + _like_escaped(self.words.strip()) + "%"
            sql.append("(b.reference LIKE ? ESCAPE '\\' OR b.location LIKE ? ESCAPE '\\')")
            values += [pattern, pattern]
        if self.states:
            sql.append(f"b.state IN ({placeholders(self.states)})")
            values += list(self.states)
        if self.since or self.until:
            start, end = self._range()
            dated = []
            for table, column in _DATED:
                dated.append(
                    f"EXISTS (SELECT 1 FROM {table} t WHERE t.bearing_id = b.id "
                    f"AND t.{column} >= ? AND t.{column} < ?)"
                )
                values += [start, end]
            sql.append("(" + " OR ".join(dated) + ")")
        return (" AND ".join(sql) or "1"), values


def _like_escaped(text: str) -> str:
    return text.replace("\\", "\\\\").replace("%", "\\%").replace("_", "\\_")


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


def count_bearings(
    db: sqlite_utils.Database, *, site_id: str, selection: Selection | None = None
) -> int:
    where, values = (selection or Selection()).where()
    row = one(
        db,
        f"SELECT count(*) AS n FROM bearings b WHERE b.site_id = ? AND {where}",
        [site_id, *values],
    )
    return row["n"] if row else 0


def bearing_batches(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    size: int | None = None,
    selection: Selection | None = None,
    light: bool = False,
) -> Iterator[list[Row]]:
    """The site's bearings (those ``selection`` keeps) in reference order, ``size`` at a
    time, each as a dict (``light``: without the design and the calculations, HEAVY):

    ``bearing`` (its row), ``records`` (newest by measured time first), ``photos`` (record
    uuid → its photos, in the order received), ``decisions``, ``releases``, ``reopenings``,
    ``releases_kept`` (each oldest first).
    """
    size = BATCH if size is None else size
    if size < 1:
        raise ValueError(f"batch size must be at least 1; got {size}")
    where, values = (selection or Selection()).where()
    after: tuple[str, str] | None = None
    rows = _rows_light if light else many
    # The current design result is kept on the bearing's revision only.
    read = (
        "SELECT b.* FROM bearings b"
        if light
        else "SELECT b.*, v.design_result FROM bearings b JOIN bearing_revisions v "
        "ON v.bearing_id = b.id AND v.revision = b.revision"
    )
    while True:
        if after is None:
            bearings = rows(
                db,
                f"{read} WHERE b.site_id = ? AND {where} ORDER BY b.reference, b.id LIMIT ?",
                [site_id, *values, size],
            )
        else:
            bearings = rows(
                db,
                f"{read} WHERE b.site_id = ? AND {where} "
                "AND (b.reference, b.id) > (?, ?) ORDER BY b.reference, b.id LIMIT ?",
                [site_id, *values, *after, size],
            )
        if not bearings:
            return
        yield _with_their_rows(db, site_id, bearings, rows)
        if len(bearings) < size:
            return
        after = (bearings[-1]["reference"], bearings[-1]["id"])


def _rows_light(db: sqlite_utils.Database, sql: str, params: Params) -> list[Row]:
    return [
        decoded({k: v for k, v in row.items() if k not in HEAVY}) for row in db.query(sql, params)
    ]


def _with_their_rows(
    db: sqlite_utils.Database,
    site_id: str,
    bearings: list[Row],
    rows: Callable[[sqlite_utils.Database, str, Params], list[Row]] = many,
) -> list[Row]:
    ids = [b["id"] for b in bearings]
    marks = placeholders(ids)
    records = rows(
        db,
        f"""
        SELECT {RECORD_COLUMNS} FROM as_built_records r JOIN bearings b ON b.id = r.bearing_id
        WHERE b.site_id = ? AND r.bearing_id IN ({marks})
        ORDER BY r.bearing_id, {NEWEST_FIRST}
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
    out: dict[str, dict[str, Any]] = {
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


def _events_where(selection: Selection | None) -> tuple[str, list[Any]]:
    """Events of a whole site: all of them. Of part of it: the kept bearings' events, and
    within the dates if it has any."""
    if selection is None or selection.whole:
        return "1", []
    where, values = selection.where()
    sql = f"e.bearing_id IN (SELECT b.id FROM bearings b WHERE b.site_id = e.site_id AND {where})"
    if selection.since or selection.until:
        start, end = selection._range()
        sql += " AND e.at >= ? AND e.at < ?"
        values = [*values, start, end]
    return sql, values


def site_events(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    size: int | None = None,
    selection: Selection | None = None,
) -> Iterator[Row]:
    """Every event of a site (or of the part ``selection`` keeps), oldest first, read
    ``size`` at a time."""
    size = EVENTS_BATCH if size is None else size
    where, values = _events_where(selection)
    after = 0
    while True:
        rows = many(
            db,
            f"SELECT e.* FROM events e WHERE e.site_id = ? AND {where} AND e.id > ? "
            "ORDER BY e.id LIMIT ?",
            [site_id, *values, after, size],
        )
        yield from rows
        if len(rows) < size:
            return
        after = rows[-1]["id"]


def count_events(
    db: sqlite_utils.Database, *, site_id: str, selection: Selection | None = None
) -> int:
    where, values = _events_where(selection)
    row = one(
        db,
        f"SELECT count(*) AS n FROM events e WHERE e.site_id = ? AND {where}",
        [site_id, *values],
    )
    return row["n"] if row else 0
