"""``sitecheck backup`` and ``sitecheck restore``: the data folder, copied safely while the
server runs, and put back checked.

A backup folder holds:

- ``sitecheck.db``: the database as it was at one moment (SQLite's online backup, taken
  while the server reads and writes; a plain file copy of a live WAL database is not safe);
- ``photos/``: every picture and thumbnail that copy names, and their print copies, laid out
  as in the data folder and named by their SHA-256. Copying into the same folder again is
  incremental: a photo already there is not copied again (its name is its content);
- ``records/``: the site records (PDF) made in the background;
- ``secret_key``: the cookie key, so people stay logged in after a restore;
- ``manifest.json``, written last: counts, hashes, the sitecheck version and the schema.
  A folder without it is not a finished backup.

Photos are chosen from the database copy, not from the folder: a photo whose row was
committed after the copy was taken is not in it, and every photo the copy names was on disk
before its row was committed, so the backup is whole at that moment.

A restore checks everything before it writes anything: the manifest, every file's hash,
``PRAGMA integrity_check`` and the row counts. It refuses to put a backup over a database
that is there unless told (``--replace``), and then keeps the database it replaces.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import shutil
import tempfile
import time
from dataclasses import dataclass, field
from datetime import UTC, datetime
from importlib import metadata
from pathlib import Path

from sitecheck import store
from sitecheck.config import Settings
from sitecheck.photos import PhotoStore

__all__ = ["BackupError", "BackupReport", "RestoreReport", "backup", "check_backup", "restore"]

FORMAT = "sitecheck backup"
FORMAT_VERSION = 1
MANIFEST = "manifest.json"
DATABASE = "sitecheck.db"
PHOTOS = "photos"
RECORDS = "records"
KEY = "secret_key"
_CHUNK = 1 << 20
_SHOWN = 10  # problems listed in a message; the rest are counted


class BackupError(Exception):
    """A backup or restore that cannot go on; the message says why and what to do."""


@dataclass(frozen=True)
class BackupReport:
    folder: Path
    counts: dict[str, int]
    photos_copied: int
    photos_already_there: int
    print_copies_copied: int
    records_copied: int
    bytes_copied: int
    seconds: float
    problems: tuple[str, ...] = ()


@dataclass(frozen=True)
class RestoreReport:
    home: Path
    counts: dict[str, int]
    photos_copied: int
    replaced: Path | None  # where the database that was there was kept
    migrations_applied: tuple[str, ...] = field(default=())


def _version() -> str:
    try:
        return metadata.version("sitecheck")
    except metadata.PackageNotFoundError:
        return "unknown"


def _sha256_file(path: Path) -> str:
    digest = hashlib.sha256()
    with open(path, "rb") as f:
        while chunk := f.read(_CHUNK):
            digest.update(chunk)
    return digest.hexdigest()


def _copy(source: Path, target: Path, *, mode: int | None = None) -> tuple[str, int]:
    """Copy a file through a temporary one and a rename, synced; returns (sha256, bytes)."""
    target.parent.mkdir(parents=True, exist_ok=True)
    digest = hashlib.sha256()
    size = 0
    descriptor, temp = tempfile.mkstemp(dir=target.parent, prefix=".copy-", suffix=".part")
    try:
        with os.fdopen(descriptor, "wb") as out, open(source, "rb") as src:
            while chunk := src.read(_CHUNK):
                digest.update(chunk)
                size += len(chunk)
                out.write(chunk)
            out.flush()
            os.fsync(out.fileno())
        if mode is not None:
            os.chmod(temp, mode)
        os.replace(temp, target)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(temp)
        raise
    return digest.hexdigest(), size


def _listed(problems: list[str]) -> str:
    shown = "\n  ".join(problems[:_SHOWN])
    more = f"\n  … and {len(problems) - _SHOWN} more" if len(problems) > _SHOWN else ""
    return f"\n  {shown}{more}"


def _read_manifest(folder: Path) -> dict | None:
    path = folder / MANIFEST
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        return None
    try:
        manifest = json.loads(text)
    except ValueError as error:
        raise BackupError(f"{path} is not a sitecheck manifest (not JSON: {error})") from None
    if not isinstance(manifest, dict) or manifest.get("format") != FORMAT:
        raise BackupError(f"{path} is not a sitecheck backup's manifest")
    if manifest.get("format_version") != FORMAT_VERSION:
        raise BackupError(
            f"{path} is a backup of format {manifest.get('format_version')!r}; this sitecheck "
            f"reads format {FORMAT_VERSION}. Restore it with the sitecheck that made it "
            f"({manifest.get('sitecheck_version', 'unknown')})."
        )
    return manifest


def _records_files(folder: Path) -> list[Path]:
    """The site records kept in a records folder: finished PDFs and their state files,
    never a file being written (``.part``, temporary)."""
    if not folder.is_dir():
        return []
    return sorted(
        p
        for p in folder.glob("*/*")
        if p.is_file() and p.suffix in (".pdf", ".json") and not p.name.startswith(".")
    )


# --- backup ------------------------------------------------------------------------------------


# One piece: one backup in the order it must happen (refusals first, then the database, photos,
# records, key and manifest), so the order is seen whole.
def backup(settings: Settings, destination: str | os.PathLike) -> BackupReport:
    """Copy the data folder of ``settings`` into ``destination`` while the server runs."""
    started = time.monotonic()
    dest = Path(destination).expanduser().resolve()
    if not settings.database.is_file():
        raise BackupError(
            f"there is no database at {settings.database}; check --home or SITECHECK_HOME"
        )
    if dest == settings.home or dest.is_relative_to(settings.home):
        raise BackupError(
            f"{dest} is inside the data folder {settings.home}; a backup there is lost with "
            "it. Choose a folder elsewhere, ideally on another disk."
        )
    if settings.home.is_relative_to(dest):
        raise BackupError(f"{dest} holds the data folder {settings.home}; choose another folder")
    dest.mkdir(parents=True, exist_ok=True)
    previous = _read_manifest(dest)
    if previous is None and any(dest.iterdir()):
        raise BackupError(
            f"{dest} holds other files and no {MANIFEST}; choose an empty folder or one that "
            "holds an earlier sitecheck backup"
        )
    previous = previous or {}

    part = dest / f".{DATABASE}.part"
    store.copy_database(settings.database, part)
    damaged = store.integrity_problems(part)
    if damaged:
        part.unlink(missing_ok=True)
        raise BackupError(
            "the database's own integrity check fails, so no backup was made:" + _listed(damaged)
        )
    counts = store.row_counts(part)
    schema = store.applied_migrations(part)
    named = sorted(store.photo_files_named(part))

    source = PhotoStore(settings.photos)
    target = PhotoStore(dest / PHOTOS)
    problems: list[str] = []
    copied = already = prints = records = 0
    copied_bytes = 0
    photo_bytes = 0
    for sha in named:
        src, dst = source.path_for(sha), target.path_for(sha)
        if not src.is_file():
            problems.append(
                f"photo {sha} is named by the database but missing from the data folder"
            )
            continue
        size = src.stat().st_size
        photo_bytes += size
        with contextlib.suppress(FileNotFoundError):
            if dst.stat().st_size == size:
                already += 1
                continue
        got, n = _copy(src, dst)
        copied_bytes += n
        copied += 1
        if got != sha:
            problems.append(f"photo {sha} in the data folder no longer matches its hash")
    print_copies: dict[str, str] = {}
    before_prints = previous.get("print_copies", {})
    for sha in named:
        src = source.print_path_for(sha)
        if not src.is_file():
            continue
        got = _sha256_file(src)
        print_copies[sha] = got
        dst = target.print_path_for(sha)
        if before_prints.get(sha) == got and dst.is_file():
            continue
        _copy(src, dst)
        copied_bytes += src.stat().st_size
        prints += 1

    record_hashes: dict[str, str] = {}
    before_records = previous.get("records", {})
    for src in _records_files(settings.records):
        rel = src.relative_to(settings.records).as_posix()
        got = _sha256_file(src)
        dst = dest / RECORDS / rel
        if before_records.get(rel) != got or not dst.is_file():
            _copy(src, dst)
            copied_bytes += src.stat().st_size
            records += 1
        record_hashes[rel] = got

    key = None
    if settings.secret_key is None and settings.secret_key_file.is_file():
        sha, _n = _copy(settings.secret_key_file, dest / KEY, mode=0o600)
        key = {"file": KEY, "sha256": sha}

    os.replace(part, dest / DATABASE)
    manifest = {
        "format": FORMAT,
        "format_version": FORMAT_VERSION,
        "made_at": datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "sitecheck_version": _version(),
        "schema": schema,
        "database": {
            "file": DATABASE,
            "sha256": _sha256_file(dest / DATABASE),
            "bytes": (dest / DATABASE).stat().st_size,
            "counts": counts,
        },
        "photos": {"count": len(named), "bytes": photo_bytes, "files": named},
        "print_copies": print_copies,
        "records": record_hashes,
        "secret_key": key,
        "problems": problems,
    }
    _write_json(dest / MANIFEST, manifest)
    # Site records pruned from the data folder since the last backup go from it too.
    for rel in set(before_records) - set(record_hashes):
        with contextlib.suppress(FileNotFoundError):
            (dest / RECORDS / rel).unlink()
    return BackupReport(
        folder=dest,
        counts=counts,
        photos_copied=copied,
        photos_already_there=already,
        print_copies_copied=prints,
        records_copied=records,
        bytes_copied=copied_bytes,
        seconds=time.monotonic() - started,
        problems=tuple(problems),
    )


def _write_json(path: Path, value: dict) -> None:
    descriptor, temp = tempfile.mkstemp(dir=path.parent, prefix=".manifest-", suffix=".part")
    try:
        with os.fdopen(descriptor, "w", encoding="utf-8") as f:
            json.dump(value, f, indent=1)
            f.flush()
            os.fsync(f.fileno())
        os.replace(temp, path)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(temp)
        raise


# --- restore -----------------------------------------------------------------------------------


def check_backup(source: str | os.PathLike) -> dict:
    """Check a backup folder whole; returns its manifest, or raises BackupError listing every
    problem found (a hash that differs, a file missing, a failed integrity check, counts that
    differ from the manifest's, a schema newer than this sitecheck's)."""
    folder = Path(source).expanduser().resolve()
    if not folder.is_dir():
        raise BackupError(f"there is no folder {folder}")
    manifest = _read_manifest(folder)
    if manifest is None:
        raise BackupError(
            f"{folder} has no {MANIFEST}: it is not a finished sitecheck backup (a backup "
            "writes its manifest last)"
        )
    problems: list[str] = []
    known = store.known_migrations()
    newer = [name for name in manifest.get("schema", []) if name not in known]
    if newer:
        raise BackupError(
            f"this backup was made by a newer sitecheck ({manifest.get('sitecheck_version')}; "
            f"schema changes {', '.join(newer)} unknown here). Restore it with that version "
            "or a later one."
        )
    database = folder / manifest["database"]["file"]
    if not database.is_file():
        raise BackupError(f"the backup's database {database} is missing")
    if _sha256_file(database) != manifest["database"]["sha256"]:
        problems.append(f"{database.name} does not match the manifest's hash (changed or damaged)")
    else:
        problems += [f"integrity check: {p}" for p in store.integrity_problems(database)]
        if not problems:
            counts = store.row_counts(database)
            for table, n in manifest["database"]["counts"].items():
                if counts.get(table) != n:
                    problems.append(f"{table}: {counts.get(table)} rows, the manifest says {n}")
            named = store.photo_files_named(database)
            unlisted = named - set(manifest["photos"]["files"])
            if unlisted:
                problems.append(
                    f"{len(unlisted)} photos named by the database are not in the manifest"
                )
    photos = PhotoStore(folder / PHOTOS)
    for sha in manifest["photos"]["files"]:
        path = photos.path_for(sha)
        if not path.is_file():
            problems.append(f"photo {sha} is missing from the backup")
        elif _sha256_file(path) != sha:
            problems.append(f"photo {sha} in the backup does not match its hash")
    for sha, file_sha in manifest.get("print_copies", {}).items():
        path = photos.print_path_for(sha)
        if not path.is_file() or _sha256_file(path) != file_sha:
            problems.append(f"the print copy of photo {sha} is missing or differs")
    for rel, file_sha in manifest.get("records", {}).items():
        path = folder / RECORDS / rel
        if not path.is_file() or _sha256_file(path) != file_sha:
            problems.append(f"site record file {rel} is missing or differs")
    key = manifest.get("secret_key")
    if key and (
        not (folder / key["file"]).is_file() or _sha256_file(folder / key["file"]) != key["sha256"]
    ):
        problems.append("the cookie key is missing or differs")
    if problems:
        raise BackupError(
            f"the backup in {folder} is not whole; nothing was restored:" + _listed(problems)
        )
    return manifest


def restore(
    source: str | os.PathLike, settings: Settings, *, replace: bool = False
) -> RestoreReport:
    """Put the backup in ``source`` into the data folder of ``settings``, after checking it
    whole. A database already there is replaced only with ``replace``, and kept beside it."""
    folder = Path(source).expanduser().resolve()
    manifest = check_backup(folder)
    target = settings.database
    kept = None
    if target.exists():
        if not replace:
            raise BackupError(
                f"a database is already at {target}; nothing was restored. Restore into a new "
                "data folder (--home), or add --replace to put the backup in its place (the "
                "database there now is kept beside it)."
            )
        stamp = datetime.now(UTC).strftime("%Y%m%dT%H%M%SZ")
        kept = target.with_name(f"{target.name}.before-restore-{stamp}")
        store.copy_database(target, kept)
    target.parent.mkdir(parents=True, exist_ok=True)

    source_photos = PhotoStore(folder / PHOTOS)
    photos = PhotoStore(settings.photos)
    copied = 0
    # Files first, the database last: a restore cut short never leaves rows naming files
    # that are not there.
    for sha in manifest["photos"]["files"]:
        dst = photos.path_for(sha)
        if dst.is_file() and _sha256_file(dst) == sha:
            continue
        _copy(source_photos.path_for(sha), dst)
        copied += 1
    for sha in manifest.get("print_copies", {}):
        _copy(source_photos.print_path_for(sha), photos.print_path_for(sha))
    for rel in manifest.get("records", {}):
        _copy(folder / RECORDS / rel, settings.records / rel)
    key = manifest.get("secret_key")
    if key and settings.secret_key is None:
        key_file = settings.secret_key_file
        if key_file.is_file() and _sha256_file(key_file) != key["sha256"]:
            shutil.copy2(key_file, key_file.with_name(key_file.name + ".before-restore"))
        _copy(folder / key["file"], key_file, mode=0o600)

    store.replace_database(folder / manifest["database"]["file"], target)
    db = store.open_db(target)  # back to WAL; a backup from an older sitecheck is migrated
    try:
        store.clear_leases(db)  # held by processes of the server the backup was taken from
        applied_now = store.applied_migrations(target)
    finally:
        db.conn.close()
    problems = store.integrity_problems(target)
    if problems:
        raise BackupError(f"the restored database fails its integrity check:{_listed(problems)}")
    newer = tuple(name for name in applied_now if name not in manifest.get("schema", []))
    return RestoreReport(
        home=settings.home,
        counts=store.row_counts(target),
        photos_copied=copied,
        replaced=kept,
        migrations_applied=newer,
    )
