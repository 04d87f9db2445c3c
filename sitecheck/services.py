"""What happens when someone acts: the engineering core, the workflow rules and the store,
put together once so the web pages, the sync API, the demo builder and the CLI share it.

No SQL here (the store owns it) and no engineering arithmetic (the core owns it): this
module decides what to call, in what order, and what to keep.
"""

from __future__ import annotations

import contextlib
import functools
import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any, Protocol

import orjson

from sitecheck import store, workflow
from sitecheck.bearing import (
    BearingInput,
    BearingResult,
    CodeBasis,
    basis_from_dict,
    check_bearing,
    ec6_uk_na,
)
from sitecheck.bearing.format import utilisation as format_utilisation
from sitecheck.bearing.remedy import Remedy, remedy
from sitecheck.bearing.review import (
    BLOCKS,
    ReviewReason,
    ReviewSettings,
    as_built_input,
    could_not_measure,
    review,
    settings_from_dict,
)
from sitecheck.bearing.serial import (
    checklist_from_dict,
    input_from_dict,
    input_to_dict,
    measurements_from_dict,
)
from sitecheck.schedule import RowError, parse_schedule, read_schedule, recheck_rows

# A device clock this far ahead of the server makes its record look newest for ever.
CLOCK_AHEAD_LIMIT = timedelta(minutes=10)

# A row as the store gives it: a site, a bearing, a record (JSON columns as Python values).
Row = store.Row


class PhotoFiles(Protocol):
    """What a photo upload needs of the photo store (sitecheck.photos.PhotoStore), which
    this layer does not import."""

    def put(self, data: bytes) -> str: ...
    def put_print(self, sha: str, data: bytes) -> None: ...
    def delete(self, sha: str) -> bool: ...
    def iter_all_shas(self) -> Iterator[str]: ...
    def path_for(self, sha: str) -> Path: ...
    def print_path_for(self, sha: str) -> Path: ...
    def remove_stale_temp_files(self, *, older_than_seconds: float = ...) -> int: ...


class KeptPhoto(Protocol):
    """What is kept of an accepted upload (sitecheck.photos.IngestedPhoto)."""

    @property
    def display_jpeg(self) -> bytes: ...
    @property
    def thumbnail_jpeg(self) -> bytes: ...
    @property
    def print_jpeg(self) -> bytes: ...
    @property
    def display_sha256(self) -> str: ...
    @property
    def thumbnail_sha256(self) -> str: ...
    @property
    def display_width(self) -> int: ...
    @property
    def display_height(self) -> int: ...
    @property
    def display_bytes(self) -> int: ...
    @property
    def capture_time(self) -> str | None: ...
    @property
    def gps(self) -> tuple[float, float] | None: ...
    @property
    def original_sha256(self) -> str: ...


def default_site_settings(basis_name: str | None = None) -> tuple[Row, Row]:
    from sitecheck.bearing import basis_named

    basis = basis_named(basis_name) if basis_name else ec6_uk_na()
    return basis.to_dict(), ReviewSettings().as_dict()


def basis_for(site: Row) -> CodeBasis:
    if not site.get("code_basis"):
        return ec6_uk_na()
    return _basis_from_text(_text_of(site["code_basis"]))


def settings_for(site: Row) -> ReviewSettings:
    if not site.get("review_settings"):
        return ReviewSettings()
    return _settings_from_text(_text_of(site["review_settings"]))


def _text_of(value: dict[str, Any]) -> bytes:
    """A JSON value as one text whatever its keys' order: what the caches below are keyed by,
    so a changed value is a new key and never meets what was kept for the old one."""
    return orjson.dumps(value, option=orjson.OPT_SORT_KEYS)


# A site's basis and settings are read on every record its phones send; rebuilding them
# from their dicts each time cost more than the text they are kept as. Both are frozen, so
# one copy serves every thread; a refusal (InputError) is never kept.
@functools.lru_cache(maxsize=64)
def _basis_from_text(text: bytes) -> CodeBasis:
    return basis_from_dict(orjson.loads(text))


@functools.lru_cache(maxsize=64)
def _settings_from_text(text: bytes) -> ReviewSettings:
    return settings_from_dict(orjson.loads(text))


# The design's own check, beside which each record's as-built is reviewed: bearings of one
# design share it (a schedule repeats its lintels and padstones), so it is kept per design
# and basis, both by value. Frozen, like the basis, so one copy serves every thread.
@functools.lru_cache(maxsize=128)
def _design_checked(
    design_text: bytes, basis_text: bytes | None
) -> tuple[BearingInput, BearingResult]:
    design = input_from_dict(orjson.loads(design_text))
    basis = _basis_from_text(basis_text) if basis_text is not None else ec6_uk_na()
    return design, check_bearing(design, basis)


def mirror_settings(site: Row) -> Row:
    """The site's code basis and review settings in full, for the phone's mirror of the
    core: it has no defaults of its own to fall back on, so nothing may be left implicit."""
    return {"basis": basis_for(site).to_dict(), "settings": settings_for(site).as_dict()}


def mirror_context(site: Row, design_input: Row) -> Row:
    """What the phone's mirror needs to re-check one bearing as values are typed."""
    return {"design": design_input, **mirror_settings(site)}


def design_of(bearing: Row) -> BearingInput:
    return input_from_dict(bearing["design_input"])


def add_bearing(
    db: store.Database,
    *,
    site: Row,
    reference: str,
    location: str,
    design: BearingInput,
    user_id: int,
) -> Row:
    """Check the design at once and keep it with its full trace (revision 1)."""
    result = check_bearing(design, basis_for(site))
    return store.add_bearing(
        db,
        site_id=site["id"],
        reference=reference,
        location=location,
        design_input=input_to_dict(design),
        design_result=result.as_dict(),
        utilisation=_finite(result.utilisation),
        passed=result.passed,
        user_id=user_id,
    )


def revise_bearing(
    db: store.Database,
    *,
    site: Row,
    bearing: Row,
    design: BearingInput,
    location: str | None,
    user_id: int,
) -> Row:
    """A new design revision; records keep the revision they were measured against."""
    result = check_bearing(design, basis_for(site))
    has_records = bearing.get("latest_record_uuid") is not None
    return store.revise_bearing(
        db,
        site_id=site["id"],
        bearing_id=bearing["id"],
        expected_revision=bearing["revision"],
        expected_state=bearing["state"],
        new_state=workflow.state_after_revision(bearing["state"], has_records),
        design_input=input_to_dict(design),
        design_result=result.as_dict(),
        utilisation=_finite(result.utilisation),
        passed=result.passed,
        user_id=user_id,
        location=location,
    )


@dataclass(frozen=True)
class ImportReport:
    added: list[Row]
    errors: list[RowError]
    checked: int
    notes: tuple[str, ...] = ()  # how the file was read (encoding, separator, column names)
    ignored_columns: tuple[str, ...] = ()

    @property
    def ok(self) -> bool:
        return not self.errors


def import_schedule(
    db: store.Database,
    *,
    site: Row,
    text: str | bytes,
    user_id: int,
    keep_good_rows: bool = False,
) -> ImportReport:
    """Import a bearing schedule: a file's bytes (decoded as the command line does) or text.
    Any refused row refuses the whole file unless the engineer asked to keep the good rows;
    either way no row is ever half stored."""
    basis = basis_for(site)
    if isinstance(text, bytes):
        parsed = read_schedule(text, basis.name)
    else:
        parsed = parse_schedule(text, basis.name)
    outcomes, errors = recheck_rows(parsed, basis)
    for o in outcomes:
        if o.basis.name != basis.name:
            errors.append(
                RowError(o.row.row, "basis", o.basis.name, f"this site is checked to {basis.name}")
            )
        elif store.bearing_by_reference(db, site_id=site["id"], reference=o.row.reference):
            errors.append(RowError(o.row.row, "reference", o.row.reference, "already on this site"))
    errors.sort(key=lambda e: e.row)
    bad_rows = {e.row for e in errors}
    said = {"notes": parsed.notes, "ignored_columns": parsed.unknown_columns}
    if errors and not keep_good_rows:
        return ImportReport([], errors, len(outcomes), **said)
    added = []
    with store.transaction(db):
        for o in outcomes:
            if o.row.row in bad_rows:
                continue
            added.append(
                store.add_bearing(
                    db,
                    site_id=site["id"],
                    reference=o.row.reference,
                    location=o.row.location,
                    design_input=input_to_dict(o.row.design),
                    design_result=o.design_result.as_dict(),
                    utilisation=_finite(o.design_result.utilisation),
                    passed=o.design_result.passed,
                    user_id=user_id,
                )
            )
    return ImportReport(added, errors, len(outcomes), **said)


@dataclass(frozen=True)
class Recheck:
    as_built: BearingInput
    result: BearingResult
    reasons: tuple[ReviewReason, ...]

    @property
    def blocking(self) -> int:
        return sum(1 for r in self.reasons if r.severity == BLOCKS)


def recheck(
    site: Row,
    bearing: Row,
    measurements: Row | None,
    checklist: Row | None,
    why_not_measured: str | None = None,
) -> Recheck:
    """The server's authoritative re-check of one as-built record against the current design.

    A record of a bearing that could not be measured (``why_not_measured`` set) re-checks
    the design as it stands, with the core's could-not-measure review in place of the
    comparison: there is nothing built to compare."""
    basis = basis_for(site)
    basis_text = _text_of(site["code_basis"]) if site.get("code_basis") else None
    design, design_result = _design_checked(_text_of(bearing["design_input"]), basis_text)
    m = measurements_from_dict(measurements)
    c = checklist_from_dict(checklist)
    if why_not_measured is not None:
        reasons = could_not_measure(why_not_measured, m, c, settings_for(site))
        return Recheck(design, design_result, reasons)
    built = as_built_input(design, m)
    result = check_bearing(built, basis)
    reasons = review(design, design_result, m, c, built, result, basis, settings_for(site))
    return Recheck(built, result, reasons)


# One piece: receiving one as-built record is one transaction in a fixed order (refusals, re-
# check, review, store, state, events), seen whole.
def record_as_built(
    db: store.Database,
    *,
    site: Row,
    bearing: Row,
    uuid: str,
    measured_at: str,
    design_revision: int,
    measurements: Row,
    checklist: Row,
    notes: str,
    inspector_id: int,
    now: datetime | None = None,
    provisional: object = None,
    why_not_measured: str | None = None,
) -> tuple[store.RecordStored, Recheck]:
    """Re-check and store one as-built record, idempotently by the phone's UUID.

    ``provisional`` is the verdict the phone's mirror of the core showed while the values
    were typed, if it sent one; the server's answer is stored and wins, and a difference is
    written as an event so that a drifting mirror is found. ``why_not_measured`` makes it a
    record of a bearing that could not be measured (see :func:`recheck`)."""
    rc = recheck(site, bearing, measurements, checklist, why_not_measured)
    reasons = list(rc.reasons)
    if design_revision < bearing["revision"]:
        reasons.insert(
            0,
            ReviewReason(
                "older-design-revision",
                BLOCKS,
                f"Measured against design revision {design_revision}; the design is now at revision {bearing['revision']}.",
                (("measured_against", design_revision), ("current", bearing["revision"])),
            ),
        )
    server_now = now or datetime.now(UTC)
    measured = datetime.fromisoformat(measured_at.replace("Z", "+00:00"))
    if measured.tzinfo is None:
        measured = measured.replace(tzinfo=UTC)
    if measured - server_now > CLOCK_AHEAD_LIMIT:
        reasons.append(
            ReviewReason(
                "clock-ahead",
                BLOCKS,
                "The phone's clock was ahead of the server's when this was recorded; its time cannot be trusted to order records.",
                (("measured_at", measured_at),),
            )
        )
    blocking = sum(1 for r in reasons if r.severity == BLOCKS)
    stored = store.insert_record(
        db,
        site_id=site["id"],
        uuid=uuid,
        bearing_id=bearing["id"],
        design_revision=design_revision,
        inspector_id=inspector_id,
        measured_at=measured_at,
        measurements=measurements,
        checklist=checklist,
        notes=notes,
        result=rc.result.as_dict(),
        reasons=[r.as_dict() for r in reasons],
        utilisation=_finite(rc.result.utilisation),
        passed=rc.result.passed,
        blocking=blocking,
        state_after_record=workflow.state_after_record,
        now=now,
        why_not_measured=why_not_measured,
    )
    # A phone that measured against an older revision checked another design: the server's
    # answer differs for that reason, and the older-revision reason already says so.
    if stored.created and provisional is not None and design_revision == bearing["revision"]:
        difference = phone_verdict_difference(provisional, rc.result, rc.reasons)
        if difference:
            store.add_event(
                db,
                kind=PHONE_VERDICT_DIFFERED,
                user_id=inspector_id,
                site_id=site["id"],
                bearing_id=bearing["id"],
                detail={"record": uuid, **difference},
                now=now,
            )
    return stored, Recheck(rc.as_built, rc.result, tuple(reasons))


def remedy_for_record(site: Row, bearing: Row, record: Row) -> Remedy | None:
    """What would pass in place of a failing as-built, for the engineer deciding on it: the
    smallest standard padstone and the shortest bearing. None when the record passes or was
    measured against an older design (its hint would be for another design)."""
    if record["passed"] or record["design_revision"] != bearing["revision"]:
        return None
    measured = measurements_from_dict(record["measurements"])
    return remedy(as_built_input(design_of(bearing), measured), basis_for(site))


PHONE_VERDICT_DIFFERED = "phone verdict differed"
# The mirror is held to 1e-9 by the shared vectors; anything beyond this is a real drift,
# not the last digit of a power function.
_UTILISATION_AGREES = 1e-6


def phone_verdict_difference(
    provisional: object, result: BearingResult, reasons: tuple[ReviewReason, ...]
) -> dict[str, Any] | None:
    """What the phone showed against what the server found, or None when they agree.

    Only the core's own verdict is compared: the reasons the server adds from what only it
    knows (a newer design revision, a clock ahead) are not the mirror's to find."""
    server_utilisation = _finite(result.utilisation)
    server = {
        "passed": result.passed,
        "governing": result.governing,
        "utilisation": server_utilisation,
        "reasons": [r.code for r in reasons],
    }
    if not isinstance(provisional, dict):
        return {"phone": None, "server": server, "differs": ["unreadable"]}
    phone = {key: provisional.get(key) for key in server}
    differs = [key for key in ("passed", "governing", "reasons") if phone[key] != server[key]]
    if not _utilisations_agree(phone["utilisation"], server_utilisation):
        differs.append("utilisation")
    if not differs:
        return None
    return {"phone": phone, "server": server, "differs": sorted(differs)}


def _utilisations_agree(phone: object, server: float | None) -> bool:
    if server is None or phone is None:
        return phone is None and server is None
    if isinstance(phone, bool) or not isinstance(phone, int | float):
        return False
    return abs(phone - server) <= _UTILISATION_AGREES * max(1.0, abs(server))


def failing_as_built(record: Row | None) -> dict[str, Any] | None:
    """What fails in an as-built record, as its stored result says (the governing check's
    code and title, and the utilisation), or None when it passes. Read, not worked out."""
    if record is None or record["passed"]:
        return None
    result = record["result"] or {}
    code = result.get("governing")
    title = next((c["title"] for c in result.get("checks", []) if c.get("code") == code), code)
    return {"check": code, "title": title, "utilisation": record["utilisation"]}


class AcceptFailingRefused(workflow.WorkflowError):
    """An acceptance of a bearing that fails as built, without its confirmation or without
    a full sentence of reason; ``field`` says which."""

    def __init__(self, message: str, field: str):
        super().__init__(message)
        self.field = field


def decide(
    db: store.Database,
    *,
    site: Row,
    bearing: Row,
    kind: str,
    reason: str,
    engineer_id: int,
    engineer_name: str | None = None,
    confirmed_failing: bool = False,
) -> Row:
    """Keep the engineer's decision on the record they saw (``bearing``'s latest record).

    Accepting a record that fails as built needs ``confirmed_failing`` (the engineer ticked
    the confirmation naming the governing check and utilisation) and a reason that is a
    full sentence (workflow.full_sentence_problem); what failed is kept with the decision.
    """
    if not workflow.can_decide(bearing["state"]):
        raise workflow.WorkflowError(
            f"Bearing {bearing['reference']} is '{bearing['state']}': there is nothing to decide."
        )
    failing = None
    now = store.get_bearing(db, site_id=site["id"], bearing_id=bearing["id"])
    # A bearing that moved since the engineer looked is refused by the store as stale,
    # whatever the decision; only an up-to-date acceptance is checked for failing.
    up_to_date = now is not None and (now["state"], now["latest_record_uuid"]) == (
        bearing["state"],
        bearing["latest_record_uuid"],
    )
    if kind == "accept" and up_to_date:
        seen = store.get_record(db, site_id=site["id"], uuid=bearing["latest_record_uuid"])
        failing = failing_as_built(seen)
    if failing is not None:
        if not confirmed_failing:
            raise AcceptFailingRefused(
                f"Bearing {bearing['reference']} fails as built ({failing['title']}, "
                f"utilisation {format_utilisation(failing['utilisation'])}): tick the "
                "confirmation that you accept it although it fails.",
                "confirm_failing",
            )
        problem = workflow.full_sentence_problem(reason)
        if problem:
            raise AcceptFailingRefused(problem, "reason")
    return store.record_decision(
        db,
        site_id=site["id"],
        bearing_id=bearing["id"],
        record_uuid=bearing["latest_record_uuid"],
        engineer_id=engineer_id,
        kind=kind,
        reason=reason,
        expected_state=bearing["state"],
        new_state=workflow.state_after_decision(kind),
        engineer_name=engineer_name,
        accepted_failing=failing,
    )


def release(
    db: store.Database,
    *,
    site: Row,
    bearing: Row,
    contractor_id: int,
    contractor_name: str,
    statement: str,
) -> Row:
    refusal = workflow.release_refusal(bearing["state"], reference=bearing["reference"])
    if refusal:
        store.add_event(
            db,
            kind="release refused",
            user_id=contractor_id,
            site_id=site["id"],
            bearing_id=bearing["id"],
            detail={"state": bearing["state"], "reason": refusal},
        )
        raise workflow.WorkflowError(refusal)
    return store.record_release(
        db,
        site_id=site["id"],
        bearing_id=bearing["id"],
        contractor_id=contractor_id,
        contractor_name=contractor_name,
        statement=statement,
        expected_state=bearing["state"],
    )


def reopen(
    db: store.Database, *, site: Row, bearing: Row, role: str, reason: str, engineer_id: int
) -> Row:
    new_state = workflow.reopen(state=bearing["state"], role=role, reason=reason)
    return store.record_reopening(
        db,
        site_id=site["id"],
        bearing_id=bearing["id"],
        engineer_id=engineer_id,
        reason=reason,
        new_state=new_state,
    )


def keep_release(
    db: store.Database,
    *,
    site: Row,
    bearing: Row,
    role: str,
    reason: str,
    seen_up_to: int,
    engineer_id: int,
) -> Row:
    """The engineer's answer to what was recorded after a release: the release stands."""
    workflow.keep_release(state=bearing["state"], role=role, reason=reason)
    return store.keep_release(
        db,
        site_id=site["id"],
        bearing_id=bearing["id"],
        engineer_id=engineer_id,
        reason=reason,
        seen_up_to=seen_up_to,
    )


def sign_off(
    db: store.Database, *, site_id: str, engineer_id: int, engineer_name: str, statement: str
) -> store.Row:
    """The engineer signs the site record off as it stands at this moment."""
    return store.add_sign_off(
        db,
        site_id=site_id,
        engineer_id=engineer_id,
        engineer_name=engineer_name,
        statement=statement,
    )


def refused(
    db: store.Database,
    *,
    user_id: int,
    action: str,
    site_id: str | None = None,
    role: str | None = None,
) -> None:
    """Someone asked to do what they may not: the audit trail keeps it (a "refused" event
    with the action, and their role on the site when it was a site's action)."""
    detail = {"action": action} if role is None else {"action": action, "role": role}
    store.add_event(db, kind="refused", user_id=user_id, site_id=site_id, detail=detail)


def _finite(x: float) -> float | None:
    return x if x != float("inf") else None


class _PhotoFiles:
    """The files a photo upload brings, written inside the write transaction that stores
    their rows, so that whether a file is new is decided while no other upload can write.

    A file is new when no stored photo names it. Only new files are removed when the
    upload is refused or fails; a file another photo already uses is never touched, so two
    uploads of the same picture cannot remove each other's file. A crash after the files
    are written and before the commit leaves files no row names, which the start-up sweep
    (``sweep_photo_files``) removes; it never leaves a row without its file.
    """

    def __init__(self, db: store.Database, photos: PhotoFiles):
        self.db = db
        self.photos = photos
        self.new: list[str] = []

    def keep(self, photo: KeptPhoto) -> None:
        pictures = (
            (photo.display_jpeg, photo.display_sha256),
            (photo.thumbnail_jpeg, photo.thumbnail_sha256),
        )
        in_use = store.photo_files_in_use(self.db, [sha for _data, sha in pictures])
        for data, sha in pictures:
            if sha not in in_use and sha not in self.new:
                self.new.append(sha)
            self.photos.put(data)
        self.photos.put_print(photo.display_sha256, photo.print_jpeg)  # removed with the picture

    def remove_new(self) -> None:
        for sha in self.new:
            with contextlib.suppress(OSError, ValueError):
                self.photos.delete(sha)
        self.new.clear()


def store_photo(
    db: store.Database,
    *,
    site: Row,
    record_uuid: str,
    photo: KeptPhoto,
    photos: PhotoFiles,
    user_id: int,
    uuid: str | None = None,
    max_photos: int | None = None,
) -> store.Stored:
    """Keep an ingested photo (sitecheck.photos.IngestedPhoto): its facts in the database and
    both sizes on disk by their hash (the print copy under the display picture's), all in one
    write transaction, idempotent by the photo's UUID.

    A refusal (an id already used, ``max_photos`` reached) leaves no file behind.
    """
    files = _PhotoFiles(db, photos)
    with store.transaction(db):  # the write lock, held until the files are settled
        try:
            return add_photo_row(
                db,
                site=site,
                record_uuid=record_uuid,
                photo=photo,
                user_id=user_id,
                uuid=uuid,
                max_photos=max_photos,
                keep_files=lambda: files.keep(photo),
            )
        except BaseException:
            files.remove_new()
            raise


def record_as_built_with_photos(
    db: store.Database,
    *,
    photos_store: PhotoFiles,
    photos: list[KeptPhoto],
    max_photos: int | None = None,
    **record: Any,
) -> store.RecordStored:
    """An as-built record and its photos, all kept or none (the online form sends them
    together). The photos are stored only with a record this call created: a form sent again
    shows the first record and brings no files."""
    files = _PhotoFiles(db, photos_store)
    with store.transaction(db):
        try:
            stored, _recheck = record_as_built(db, **record)
            if stored.created:
                for photo in photos:
                    add_photo_row(
                        db,
                        site=record["site"],
                        record_uuid=stored.row["uuid"],
                        photo=photo,
                        user_id=record["inspector_id"],
                        max_photos=max_photos,
                        keep_files=functools.partial(files.keep, photo),
                    )
        except BaseException:
            files.remove_new()
            raise
    return stored


def add_photo_row(
    db: store.Database,
    *,
    site: Row,
    record_uuid: str,
    photo: KeptPhoto,
    user_id: int,
    uuid: str | None = None,
    max_photos: int | None = None,
    keep_files: Callable[[], None] | None = None,
) -> store.Stored:
    """The database row of a photo; ``keep_files`` writes its files once the store has
    decided to keep it (see store.insert_photo)."""
    import uuid as uuidlib

    lat, lon = photo.gps if photo.gps else (None, None)
    return store.insert_photo(
        db,
        site_id=site["id"],
        uuid=uuid or str(uuidlib.uuid4()),
        record_uuid=record_uuid,
        sha256=photo.display_sha256,
        thumb_sha256=photo.thumbnail_sha256,
        width=photo.display_width,
        height=photo.display_height,
        size_bytes=photo.display_bytes,
        captured_at=camera_time(photo.capture_time),
        gps_lat=lat,
        gps_lon=lon,
        user_id=user_id,
        upload_sha256=photo.original_sha256 or None,
        max_photos=max_photos,
        keep_files=keep_files,
    )


@dataclass(frozen=True)
class Swept:
    temporary_files: int
    orphan_files: int


def sweep_photo_files(
    db: store.Database, photos: PhotoFiles, *, older_than_s: float = 0.0
) -> Swept:
    """Remove what a crash mid-upload leaves in the photo store: temporary files, and
    pictures no photo row names (written, then the process died before its commit).

    Run at start-up (everything such, ``older_than_s`` 0) and by ``sitecheck maintain``
    while serving (only files older than ``older_than_s``). Candidates are found without the
    lock (the store may be large); each is removed only after it is found unnamed again
    inside a write transaction, where no upload can be between writing a file and
    committing its row.
    """
    cutoff = time.time() - older_than_s
    candidates: list[str] = []
    batch: list[str] = []
    for sha in photos.iter_all_shas():
        batch.append(sha)
        if len(batch) == 400:
            candidates += sorted(set(batch) - store.photo_files_in_use(db, batch))
            batch = []
    candidates += sorted(set(batch) - store.photo_files_in_use(db, batch))
    if older_than_s > 0:
        candidates = [sha for sha in candidates if _last_written(photos, sha) < cutoff]
    with store.transaction(db):
        temporary = photos.remove_stale_temp_files(older_than_seconds=older_than_s)
        orphans = sorted(set(candidates) - store.photo_files_in_use(db, candidates))
        for sha in orphans:
            with contextlib.suppress(OSError):
                photos.delete(sha)
    return Swept(temporary, len(orphans))


def _last_written(photos: PhotoFiles, sha: str) -> float:
    """When the picture or its print copy was last written (the later of the two)."""
    times: list[float] = []
    for path in (photos.path_for(sha), photos.print_path_for(sha)):
        with contextlib.suppress(FileNotFoundError):
            times.append(path.stat().st_mtime)
    return max(times, default=0.0)


def camera_time(capture_time: str | None) -> str | None:
    """The camera's time if it said its zone. A zoneless camera time cannot be stored as UTC
    without guessing the zone, so it is left out and the record's own time stands."""
    if not capture_time:
        return None
    try:
        moment = datetime.fromisoformat(capture_time)
    except ValueError:
        return None
    return capture_time if moment.tzinfo is not None else None


# --- sites and who is on them ------------------------------------------------------------------


def make_site(
    db: store.Database, *, name: str, address: str, basis_name: str, by_user_id: int
) -> Row:
    """A new site on the named code basis with the default review settings; whoever makes
    it is its first engineer."""
    code_basis, review_settings = default_site_settings(basis_name)
    return store.create_site(
        db,
        name=name,
        address=address,
        code_basis=code_basis,
        review_settings=review_settings,
        created_by=by_user_id,
    )


def save_site_settings(
    db: store.Database,
    *,
    site_id: str,
    by_user_id: int,
    name: str,
    address: str,
    code_basis: Row,
    review_settings: Row,
) -> None:
    """Store a site's settings once they read back exactly as the checks will read them, so
    nothing is stored that the checks would refuse (InputError, TypeError or ValueError
    says why, and nothing is saved)."""
    basis_for({"code_basis": code_basis})
    settings_for({"review_settings": review_settings})
    store.update_site_settings(
        db,
        site_id=site_id,
        user_id=by_user_id,
        name=name,
        address=address,
        code_basis=code_basis,
        review_settings=review_settings,
    )


def let_make_sites(db: store.Database, *, user_id: int, allowed: bool, by_user_id: int) -> None:
    """Give or take the permission to make sites (with its event)."""
    store.set_may_make_sites(db, user_id=user_id, allowed=allowed, by_user_id=by_user_id)


def change_role(
    db: store.Database, *, site_id: str, user_id: int, role: str, by_user_id: int
) -> None:
    """A member's new role; store.LastEngineer when it would leave the site no engineer."""
    store.set_role(db, user_id=user_id, site_id=site_id, role=role, by_user_id=by_user_id)


def remove_member(db: store.Database, *, site_id: str, user_id: int, by_user_id: int) -> None:
    """Take someone off a site (their records stay); store.LastEngineer as for a role."""
    store.remove_membership(db, user_id=user_id, site_id=site_id, by_user_id=by_user_id)
