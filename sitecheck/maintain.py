"""``sitecheck maintain``: the upkeep a data folder needs, safe to run from cron while the
server serves.

- Every photo a record names is checked against its hash: a file missing or changed (a disk
  fault, a bad restore) is reported, never removed, and the command exits 1 so cron's mail
  says so.
- Temporary files older than a day (a write cut off by a crash) are removed, in the photo
  store and the site records' folder.
- Picture files older than a day that no photo names (the upload's process died between
  writing them and storing their row) are removed. Whether a file is named is decided
  again inside a write transaction, where no upload can be between writing its files and
  committing its row, so a file an upload is writing now is never taken.
- Log-in attempts older than the throttle's window are deleted; they served only it.

Two runs at once would do the same work twice: a run holds a lease in the database while it
works, and a second one stops at once, saying so.
"""

from __future__ import annotations

import contextlib
import os
import socket
import time
from dataclasses import dataclass, field
from pathlib import Path

from sitecheck import credentials, services, store
from sitecheck.config import Settings
from sitecheck.photos import PhotoStore

__all__ = ["AlreadyRunning", "Upkeep", "maintain"]

DAY_S = 24 * 3600
LEASE = "maintenance"
LEASE_S = 3600.0


class AlreadyRunning(Exception):
    """Another ``sitecheck maintain`` holds the lease; the message says since when."""


@dataclass(frozen=True)
class Upkeep:
    photos_checked: int
    damaged: tuple[str, ...]  # sentences, one per photo file missing or changed
    temporary_files_removed: int
    unnamed_files_removed: int
    login_attempts_removed: int
    seconds: float
    notes: tuple[str, ...] = field(default=())


def maintain(settings: Settings, *, older_than_s: float = DAY_S) -> Upkeep:
    """Do the upkeep of the data folder of ``settings``; see the module's text."""
    started = time.monotonic()
    if not settings.database.is_file():
        raise FileNotFoundError(
            f"there is no database at {settings.database}; check --home or SITECHECK_HOME"
        )
    holder = f"{socket.gethostname()}:{os.getpid()}"
    db = store.open_db(settings.database)
    try:
        if not store.take_lease(db, name=LEASE, holder=holder, lease_s=LEASE_S):
            held = store.lease_holder(db, name=LEASE)
            since = held["taken_at"] if held else "a moment ago"
            raise AlreadyRunning(
                f"another sitecheck maintain has been running since {since} "
                f"({held['holder'] if held else 'unknown'}); nothing was done"
            )
        try:
            photos = PhotoStore(settings.photos)
            checked, damaged = _verify(settings, photos)
            swept = services.sweep_photo_files(db, photos, older_than_s=older_than_s)
            temporary = swept.temporary_files + _remove_stale_parts(settings.records, older_than_s)
            unnamed = swept.orphan_files
            pruned = store.prune_login_attempts(db, older_than_s=credentials.THROTTLE_WINDOW_S)
        finally:
            store.release_lease(db, name=LEASE, holder=holder)
    finally:
        db.conn.close()
    return Upkeep(
        photos_checked=checked,
        damaged=tuple(damaged),
        temporary_files_removed=temporary,
        unnamed_files_removed=unnamed,
        login_attempts_removed=pruned,
        seconds=time.monotonic() - started,
    )


def _verify(settings: Settings, photos: PhotoStore) -> tuple[int, list[str]]:
    """Every picture and thumbnail a photo row names, read whole and hashed."""
    damaged = []
    named = sorted(store.photo_files_named(settings.database))
    for sha in named:
        path = photos.path_for(sha)
        if not path.is_file():
            damaged.append(f"photo file {sha} is missing ({path})")
        elif not photos.verify(sha):
            damaged.append(f"photo file {sha} no longer matches its hash ({path})")
    return len(named), damaged


def _remove_stale_parts(folder: Path, older_than_s: float) -> int:
    """Files a site record's making left half written (``.part``) or temporary (``.tmp``)."""
    if not folder.is_dir():
        return 0
    cutoff = time.time() - older_than_s
    removed = 0
    for path in [*folder.rglob("*.part"), *folder.rglob("*.tmp")]:
        with contextlib.suppress(FileNotFoundError):
            if path.is_file() and path.stat().st_mtime < cutoff:
                path.unlink()
                removed += 1
    return removed
