"""Connections, transactions, timestamps and row decoding shared by the store modules."""

import contextlib
import json
import sqlite3
import threading
import uuid as uuid_module
import zlib
from collections.abc import Generator, Iterable, Iterator, Sequence
from datetime import UTC, datetime
from typing import Any

import orjson
import sqlite_utils
import zstandard
from sqlite_utils.utils import dedupe_keys

# A row as the store hands it out: column name -> Python value (JSON decoded, flags bool).
Row = dict[str, Any]
# A statement's parameters: in order for ``?``, by name for ``:name``.
Params = Sequence[Any] | dict[str, Any]

# Columns holding JSON, as text or packed (see pack_json); decoded on the way out so callers
# only ever see Python values.
JSON_COLUMNS = frozenset(
    {
        "code_basis",
        "review_settings",
        "design_input",
        "design_result",
        "measurements",
        "checklist",
        "result",
        "reasons",
        "detail",
        "accepted_failing",
        "covers",
    }
)
BOOL_COLUMNS = frozenset(
    {
        "disabled",
        "must_change_password",
        "may_make_sites",
        "design_passed",
        "passed",
        "late",
        "ok",
        "older_revision",
        "latest_passed",
        "latest_older_revision",
    }
)


@contextlib.contextmanager
def transaction(db: sqlite_utils.Database) -> Generator[sqlite_utils.Database, None, None]:
    """Run a block as one write transaction; nested use becomes a savepoint.

    BEGIN IMMEDIATE takes the write lock at the start. A deferred BEGIN that reads and then
    writes can fail at once with SQLITE_BUSY when another connection wrote in between, without
    waiting for busy_timeout; taking the lock first makes concurrent writers queue instead.
    """
    if db.conn.in_transaction:
        with db.atomic():
            yield db
        return
    db.conn.execute("BEGIN IMMEDIATE")
    try:
        yield db
    except BaseException:
        if db.conn.in_transaction:
            db.conn.execute("ROLLBACK")
        raise
    try:
        db.conn.execute("COMMIT")
    except BaseException:
        if db.conn.in_transaction:
            db.conn.execute("ROLLBACK")
        raise


def roll_back_unfinished(db: sqlite_utils.Database) -> None:
    """Roll back a transaction left open on a connection that is kept for later work."""
    if db.conn.in_transaction:
        db.conn.execute("ROLLBACK")


def utc_now() -> datetime:
    return datetime.now(UTC)


def timestamp(moment: datetime | None = None) -> str:
    """The one format every stored time uses: UTC, fixed width, so text order is time order."""
    if moment is None:
        moment = utc_now()
    if moment.tzinfo is None or moment.utcoffset() is None:
        raise ValueError(
            f"time {moment!r} has no time zone; give an aware datetime so it can be stored as UTC"
        )
    return moment.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


class NoTimeZone(ValueError):
    """A time given without its zone: which moment it names cannot be known."""


def parse_timestamp(value: str | datetime, *, field: str = "time") -> str:
    """Normalise an ISO 8601 time with an offset (e.g. from a phone) to the stored format."""
    if isinstance(value, datetime):
        return timestamp(value)
    try:
        moment = datetime.fromisoformat(str(value).strip())
    except ValueError:
        raise ValueError(
            f"{field} {value!r} is not an ISO 8601 time; send e.g. '2026-03-01T09:30:00Z'"
        ) from None
    if moment.tzinfo is None:
        raise NoTimeZone(
            f"{field} {value!r} has no time zone; send it with 'Z' or an offset such as '+01:00'"
        )
    return timestamp(moment)


def canonical_uuid(value: str, *, field: str = "uuid") -> str:
    """Lower-case hyphenated form, so the same UUID sent in another spelling is still one key."""
    try:
        return str(uuid_module.UUID(str(value)))
    except ValueError:
        raise ValueError(
            f"{field} {value!r} is not a UUID; the phone must send one it made, e.g. "
            "'3f2b6c1e-8a4d-4b7e-9c1a-2d5e6f7a8b9c'"
        ) from None


def new_id() -> str:
    # Random ids, not counters: ids in URLs then reveal nothing about other sites.
    return str(uuid_module.uuid4())


def to_json(value: Any) -> str:
    # allow_nan=False: NaN and infinity are not JSON and would not survive an export.
    return json.dumps(value, ensure_ascii=False, allow_nan=False, separators=(",", ":"))


# A calculation's trace is about 13 KB of JSON, its labels, formulas and clauses repeated
# from check to check. It is written on every record a phone sends, so how it is written is
# a good part of the write path: orjson writes it about ten times as fast as the json module,
# and zstd (level 3, its default) packs it to under a third about five times as fast as zlib
# at its default level. Packs written before (zlib) are still read: a zstd frame begins with
# its magic number, a zlib stream never does.
PACK_LEVEL = 3
_ZSTD_MAGIC = b"\x28\xb5\x2f\xfd"


class _Packers(threading.local):
    """A compressor and a decompressor for each thread: a zstd context serves one
    operation at a time."""

    def __init__(self) -> None:
        self.compress = zstandard.ZstdCompressor(level=PACK_LEVEL).compress
        self.decompress = zstandard.ZstdDecompressor().decompress


_packers = _Packers()


def pack_json(value: Any) -> bytes:
    """A large JSON value (a calculation's whole trace) as stored: packed JSON text.
    Packed columns are BLOBs, so a reader tells them from JSON text by type alone.

    A float that is not finite is written as null, as JSON has no infinity (the core's
    results carry an unbounded utilisation as None already)."""
    return _packers.compress(orjson.dumps(value))


def unpack_json(data: bytes) -> Any:
    if data[:4] == _ZSTD_MAGIC:
        return orjson.loads(_packers.decompress(data))
    return json.loads(zlib.decompress(data))


def decode_row(row: Row | None) -> Row | None:
    return None if row is None else decoded(row)


def decoded(row: Row) -> Row:
    out = dict(row)
    for key, value in out.items():
        if key in JSON_COLUMNS and isinstance(value, str):
            # orjson reads the same JSON about four times as fast (every text column here
            # was written by to_json, which refuses NaN and infinity: neither reader needs them).
            out[key] = orjson.loads(value)
        elif key in JSON_COLUMNS and isinstance(value, bytes):
            out[key] = unpack_json(value)
        elif key in BOOL_COLUMNS and value is not None:
            out[key] = bool(value)
    return out


def rows(db: sqlite_utils.Database, sql: str, params: Params = ()) -> Iterator[Row]:
    """The rows of a SELECT as plain dicts, undecoded, read as they are iterated.

    Straight on the connection: every statement here is a SELECT written in this package, so
    sqlite-utils' guard against statements that return no rows (a savepoint around each
    query, three statements for one) buys nothing and costs a good part of a small request.
    """
    cursor = db.conn.execute(sql, params)
    keys = dedupe_keys(d[0] for d in cursor.description)
    return (dict(zip(keys, row, strict=True)) for row in cursor)


def one(db: sqlite_utils.Database, sql: str, params: Params = ()) -> Row | None:
    return decode_row(next(rows(db, sql, params), None))


def the_row(db: sqlite_utils.Database, sql: str, params: Params = ()) -> Row:
    """The row a statement cannot fail to find: an aggregate's, or one written a moment ago
    in the same transaction."""
    return present(one(db, sql, params), " ".join(sql.split())[:80])


def present(row: Row | None, what: str) -> Row:
    """A row the caller knows is there (written a moment ago, or read under the write lock);
    its absence is a fault of the store's, said as such rather than as a TypeError later."""
    if row is None:
        raise LookupError(f"no row where one must be: {what}")
    return row


def many(db: sqlite_utils.Database, sql: str, params: Params = ()) -> list[Row]:
    return [decoded(row) for row in rows(db, sql, params)]


def inserted_id(cursor: sqlite3.Cursor) -> int:
    """The rowid an INSERT gave its row (sqlite3 types it as optional, for statements that
    insert none)."""
    if cursor.lastrowid is None:
        raise LookupError("the statement inserted no row")
    return cursor.lastrowid


def placeholders(values: Iterable[Any]) -> str:
    return ", ".join("?" for _ in values)


def required_text(value: str, field: str) -> str:
    text = (value or "").strip()
    if not text:
        raise ValueError(f"{field} is empty; write a few words")
    return text
