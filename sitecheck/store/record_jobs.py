"""The making of site records (the PDF, and the data export as CSV or JSON) in the
background: one row per making, in the database so that every server process sees the same
jobs.

A site has at most one job of each kind waiting or being made at a time (a unique index says
so, whatever process asks); a finished file is reused while the site has not changed
(``site_version``); and one person may start only so many makings of each kind an hour.
"""

import hashlib
import json
from collections.abc import Callable
from datetime import datetime, timedelta
from typing import Any

import sqlite_utils

from sitecheck.store.base import Row, many, one, present, timestamp, transaction, utc_now
from sitecheck.store.errors import Conflict
from sitecheck.store.migrations import RECORD_KINDS

RUNNING = ("waiting", "making")
JOB_STATES = ("waiting", "making", "done", "failed", "stopped")
STOPPED_BY_RESTART = (
    "Making it stopped part way, most likely because the server was restarted. Nothing was "
    "kept; start it again."
)


class TooManyRecords(Conflict):
    """This person has started as many site records as one person may in the window."""

    def __init__(self, message: str, retry_at: str):
        super().__init__(message)
        self.retry_at = retry_at


def site_version(db: sqlite_utils.Database, site_id: str) -> str:
    """A digest that changes whenever anything a site record shows changes.

    Every change to a site's bearings, records, photos, decisions, releases and members
    writes an event on the site (and the record prints the events), so the newest event
    stands for all of them; the site's own row and its members' names are added because
    they print too.
    """
    site = one(
        db,
        "SELECT name, address, code_basis, review_settings FROM sites WHERE id = ?",
        [site_id],
    )
    newest = one(db, "SELECT max(id) AS id FROM events WHERE site_id = ?", [site_id])
    members = [
        (r["id"], r["name"], r["role"])
        for r in db.query(
            "SELECT u.id, u.name, m.role FROM memberships m JOIN users u ON u.id = m.user_id "
            "WHERE m.site_id = ? ORDER BY u.id",
            [site_id],
        )
    ]
    text = json.dumps([site, newest["id"] if newest else None, members], sort_keys=True)
    return hashlib.sha256(text.encode()).hexdigest()


def _stale_before(stale_after_s: float, now: datetime | None) -> str:
    return timestamp((now or utc_now()) - timedelta(seconds=stale_after_s))


def start_record_job(
    db: sqlite_utils.Database,
    *,
    job_id: str,
    site_id: str,
    kind: str = "pdf",
    selection: str = "",
    user_id: int | None,
    version: str,
    file_kept: Callable[[Row], bool],
    per_user: int,
    window_s: float,
    stale_after_s: float,
    now: datetime | None = None,
) -> tuple[Row, str]:
    """Start making a site's record of ``kind`` (one of RECORD_KINDS) of the part
    ``selection`` keeps (a Selection's key; empty: the whole site), join the making of that
    kind and part under way, or reuse a finished one.

    Returns the job row and what happened: "started" (a new row ``job_id``, waiting),
    "joined" (the site's record is being made), "reused" (the newest finished record was made
    from this same ``version`` of the site and ``file_kept`` says its file is still there).
    A job left running by a process that stopped (not updated for ``stale_after_s``) is
    marked stopped first. Raises TooManyRecords if ``user_id`` started ``per_user`` makings of
    this kind in the last ``window_s`` seconds. All in one write transaction, so two processes
    asking at once start one job between them.
    """
    if kind not in RECORD_KINDS:
        raise ValueError(f"record kind {kind!r} is not one of {RECORD_KINDS}")
    moment = now or utc_now()
    at = timestamp(moment)
    with transaction(db):
        _stop_stale(db, site_id, kind, selection, at, _stale_before(stale_after_s, moment))
        running = one(
            db,
            "SELECT * FROM record_jobs WHERE site_id = ? AND kind = ? AND selection = ? "
            f"AND state IN {RUNNING}",
            [site_id, kind, selection],
        )
        if running is not None:
            return running, "joined"
        done = one(
            db,
            "SELECT * FROM record_jobs WHERE site_id = ? AND kind = ? AND selection = ? "
            "AND state = 'done' ORDER BY created_at DESC, id DESC LIMIT 1",
            [site_id, kind, selection],
        )
        if done is not None and done["site_version"] == version and file_kept(done):
            return done, "reused"
        if user_id is not None:
            _refuse_too_many(db, user_id, kind, moment, per_user=per_user, window_s=window_s)
        db.execute(
            """
            INSERT INTO record_jobs (id, site_id, kind, selection, state, started_by,
                site_version, created_at, updated_at)
            VALUES (?, ?, ?, ?, 'waiting', ?, ?, ?, ?)
            """,
            [job_id, site_id, kind, selection, user_id, version, at, at],
        )
    return present(get_record_job(db, job_id), "the job"), "started"


def _stop_stale(
    db: sqlite_utils.Database, site_id: str, kind: str, selection: str, at: str, before: str
) -> None:
    """Mark stopped a making of this kind and part not heard from since ``before``: the
    process that ran it stopped."""
    db.execute(
        f"""
        UPDATE record_jobs SET state = 'stopped', error = ?, updated_at = ?
        WHERE site_id = ? AND kind = ? AND selection = ? AND state IN {RUNNING}
            AND updated_at < ?
        """,
        [STOPPED_BY_RESTART, at, site_id, kind, selection, before],
    )


def _refuse_too_many(
    db: sqlite_utils.Database,
    user_id: int,
    kind: str,
    moment: datetime,
    *,
    per_user: int,
    window_s: float,
) -> None:
    since = timestamp(moment - timedelta(seconds=window_s))
    mine = many(
        db,
        "SELECT created_at FROM record_jobs WHERE started_by = ? AND kind = ? "
        "AND created_at >= ? ORDER BY created_at",
        [user_id, kind, since],
    )
    if len(mine) >= per_user:
        oldest = datetime.fromisoformat(mine[0]["created_at"].replace("Z", "+00:00"))
        retry_at = timestamp(oldest + timedelta(seconds=window_s))
        what = _KIND_WORDS[kind]
        raise TooManyRecords(
            f"You have started {len(mine)} {what}s in the last "
            f"{_duration(window_s)}, the most one person may. The newest finished "
            f"{what} stays available; you can start another after {retry_at[11:16]} "
            "UTC.",
            retry_at,
        )


# How a refusal names each kind of making.
_KIND_WORDS = {"pdf": "site record", "csv": "data export (CSV)", "json": "data export (JSON)"}


def _duration(seconds: float) -> str:
    if seconds % 3600 == 0:
        hours = int(seconds // 3600)
        return "hour" if hours == 1 else f"{hours} hours"
    return f"{seconds / 60:g} minutes"


_PROGRESS_FIELDS = frozenset(
    {"state", "bearings_done", "bearings", "current", "finished_at", "size_bytes", "error"}
)


def update_record_job(
    db: sqlite_utils.Database, job_id: str, *, now: datetime | None = None, **fields: Any
) -> Row:
    """Write a job's progress (and its heartbeat, ``updated_at``)."""
    unknown = set(fields) - _PROGRESS_FIELDS
    if unknown:
        raise ValueError(f"record job fields {sorted(unknown)} are not ones a job updates")
    if "state" in fields and fields["state"] not in JOB_STATES:
        raise ValueError(f"record job state {fields['state']!r} is not one of {JOB_STATES}")
    names = sorted(fields)
    assignments = ", ".join(f"{name} = ?" for name in names)
    with transaction(db):
        db.execute(
            f"UPDATE record_jobs SET {assignments}, updated_at = ? WHERE id = ?",
            [*(fields[n] for n in names), timestamp(now or utc_now()), job_id],
        )
    return present(get_record_job(db, job_id), "the job")


def get_record_job(db: sqlite_utils.Database, job_id: str) -> Row | None:
    return one(db, "SELECT * FROM record_jobs WHERE id = ?", [job_id])


def record_jobs_for_site(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    kind: str | None = None,
    selection: str | None = None,
) -> list[Row]:
    """A site's makings (of one kind, or of every kind; of one part, or of every part),
    newest first."""
    sql, values = "SELECT * FROM record_jobs WHERE site_id = ?", [site_id]
    if kind is not None:
        sql, values = sql + " AND kind = ?", [*values, kind]
    if selection is not None:
        sql, values = sql + " AND selection = ?", [*values, selection]
    return many(db, sql + " ORDER BY created_at DESC, id DESC", values)
