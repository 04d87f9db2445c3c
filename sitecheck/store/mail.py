"""The outgoing mail queue: messages wait here until the mail sender delivers them.

Queuing is one INSERT inside the caller's transaction, so a message exists exactly when the
action that caused it was kept, and the action never waits on a mail server.
"""

from datetime import datetime, timedelta

import sqlite_utils

from sitecheck.store.base import Row, inserted_id, many, one, timestamp, transaction, utc_now

# The columns a page may show about a message (never its body, which may hold a link).
_STATUS_COLUMNS = (
    "id, kind, to_addr, created_at, attempts, next_try_at, last_error, sent_at, gave_up_at"
)


def queue_mail(
    db: sqlite_utils.Database,
    *,
    kind: str,
    to_addr: str,
    subject: str,
    body: str,
    html: str | None = None,
    now: datetime | None = None,
) -> int:
    """Queue one message, to be tried at once; returns its id. ``body`` is the plain text;
    ``html``, where given, a simple HTML version of the same words."""
    if not kind:
        raise ValueError("kind is empty; say what the message is for, e.g. 'invitation'")
    if "@" not in (to_addr or ""):
        raise ValueError(f"to_addr {to_addr!r} is not an e-mail address")
    if "\n" in subject or "\r" in subject:
        raise ValueError("the subject has a line break; a subject is one line")
    at = timestamp(now or utc_now())
    cursor = db.execute(
        """
        INSERT INTO outgoing_mail (kind, to_addr, subject, body, html, created_at, next_try_at)
        VALUES (?, ?, ?, ?, ?, ?, ?)
        """,
        [kind, to_addr, subject, body, html, at, at],
    )
    return inserted_id(cursor)


def claim_due_mail(
    db: sqlite_utils.Database,
    *,
    lease_s: float,
    limit: int = 20,
    now: datetime | None = None,
) -> list[Row]:
    """Messages due now, each claimed for ``lease_s`` seconds so that another process's
    sender leaves them alone meanwhile (a sender that dies lets its claim run out)."""
    now = now or utc_now()
    at = timestamp(now)
    with transaction(db):
        due = many(
            db,
            """
            SELECT id, kind, to_addr, subject, body, html, attempts FROM outgoing_mail
            WHERE sent_at IS NULL AND gave_up_at IS NULL AND next_try_at <= ?
              AND (claimed_until IS NULL OR claimed_until <= ?)
            ORDER BY next_try_at, id LIMIT ?
            """,
            [at, at, limit],
        )
        until = timestamp(now + timedelta(seconds=lease_s))
        for message in due:
            db.execute(
                "UPDATE outgoing_mail SET claimed_until = ? WHERE id = ?", [until, message["id"]]
            )
    return due


def mail_sent(db: sqlite_utils.Database, mail_id: int, *, now: datetime | None = None) -> None:
    """The server took the message: keep that it went, drop its body (it may hold a link)."""
    db.execute(
        """
        UPDATE outgoing_mail
        SET sent_at = ?, attempts = attempts + 1, body = '', html = NULL, claimed_until = NULL,
            next_try_at = NULL, last_error = NULL
        WHERE id = ?
        """,
        [timestamp(now or utc_now()), mail_id],
    )


def mail_failed(
    db: sqlite_utils.Database,
    mail_id: int,
    *,
    error: str,
    retry_at: datetime | None,
    now: datetime | None = None,
) -> None:
    """A try failed: try again at ``retry_at``, or give up (None), dropping the body."""
    error = (error or "unknown error")[:500]
    if retry_at is None:
        db.execute(
            """
            UPDATE outgoing_mail
            SET gave_up_at = ?, attempts = attempts + 1, body = '', html = NULL, claimed_until = NULL,
                next_try_at = NULL, last_error = ?
            WHERE id = ?
            """,
            [timestamp(now or utc_now()), error, mail_id],
        )
        return
    db.execute(
        """
        UPDATE outgoing_mail
        SET attempts = attempts + 1, next_try_at = ?, claimed_until = NULL, last_error = ?
        WHERE id = ?
        """,
        [timestamp(retry_at), error, mail_id],
    )


def mail_status(db: sqlite_utils.Database, mail_id: int) -> Row | None:
    """Where a message is: sent, waiting (with its tries and last error) or given up."""
    return one(db, f"SELECT {_STATUS_COLUMNS} FROM outgoing_mail WHERE id = ?", [mail_id])


def next_mail_due_at(db: sqlite_utils.Database) -> str | None:
    """When the next waiting message is due (None: nothing waits)."""
    # A message another process is trying is due when that claim runs out, not before.
    row = one(
        db,
        "SELECT min(max(next_try_at, coalesce(claimed_until, ''))) AS at FROM outgoing_mail "
        "WHERE sent_at IS NULL AND gave_up_at IS NULL",
    )
    return row["at"] if row else None
