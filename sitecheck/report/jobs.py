"""Making a site record (PDF) and the data export (CSV in a zip, JSON) in the background,
with progress a page can show.

A long site's record takes tens of seconds: too long for one request with nothing to see,
and a request that makes a PDF holds a server thread and a core while it does. Every site
record and data export is made here, on a thread of the server, one at a time per process
(``workers``); each kind of file is a job of its own kind.

The jobs themselves live in the database (sitecheck.store.record_jobs), so every server
process sees the same jobs: a site has one making at a time whichever process is asked, a
finished record is handed out again while nothing on the site has changed, and a person may
start only so many makings an hour. A job whose process stopped (a restart) stops being
updated and shows as stopped; the next request starts afresh.

Files: ``<folder>/<site id>/<job id>.pdf`` (``.zip``, ``.json``; ``.part`` while being
written). A site keeps, of each kind, the files of its newest job and its newest finished
one; older ones are removed when a job ends.
"""

from __future__ import annotations

import contextlib
import functools
import hashlib
import logging
import os
import re
import shutil
import tempfile
import threading
import time
import uuid
from collections.abc import Callable
from dataclasses import asdict, dataclass, fields, replace
from datetime import UTC, datetime
from pathlib import Path

import sitecheck
from sitecheck import store
from sitecheck.report import export
from sitecheck.report.collect import collect
from sitecheck.report.pdf import BEFORE_BEARINGS, write_pdf
from sitecheck.store.migrations import RECORD_KINDS
from sitecheck.store.record_jobs import STOPPED_BY_RESTART

__all__ = [
    "DONE",
    "FAILED",
    "MAKING",
    "STOPPED",
    "WAITING",
    "KINDS",
    "Job",
    "RecordJobs",
    "TooManyRecords",
    "data_export",
    "site_record",
]

WAITING, MAKING, DONE, FAILED, STOPPED = "waiting", "making", "done", "failed", "stopped"
RUNNING = (WAITING, MAKING)
TooManyRecords = store.TooManyRecords
KINDS = RECORD_KINDS
# The file each kind makes.
SUFFIXES = {"pdf": ".pdf", "csv": ".zip", "json": ".json"}

# Progress is written at most this often (and always at the last bearing): one database
# write per bearing would cost more than some bearings' pages.
_WRITE_EVERY_S = 0.5
# A waiting job says it is alive this often, so a job waiting behind a long one in another
# process is not taken for one stopped by a restart.
_HEARTBEAT_S = 30.0
# A work folder untouched this long belongs to no making still under way.
_LEFT_BEHIND_S = 24 * 3600.0

_ID = re.compile(r"[0-9a-f]{32}")
_SITE_ID = re.compile(r"[A-Za-z0-9_-]{1,64}")

log = logging.getLogger(__name__)

# make(out, progress): write the PDF to `out`, calling progress(done, total, bearing).
Progress = Callable[[int, int, str], None]
Make = Callable[[Path, Progress], None]


@dataclass(frozen=True)
class Job:
    """One making of a site's record, as its row holds it."""

    id: str
    site_id: str
    kind: str
    selection: str  # the part of the site (store.Selection.key()); empty: the whole site
    state: str
    bearings_done: int
    bearings: int
    current: str
    started_by: int | None
    site_version: str
    created_at: str
    updated_at: str
    finished_at: str | None = None
    size_bytes: int | None = None
    error: str | None = None

    @property
    def running(self) -> bool:
        return self.state in RUNNING

    def as_dict(self) -> dict:
        return asdict(self) | {"running": self.running}

    @classmethod
    def from_row(cls, row: dict) -> Job:
        return cls(**{f.name: row[f.name] for f in fields(cls)})

    @classmethod
    def read(cls, db: store.Database, job_id: str) -> Job:
        """The job as stored now: one being made is never deleted."""
        row = store.get_record_job(db, job_id)
        if row is None:
            raise store.NotFound(f"No record job {job_id}.")
        return cls.from_row(row)


@functools.cache
def _report_code() -> str:
    """The code that lays a record out: a record made by other code is not reused."""
    digest = hashlib.sha256(getattr(sitecheck, "__version__", "").encode())
    for path in sorted(Path(__file__).parent.glob("*.py")):
        digest.update(path.name.encode() + b"\0" + path.read_bytes())
    return digest.hexdigest()


def _seconds_since(moment: str) -> float:
    try:
        then = datetime.fromisoformat(moment.replace("Z", "+00:00"))
    except ValueError:
        return float("inf")
    return (datetime.now(UTC) - then).total_seconds()


class RecordJobs:
    """The site records made under one folder, on the database at ``db_path``, and the
    threads of this process making them.

    ``workers`` records are made at once by this process; more wait their turn (each holds
    a few hundred MB at its peak, and the server has other work). A person may start
    ``per_user`` makings in ``window_s`` seconds; joining a making under way, or being handed
    a finished record of an unchanged site, costs nothing and is not counted.
    """

    def __init__(
        self,
        folder: str | os.PathLike,
        db_path: str | os.PathLike,
        *,
        workers: int = 1,
        stale_after_s: float = 300.0,
        per_user: int = 10,
        window_s: float = 3600.0,
    ):
        self.folder = Path(folder)
        self.db_path = db_path
        self.stale_after_s = stale_after_s
        self.per_user = per_user
        self.window_s = window_s
        self._slots = threading.BoundedSemaphore(workers)
        self._lock = threading.Lock()
        self._threads: dict[str, threading.Thread] = {}

    @contextlib.contextmanager
    def _db(self):
        db = store.open_db(self.db_path)
        try:
            yield db
        finally:
            db.conn.close()

    # --- reading ----------------------------------------------------------------------------

    def site_folder(self, site_id: str) -> Path:
        if not isinstance(site_id, str) or not _SITE_ID.fullmatch(site_id):
            raise ValueError(f"A site id is letters, digits, - and _ only; got {site_id!r:.80}.")
        return self.folder / site_id

    def file_path(self, job: Job) -> Path:
        if not _ID.fullmatch(job.id):
            raise ValueError(f"A job id is 32 hex digits; got {job.id!r:.80}.")
        return self.site_folder(job.site_id) / f"{job.id}{SUFFIXES[job.kind]}"

    pdf_path = file_path

    def jobs(self, site_id: str, kind: str = "pdf", selection: str | None = "") -> list[Job]:
        """Every making of the site's record of ``kind`` and of the part ``selection`` (a
        Selection's key; empty: the whole site; None: every part), newest first."""
        self.site_folder(site_id)  # refuses an odd id before it reaches the database
        _known(kind)
        with self._db() as db:
            rows = store.record_jobs_for_site(db, site_id=site_id, kind=kind, selection=selection)
        return [self._as_seen(Job.from_row(r)) for r in rows]

    def latest(self, site_id: str, kind: str = "pdf", selection: str = "") -> Job | None:
        found = self.jobs(site_id, kind, selection)
        return found[0] if found else None

    def latest_done(self, site_id: str, kind: str = "pdf", selection: str = "") -> Job | None:
        """The newest finished file of ``kind`` and part that is still there."""
        return next(
            (
                j
                for j in self.jobs(site_id, kind, selection)
                if j.state == DONE and self.file_path(j).is_file()
            ),
            None,
        )

    def current(self, site_id: str, kind: str = "pdf", selection: str = "") -> Job | None:
        """The newest finished file of ``kind`` and part if nothing on the site has changed
        since."""
        done = self.latest_done(site_id, kind, selection)
        if done is None:
            return None
        with self._db() as db:
            return done if done.site_version == self.version(db, site_id) else None

    def version(self, db, site_id: str) -> str:
        """What a record is made from: the site as it is now, and the code that lays it out."""
        return hashlib.sha256(
            (store.site_version(db, site_id) + _report_code()).encode()
        ).hexdigest()

    def _as_seen(self, job: Job) -> Job:
        """A job no process is making any more (its server stopped) is shown as stopped."""
        if not job.running or _seconds_since(job.updated_at) <= self.stale_after_s:
            return job
        return replace(job, state=STOPPED, error=STOPPED_BY_RESTART)

    def problem(self) -> str | None:
        """For the health check: why this process's background making is not well, or None.

        Unwell means the records folder cannot be written, or a job this process is making
        has not moved for ``stale_after_s`` (a waiting job says it is alive every 30 s, a
        making one at least at every bearing).
        """
        try:
            self.folder.mkdir(parents=True, exist_ok=True)
            with tempfile.NamedTemporaryFile(dir=self.folder, prefix=".health-", suffix=".tmp"):
                pass
        except OSError as error:
            return f"the site records folder cannot be written ({error.strerror or error})"
        with self._lock:
            mine = [job_id for job_id, thread in self._threads.items() if thread.is_alive()]
        if not mine:
            return None
        with self._db() as db:
            for job_id in mine:
                row = store.get_record_job(db, job_id)
                if row is None or not Job.from_row(row).running:
                    continue
                age = _seconds_since(row["updated_at"])
                if age > self.stale_after_s:
                    return f"a site record has not moved for {age:.0f} s"
        return None

    # --- making -----------------------------------------------------------------------------

    def start(
        self,
        site_id: str,
        *,
        user_id: int | None,
        make: Make,
        kind: str = "pdf",
        selection: str = "",
    ) -> tuple[Job, str]:
        """Start making the site's file of ``kind`` (of the part ``selection`` keeps: a
        Selection's key, empty for the whole site), join the making under way, or hand out
        the finished file of an unchanged site.

        Returns the job and "started", "joined" or "reused"; raises TooManyRecords when
        ``user_id`` may not start another making of that kind yet.
        """
        self.site_folder(site_id)
        _known(kind)
        with self._db() as db:
            row, how = store.start_record_job(
                db,
                job_id=uuid.uuid4().hex,
                site_id=site_id,
                kind=kind,
                selection=selection,
                user_id=user_id,
                version=self.version(db, site_id),
                file_kept=lambda done: self.file_path(Job.from_row(done)).is_file(),
                per_user=self.per_user,
                window_s=self.window_s,
                stale_after_s=self.stale_after_s,
            )
        job = Job.from_row(row)
        if how == "started":
            thread = threading.Thread(
                target=self._run, args=(job, make), name=f"site-record-{job.id[:8]}", daemon=True
            )
            with self._lock:
                self._threads[job.id] = thread
            thread.start()
        return job, how

    def wait(self, job_id: str, timeout: float | None = None) -> bool:
        """Wait for a job of this process to end; True if it has (for tests and the CLI)."""
        with self._lock:
            thread = self._threads.get(job_id)
        if thread is None:
            return True
        thread.join(timeout)
        return not thread.is_alive()

    def _run(self, job: Job, make: Make) -> None:
        part = self.file_path(job).with_suffix(".part")
        try:
            with self._db() as db:
                while not self._slots.acquire(timeout=_HEARTBEAT_S):
                    store.update_record_job(db, job.id)  # still waiting, still alive
            try:
                self._make(job, make, part)
            finally:
                self._slots.release()
        except Exception as error:
            log.exception("making the site record of site %s failed", job.site_id)
            with contextlib.suppress(OSError):
                part.unlink(missing_ok=True)
            with contextlib.suppress(Exception), self._db() as db:
                seen = Job.read(db, job.id)
                now = _now()
                store.update_record_job(
                    db, job.id, state=FAILED, finished_at=now, error=_plain_error(seen, error)
                )
        finally:
            with self._lock:
                self._threads.pop(job.id, None)
            with contextlib.suppress(OSError, ValueError):
                self._prune(job.site_id, job.kind, job.selection)

    def _make(self, job: Job, make: Make, part: Path) -> None:
        with self._db() as db:
            store.update_record_job(db, job.id, state=MAKING)
            last_write = 0.0

            def progress(done: int, total: int, what: str) -> None:
                nonlocal last_write
                if done >= total or time.monotonic() - last_write >= _WRITE_EVERY_S:
                    store.update_record_job(
                        db, job.id, bearings_done=done, bearings=total, current=what
                    )
                    last_write = time.monotonic()

            part.parent.mkdir(parents=True, exist_ok=True)
            make(part, progress)
            final = self.file_path(job)
            os.replace(part, final)
            made = Job.read(db, job.id)
            store.update_record_job(
                db,
                job.id,
                state=DONE,
                bearings_done=made.bearings,
                current="",
                finished_at=_now(),
                size_bytes=final.stat().st_size,
            )

    def _prune(self, site_id: str, kind: str, selection: str = "") -> None:
        """Of ``kind``, keep the files of the newest job and the newest finished file of the
        whole site and of the part ``selection``, and anything running; remove the rest (older
        files, other parts' files, and files a stopped process left)."""
        jobs = self.jobs(site_id, kind, None)
        keep = {j.id for j in jobs if j.running}
        for part in {"", selection}:
            mine = [j for j in jobs if j.selection == part]
            newest_done = next((j for j in mine if j.state == DONE), None)
            keep |= {j.id for j in (mine[:1] + [newest_done]) if j is not None}
        folder = self.site_folder(site_id)
        if not folder.is_dir():
            return
        ours = {j.id for j in jobs}
        for path in folder.iterdir():
            if path.is_dir() and path.name.startswith(export.WORK_PREFIX):
                # The CSV files of an export whose process stopped mid-way.
                if time.time() - path.stat().st_mtime > _LEFT_BEHIND_S:
                    shutil.rmtree(path, ignore_errors=True)
                continue
            if path.stem in keep:
                continue
            # A .part is a file cut short; whose kind it was does not matter once its job ended.
            if path.suffix == SUFFIXES[kind] or (path.suffix == ".part" and path.stem in ours):
                with contextlib.suppress(FileNotFoundError):
                    path.unlink()


def _known(kind: str) -> None:
    if kind not in KINDS:
        raise ValueError(f"A site record is one of {', '.join(KINDS)}; got {kind!r:.40}.")


def _now() -> str:
    return store.timestamp()


# What each kind of file is called in messages.
WORDS = {"pdf": "site record", "csv": "data export (CSV)", "json": "data export (JSON)"}


def _plain_error(job: Job, error: Exception) -> str:
    where = (
        f" at bearing {job.current} ({job.bearings_done} of {job.bearings} done)"
        if job.current and job.state == MAKING
        else ""
    )
    detail = str(error).strip() or type(error).__name__
    if isinstance(error, OSError) and error.strerror:
        detail = f"the file could not be written ({error.strerror})"
    what = WORDS.get(job.kind, "site record")
    return (
        f"The {what} could not be made{where}: {detail}. Nothing was kept. Start it "
        "again; if it stops again, tell the person who runs sitecheck."
    )


@contextlib.contextmanager
def _site_as_it_is(
    db_path: str | os.PathLike, site_id: str, selection: store.Selection | None = None
):
    """The site's record on a connection of the job's own (SQLite connections must not cross
    threads), read as the database was at its first read however long the writing takes."""
    db = store.open_db(os.fspath(db_path))
    try:
        with store.read_snapshot(db):
            yield collect(db, site_id, selection)
    finally:
        db.conn.close()


def site_record(
    db_path: str | os.PathLike,
    site_id: str,
    *,
    photo_store=None,
    selection: store.Selection | None = None,
) -> Make:
    """What a PDF job runs: write the PDF bearing by bearing as the store hands them out (of
    the part ``selection`` keeps, or the whole site)."""

    def make(out: Path, progress: Progress) -> None:
        with _site_as_it_is(db_path, site_id, selection) as rec:
            total = len(rec.bearings)
            progress(0, total, "")

            def step(done: int, _steps: int, what: str) -> None:
                progress(min(total, max(0, done - BEFORE_BEARINGS)), total, what)

            write_pdf(rec, out, photo_store=photo_store, progress=step)

    return make


def data_export(db_path: str | os.PathLike, site_id: str, kind: str) -> Make:
    """What a data export job runs ("csv": the zip of CSV files; "json"): written bearing by
    bearing, so its memory does not grow with the site."""
    if kind not in ("csv", "json"):
        raise ValueError(f"A data export is csv or json; got {kind!r:.40}.")

    def make(out: Path, progress: Progress) -> None:
        with _site_as_it_is(db_path, site_id) as rec:
            progress(0, len(rec.bearings), "")
            if kind == "csv":
                export.write_csv_zip(rec, out, progress=progress, workdir=out.parent)
            else:
                export.write_json(rec, out, progress=progress)

    return make
