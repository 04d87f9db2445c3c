"""Making a site record (PDF) in the background, with progress a page can show.

A long site's record takes tens of seconds: too long for one request with nothing to see.
A job runs on a thread of the server and writes its state to a small JSON file beside the
PDF it is making; pages read that file. So every server thread (or process) sees the same
state, and a job cut off by a restart shows as stopped rather than running for ever.

Files: ``<folder>/<site id>/<job id>.json`` and ``<job id>.pdf``. A site has one job at a
time (starting another while one runs joins it), and keeps its newest job and its newest
finished record; older ones are removed when a job ends.
"""

from __future__ import annotations

import contextlib
import json
import logging
import os
import re
import tempfile
import threading
import time
import uuid
from collections.abc import Callable
from dataclasses import asdict, dataclass, replace
from datetime import UTC, datetime
from pathlib import Path

from sitecheck import store
from sitecheck.report.collect import collect
from sitecheck.report.pdf import BEFORE_BEARINGS, write_pdf

__all__ = ["DONE", "FAILED", "MAKING", "STOPPED", "WAITING", "Job", "RecordJobs", "site_record"]

WAITING, MAKING, DONE, FAILED, STOPPED = "waiting", "making", "done", "failed", "stopped"
RUNNING = (WAITING, MAKING)

# Progress is written at most this often (and always at the last bearing): one small file
# write per bearing would cost more than some bearings' pages.
_WRITE_EVERY_S = 0.2
# A waiting job says it is alive this often, so a job waiting behind a long one in another
# process is not taken for one stopped by a restart.
_HEARTBEAT_S = 30.0

_ID = re.compile(r"[0-9a-f]{32}")
_SITE_ID = re.compile(r"[A-Za-z0-9_-]{1,64}")

log = logging.getLogger(__name__)

# make(out, progress): write the PDF to `out`, calling progress(done, total, bearing).
Progress = Callable[[int, int, str], None]
Make = Callable[[Path, Progress], None]


def _now() -> str:
    return datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


@dataclass(frozen=True)
class Job:
    """One making of a site's record, as its state file holds it."""

    id: str
    site_id: str
    state: str
    bearings_done: int
    bearings: int
    current: str
    started_by: int | None
    created_at: str
    updated_at: str
    finished_at: str | None = None
    size_bytes: int | None = None
    error: str | None = None
    # Orders jobs started within the same second (the times above are to the second).
    started_ns: int = 0

    @property
    def running(self) -> bool:
        return self.state in RUNNING

    def as_dict(self) -> dict:
        return asdict(self) | {"running": self.running}


class RecordJobs:
    """The jobs of every site under one folder, and the threads of this process making them.

    ``workers`` records are made at once by this process; more wait their turn (each holds
    a few hundred MB at its peak, and the server has other work).
    """

    def __init__(self, folder: str | os.PathLike, *, workers: int = 1, stale_after_s=300.0):
        self.folder = Path(folder)
        self.stale_after_s = stale_after_s
        self._slots = threading.BoundedSemaphore(workers)
        self._lock = threading.RLock()
        self._alive: set[str] = set()
        self._threads: dict[str, threading.Thread] = {}
        self._site_of: dict[str, str] = {}

    # --- reading ----------------------------------------------------------------------------

    def site_folder(self, site_id: str) -> Path:
        if not isinstance(site_id, str) or not _SITE_ID.fullmatch(site_id):
            raise ValueError(f"A site id is letters, digits, - and _ only; got {site_id!r:.80}.")
        return self.folder / site_id

    def pdf_path(self, job: Job) -> Path:
        return self.site_folder(job.site_id) / f"{job.id}.pdf"

    def jobs(self, site_id: str) -> list[Job]:
        """Every job kept for the site, newest first."""
        folder = self.site_folder(site_id)
        if not folder.is_dir():
            return []
        found = []
        for path in folder.glob("*.json"):
            if not _ID.fullmatch(path.stem):
                continue
            try:
                job = Job(**json.loads(path.read_text(encoding="utf-8")))
            except (OSError, ValueError, TypeError):
                continue  # being replaced this instant, or not ours
            if job.site_id == site_id and job.id == path.stem:
                found.append(self._as_seen(job))
        return sorted(found, key=lambda j: (j.created_at, j.started_ns), reverse=True)

    def latest(self, site_id: str) -> Job | None:
        found = self.jobs(site_id)
        return found[0] if found else None

    def latest_done(self, site_id: str) -> Job | None:
        """The newest finished record whose file is still there."""
        return next(
            (j for j in self.jobs(site_id) if j.state == DONE and self.pdf_path(j).is_file()),
            None,
        )

    def _as_seen(self, job: Job) -> Job:
        """A job no thread is making any more (the server stopped) is shown as stopped."""
        if not job.running:
            return job
        with self._lock:
            if job.id in self._alive:
                return job
        try:
            age = time.time() - datetime.fromisoformat(job.updated_at).timestamp()
        except ValueError:
            age = float("inf")
        if age <= self.stale_after_s:
            return job  # another process may be making it
        return replace(
            job,
            state=STOPPED,
            error="Making it stopped part way, most likely because the server was restarted. "
            "Nothing was kept; start it again.",
        )

    def problem(self) -> str | None:
        """For the health check: why this process's background making is not well, or None.

        Unwell means the folder cannot be written, or a job this process is making has not
        moved for ``stale_after_s`` (a waiting job says it is alive every 30 s, a making one
        at least at every bearing).
        """
        try:
            self.folder.mkdir(parents=True, exist_ok=True)
            with tempfile.NamedTemporaryFile(dir=self.folder, prefix=".health-"):
                pass
        except OSError as error:
            return f"the site records folder cannot be written ({error.strerror or error})"
        with self._lock:
            alive = {job_id: t for job_id, t in self._threads.items() if job_id in self._alive}
        for job_id, thread in alive.items():
            if not thread.is_alive():
                continue
            for job in self.jobs(self._site_of[job_id]):
                if job.id != job_id:
                    continue
                try:
                    age = time.time() - datetime.fromisoformat(job.updated_at).timestamp()
                except ValueError:
                    age = float("inf")
                if age > self.stale_after_s:
                    return f"a site record has not moved for {age:.0f} s"
        return None

    # --- making -----------------------------------------------------------------------------

    def start(self, site_id: str, *, user_id: int | None, make: Make) -> tuple[Job, bool]:
        """Start making the site's record, or join the job already making it.

        Returns the job and whether this call started it.
        """
        with self._lock:
            current = self.latest(site_id)
            if current is not None and current.running:
                return current, False
            now = _now()
            job = Job(
                id=uuid.uuid4().hex,
                site_id=site_id,
                state=WAITING,
                bearings_done=0,
                bearings=0,
                current="",
                started_by=user_id,
                created_at=now,
                updated_at=now,
                started_ns=time.time_ns(),
            )
            self._save(job)
            self._alive.add(job.id)
            thread = threading.Thread(
                target=self._run, args=(job, make), name=f"site-record-{job.id[:8]}", daemon=True
            )
            self._site_of[job.id] = site_id
            self._threads[job.id] = thread
        thread.start()
        return job, True

    def wait(self, job_id: str, timeout: float | None = None) -> bool:
        """Wait for a job of this process to end; True if it has (for tests and the CLI)."""
        with self._lock:
            thread = self._threads.get(job_id)
        if thread is None:
            return True
        thread.join(timeout)
        return not thread.is_alive()

    def _run(self, job: Job, make: Make) -> None:
        part = self.pdf_path(job).with_suffix(".part")
        try:
            while not self._slots.acquire(timeout=_HEARTBEAT_S):
                job = self._save(replace(job, updated_at=_now()))
            try:
                job = self._save(replace(job, state=MAKING, updated_at=_now()))
                last_write = 0.0

                def progress(done: int, total: int, what: str) -> None:
                    nonlocal job, last_write
                    job = replace(
                        job, bearings_done=done, bearings=total, current=what, updated_at=_now()
                    )
                    if done >= total or time.monotonic() - last_write >= _WRITE_EVERY_S:
                        self._save(job)
                        last_write = time.monotonic()

                make(part, progress)
                final = self.pdf_path(job)
                os.replace(part, final)
                job = self._save(
                    replace(
                        job,
                        state=DONE,
                        bearings_done=job.bearings,
                        current="",
                        updated_at=_now(),
                        finished_at=_now(),
                        size_bytes=final.stat().st_size,
                    )
                )
            finally:
                self._slots.release()
        except Exception as error:
            log.exception("making the site record of site %s failed", job.site_id)
            with contextlib.suppress(OSError):
                part.unlink(missing_ok=True)
            with contextlib.suppress(OSError):
                self._save(
                    replace(
                        job,
                        state=FAILED,
                        updated_at=_now(),
                        finished_at=_now(),
                        error=_plain_error(job, error),
                    )
                )
        finally:
            with self._lock:
                self._alive.discard(job.id)
            with contextlib.suppress(OSError):
                self._prune(job.site_id)

    def _save(self, job: Job) -> Job:
        folder = self.site_folder(job.site_id)
        folder.mkdir(parents=True, exist_ok=True)
        descriptor, temp = tempfile.mkstemp(dir=folder, prefix=".state-", suffix=".tmp")
        try:
            with os.fdopen(descriptor, "w", encoding="utf-8") as file:
                json.dump(asdict(job), file)
            # Readers see the old state or the new one, never half of one.
            os.replace(temp, folder / f"{job.id}.json")
        except BaseException:
            with contextlib.suppress(OSError):
                os.unlink(temp)
            raise
        return job

    def _prune(self, site_id: str) -> None:
        """Keep the newest job, the newest finished record and anything still running."""
        jobs = self.jobs(site_id)
        keep = {jobs[0].id} if jobs else set()
        keep |= {j.id for j in jobs if j.running}
        done = next((j for j in jobs if j.state == DONE), None)
        if done:
            keep.add(done.id)
        folder = self.site_folder(site_id)
        for j in jobs:
            if j.id in keep:
                continue
            for suffix in (".pdf", ".part", ".json"):
                with contextlib.suppress(FileNotFoundError):
                    (folder / f"{j.id}{suffix}").unlink()


def _plain_error(job: Job, error: Exception) -> str:
    where = (
        f" at bearing {job.current} ({job.bearings_done} of {job.bearings} done)"
        if job.current and job.state == MAKING
        else ""
    )
    detail = str(error).strip() or type(error).__name__
    if isinstance(error, OSError) and error.strerror:
        detail = f"the file could not be written ({error.strerror})"
    return (
        f"The site record could not be made{where}: {detail}. Nothing was kept. Start it "
        "again; if it stops again, tell the person who runs sitecheck."
    )


def site_record(db_path: str | os.PathLike, site_id: str, *, photo_store=None) -> Make:
    """What a job runs: read the site from the store on the job's own connection (SQLite
    connections must not cross threads), then write the PDF, counting bearings."""

    def make(out: Path, progress: Progress) -> None:
        db = store.open_db(db_path)
        try:
            rec = collect(db, site_id)
        finally:
            db.conn.close()
        total = len(rec.bearings)
        progress(0, total, "")

        def step(done: int, _steps: int, what: str) -> None:
            progress(min(total, max(0, done - BEFORE_BEARINGS)), total, what)

        write_pdf(rec, out, photo_store=photo_store, progress=step)

    return make
