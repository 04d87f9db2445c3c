"""The database as a whole: health, consistent copies, integrity, counts.

For the health check, ``sitecheck backup``/``restore`` and ``sitecheck maintain``; the only
place these statements live, as every other statement lives in this package.
"""

from __future__ import annotations

import contextlib
import os
import sqlite3
from collections.abc import Iterator
from pathlib import Path

import sqlite_utils

from sitecheck.store.connection import BUSY_TIMEOUT_MS
from sitecheck.store.migrations import MIGRATIONS

__all__ = [
    "applied_migrations",
    "copy_database",
    "database_problem",
    "integrity_problems",
    "known_migrations",
    "photo_files_named",
    "row_counts",
]


@contextlib.contextmanager
def _read_only(path: str | os.PathLike[str]) -> Iterator[sqlite3.Connection]:
    """A connection that cannot create or change the file (a missing database stays
    missing: the health check must not make an empty one)."""
    uri = Path(path).resolve().as_uri() + "?mode=ro"
    conn = sqlite3.connect(uri, uri=True, timeout=BUSY_TIMEOUT_MS / 1000)
    try:
        yield conn
    finally:
        conn.close()


def _db(conn: sqlite3.Connection) -> sqlite_utils.Database:
    return sqlite_utils.Database(conn, execute_plugins=False)


def _applied(conn: sqlite3.Connection) -> list[str]:
    return [m.name for m in MIGRATIONS.applied(_db(conn))]


def known_migrations() -> list[str]:
    """Every migration this sitecheck has, in order (all pending on an empty database)."""
    return [m.name for m in MIGRATIONS.pending(sqlite_utils.Database(memory=True))]


def applied_migrations(path: str | os.PathLike[str]) -> list[str]:
    """The migrations applied to the database at ``path``, oldest first."""
    with _read_only(path) as conn:
        return _applied(conn)


def database_problem(path: str | os.PathLike[str]) -> str | None:
    """Why the database cannot serve, in a sentence; None when it is reachable, answers a
    query and has every migration this sitecheck knows."""
    if not Path(path).is_file():
        return "the database file is missing"
    try:
        with _read_only(path) as conn:
            conn.execute("SELECT count(*) FROM sqlite_master").fetchone()
            missing = [m.name for m in MIGRATIONS.pending(_db(conn))]
    except sqlite3.Error as error:
        return f"the database does not answer ({error})"
    if missing:
        return f"the database lacks migrations {', '.join(missing)}"
    return None


def copy_database(source: str | os.PathLike[str], target: str | os.PathLike[str]) -> None:
    """A consistent copy of a live database, taken while others read and write it.

    SQLite's online backup in one step: it reads inside one read transaction, so the copy is
    the database as it was at one moment, and in WAL mode writers go on meanwhile. The copy
    is a single file (rollback journal), written and synced before this returns. Never copy
    a live database file with ``cp``: a write in the middle leaves a torn copy.
    """
    target = Path(target)
    target.unlink(missing_ok=True)
    src = sqlite3.connect(Path(source).resolve().as_uri() + "?mode=ro", uri=True)
    try:
        src.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS}")
        dst = sqlite3.connect(target)
        try:
            src.backup(dst, pages=-1)
            dst.execute("PRAGMA journal_mode = DELETE")
            dst.commit()
        finally:
            dst.close()
    finally:
        src.close()
    with open(target, "rb") as f:
        os.fsync(f.fileno())


def replace_database(source: str | os.PathLike[str], target: str | os.PathLike[str]) -> None:
    """Write the database ``source`` over ``target`` through SQLite's backup, which takes
    ``target``'s locks: a server holding it open sees the whole old or the whole new, never
    a file half written."""
    src = sqlite3.connect(Path(source).resolve().as_uri() + "?mode=ro", uri=True)
    try:
        dst = sqlite3.connect(target, timeout=BUSY_TIMEOUT_MS / 1000)
        try:
            src.backup(dst, pages=-1)
        finally:
            dst.close()
    finally:
        src.close()


def integrity_problems(path: str | os.PathLike[str]) -> list[str]:
    """What ``PRAGMA integrity_check`` and ``foreign_key_check`` find; empty when sound.
    A file too damaged to be read at all is one problem, said as SQLite says it."""
    try:
        with _read_only(path) as conn:
            found = [r[0] for r in conn.execute("PRAGMA integrity_check").fetchall()]
            problems = [] if found == ["ok"] else found
            for table, rowid, parent, _fk in conn.execute("PRAGMA foreign_key_check"):
                problems.append(f"{table} row {rowid} names a missing {parent} row")
    except sqlite3.DatabaseError as error:
        return [f"the file cannot be read as a database ({error})"]
    return problems


def row_counts(path: str | os.PathLike[str]) -> dict[str, int]:
    """Rows in every table of the database (SQLite's own tables aside)."""
    with _read_only(path) as conn:
        tables = [
            r[0]
            for r in conn.execute(
                "SELECT name FROM sqlite_master WHERE type = 'table' "
                "AND name NOT LIKE 'sqlite_%' ORDER BY name"
            )
        ]
        # Names from sqlite_master itself, quoted: no outside text reaches this statement.
        return {
            t: conn.execute(f'SELECT count(*) FROM "{t.replace(chr(34), chr(34) * 2)}"').fetchone()[
                0
            ]
            for t in tables
        }


def photo_files_named(path: str | os.PathLike[str]) -> set[str]:
    """Every picture hash a photo row names (the picture and its thumbnail)."""
    with _read_only(path) as conn:
        rows = conn.execute(
            "SELECT sha256 FROM photos UNION SELECT thumb_sha256 FROM photos "
            "WHERE thumb_sha256 IS NOT NULL"
        ).fetchall()
    return {r[0] for r in rows}
