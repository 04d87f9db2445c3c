"""Photos of as-built records: each stored once per client UUID (the picture itself is kept
by its sha256, outside the database), and which picture files a stored photo still names."""

from collections.abc import Callable, Iterable
from dataclasses import dataclass
from datetime import datetime

import sqlite_utils

from sitecheck.store.base import (
    Row,
    canonical_uuid,
    many,
    one,
    parse_timestamp,
    placeholders,
    the_row,
    timestamp,
    transaction,
)
from sitecheck.store.bearings import RELEASED
from sitecheck.store.errors import NotFound, SameIdOtherValues, TooManyPhotos, UuidInUse
from sitecheck.store.events import add_event
from sitecheck.store.records import get_record
from sitecheck.store.releases import add_after_release


@dataclass(frozen=True)
class Stored:
    """The row as stored, and whether this call stored it (False: it was already there)."""

    row: Row
    created: bool


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
            _refuse_other_photo(row, record_uuid, upload_sha256, sha256)
            return Stored(row=row, created=False)
        if max_photos is not None:
            _refuse_past_limit(db, record_uuid, max_photos)
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
        row = the_row(db, "SELECT * FROM photos WHERE uuid = ?", [uuid])
        _photo_received(db, record, row, user_id)
    return Stored(row=row, created=True)


def _refuse_other_photo(row: Row, record_uuid: str, upload_sha256: str | None, sha256: str) -> None:
    """A photo's uuid stored already may come again only for the same record with the same
    upload (a phone that did not hear the answer)."""
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


def _other_picture(row: Row, upload_sha256: str | None, sha256: str) -> bool:
    # Rows stored before uploads were hashed compare by the picture kept, which the same
    # upload always gives again.
    if row["upload_sha256"] is not None and upload_sha256 is not None:
        return bool(row["upload_sha256"] != upload_sha256)
    return bool(row["sha256"] != sha256)


def _refuse_past_limit(db: sqlite_utils.Database, record_uuid: str, max_photos: int) -> None:
    count = the_row(db, "SELECT count(*) AS n FROM photos WHERE record_uuid = ?", [record_uuid])[
        "n"
    ]
    if count >= max_photos:
        raise TooManyPhotos(
            f"At most {max_photos} photos for one as-built record; this record has "
            f"{count} already, so this photo was not stored."
        )


def _photo_received(db: sqlite_utils.Database, record: Row, row: Row, user_id: int) -> None:
    """The event of a new photo; for a released bearing, also listed for the engineer."""
    detail = {"photo_uuid": row["uuid"], "record_uuid": record["uuid"], "sha256": row["sha256"]}
    state = the_row(db, "SELECT state FROM bearings WHERE id = ?", [record["bearing_id"]])
    if state["state"] == RELEASED:
        # Kept, and listed for the engineer: the release may rest on this very record.
        add_after_release(
            db,
            record["bearing_id"],
            record_uuid=record["uuid"],
            photo_uuid=row["uuid"],
            received=row["created_at"],
        )
        detail["after_release"] = True
    add_event(
        db,
        kind="photo received",
        user_id=user_id,
        site_id=record["site_id"],
        bearing_id=record["bearing_id"],
        detail=detail,
    )


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


def get_photo(db: sqlite_utils.Database, *, site_id: str, uuid: str) -> Row | None:
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


def photos_for_bearing(db: sqlite_utils.Database, *, site_id: str, bearing_id: str) -> list[Row]:
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


def photos_for_record(db: sqlite_utils.Database, *, site_id: str, record_uuid: str) -> list[Row]:
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
