"""Opening a connection: the pragmas every connection needs, then the migrations."""

import sqlite3
import time
from pathlib import Path

import sqlite_utils

from sitecheck.store.migrations import apply_migrations

BUSY_TIMEOUT_MS = 5000


def open_db(path: str | Path) -> sqlite_utils.Database:
    """Open one connection to the database at ``path`` and bring its schema up to date.

    One connection per request or thread: sqlite3 connections must not be shared between
    threads. The caller closes it (``db.close()``).
    """
    db = connect(path)
    try:
        apply_migrations(db)
    except BaseException:
        db.close()
        raise
    return db


def connect(path: str | Path) -> sqlite_utils.Database:
    """Open one connection with the pragmas every connection needs, without looking at the
    migrations: for a server that brought the schema up to date once, at start
    (``open_db``), and keeps a connection per thread from then on."""
    # Plugins are off so that nothing outside this package can change how the connection behaves.
    db = sqlite_utils.Database(str(path), execute_plugins=False)
    try:
        # busy_timeout first, so that even the journal-mode switch waits for another opener.
        db.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS}")
        db.execute("PRAGMA foreign_keys = ON")
        # FULL, not NORMAL: in WAL mode NORMAL can roll back an acknowledged commit on power
        # loss, and the phone deletes its copy of a record once we acknowledge it.
        db.execute("PRAGMA synchronous = FULL")
        _use_wal(db)
        # Searches compare text lowered as Python lowers it (SQLite's lower() knows ASCII
        # only), so a search on a page and on the phone find the same bearings.
        db.conn.create_function("sitecheck_lower", 1, _lower, deterministic=True)
    except BaseException:
        db.close()
        raise
    return db


def _lower(text: str | None) -> str | None:
    return None if text is None else str(text).lower()


def _use_wal(db: sqlite_utils.Database) -> None:
    # WAL is a property of the file, so only the first opener switches it. The switch needs an
    # exclusive lock and SQLite answers "locked" at once instead of waiting for busy_timeout
    # when another connection is opening the same new file, so wait here instead.
    deadline = time.monotonic() + BUSY_TIMEOUT_MS / 1000
    while True:
        try:
            if db.execute("PRAGMA journal_mode").fetchone()[0].lower() != "wal":
                db.execute("PRAGMA journal_mode = WAL")
            return
        except sqlite3.OperationalError as error:
            if "locked" not in str(error) or time.monotonic() > deadline:
                raise
            time.sleep(0.02)
