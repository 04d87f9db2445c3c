"""Users, server-side sessions and login attempts."""

import re
import sqlite3
from dataclasses import dataclass
from datetime import datetime, timedelta

import sqlite_utils

from sitecheck.store.base import (
    Row,
    inserted_id,
    many,
    one,
    present,
    the_row,
    timestamp,
    transaction,
    utc_now,
)
from sitecheck.store.errors import DuplicateEmail, NotFound
from sitecheck.store.events import add_event

SESSION_IDLE_S = 12 * 3600
SESSION_ABSOLUTE_S = 7 * 24 * 3600
# Writing last_seen_at on every request would turn every page view into a write.
TOUCH_INTERVAL_S = 60

_USER_COLUMNS = "id, email, name, disabled, must_change_password, may_make_sites, created_at"
_SESSION_ID = re.compile(r"[0-9a-f]{64}")


def normalise_email(email: str) -> str:
    return (email or "").strip().lower()


def _session_id(session_id: str) -> str:
    # The store keeps only the sha256 of the cookie's token; refusing anything else stops a raw
    # token from being stored by mistake.
    if not isinstance(session_id, str) or not _SESSION_ID.fullmatch(session_id):
        raise ValueError(
            "session_id must be the sha256 hex of the session token "
            "(use sitecheck.credentials.new_session_token()), not the token itself"
        )
    return session_id


def create_user(
    db: sqlite_utils.Database,
    *,
    email: str,
    name: str,
    password_hash: str,
    must_change_password: bool = False,
    may_make_sites: bool = False,
) -> Row:
    """``must_change_password`` for a password someone else chose: the account must choose
    its own at its first log-in. ``may_make_sites`` for an account that starts sites."""
    email = normalise_email(email)
    if "@" not in email:
        raise ValueError(f"email {email!r} has no '@'; give a full e-mail address")
    if not password_hash:
        raise ValueError(
            "password_hash is empty; hash the password with sitecheck.credentials first"
        )
    with transaction(db):
        try:
            cursor = db.execute(
                "INSERT INTO users (email, name, password_hash, must_change_password,"
                " may_make_sites, created_at) VALUES (?, ?, ?, ?, ?, ?)",
                [
                    email,
                    (name or "").strip(),
                    password_hash,
                    int(bool(must_change_password)),
                    int(bool(may_make_sites)),
                    timestamp(),
                ],
            )
        except sqlite3.IntegrityError as error:
            if "users.email" in str(error):
                raise DuplicateEmail(
                    f"An account for {email} already exists; sign in or reset its password"
                ) from None
            raise
        user_id = inserted_id(cursor)
        add_event(
            db,
            kind="user created",
            user_id=user_id,
            after={"email": email, "may_make_sites": bool(may_make_sites)},
        )
    return present(get_user_by_id(db, user_id), "the user")


def get_user_by_id(db: sqlite_utils.Database, user_id: int) -> Row | None:
    """The user without the password hash, which must never reach a page."""
    return one(db, f"SELECT {_USER_COLUMNS} FROM users WHERE id = ?", [user_id])


def get_user_by_email(db: sqlite_utils.Database, email: str) -> Row | None:
    return one(db, f"SELECT {_USER_COLUMNS} FROM users WHERE email = ?", [normalise_email(email)])


def login_credentials(db: sqlite_utils.Database, email: str) -> Row | None:
    """id, password_hash and disabled for signing in; the only read that returns the hash."""
    return one(
        db,
        "SELECT id, password_hash, disabled FROM users WHERE email = ?",
        [normalise_email(email)],
    )


def set_password_hash(
    db: sqlite_utils.Database, *, user_id: int, password_hash: str, by_user_id: int | None
) -> None:
    """Replace the hash and end every session of the user (a new password must lock others
    out). A password set by the user themselves is their own: nothing is left to change."""
    if not password_hash:
        raise ValueError(
            "password_hash is empty; hash the password with sitecheck.credentials first"
        )
    with transaction(db):
        cursor = db.execute(
            "UPDATE users SET password_hash = ?, must_change_password = ? WHERE id = ?",
            [password_hash, int(by_user_id != user_id), user_id],
        )
        if cursor.rowcount != 1:
            raise NotFound(f"No user with id {user_id}")
        revoke_all_sessions_for_user(db, user_id)
        add_event(db, kind="password changed", user_id=by_user_id, detail={"user": user_id})


def set_disabled(
    db: sqlite_utils.Database, *, user_id: int, disabled: bool, by_user_id: int | None
) -> int:
    """Disable or enable an account; disabling also revokes its sessions at once.

    Returns how many live sessions were ended. ``by_user_id`` None: from the command line.
    """
    with transaction(db):
        before = one(db, "SELECT disabled FROM users WHERE id = ?", [user_id])
        if before is None:
            raise NotFound(f"No user with id {user_id}")
        db.execute("UPDATE users SET disabled = ? WHERE id = ?", [int(bool(disabled)), user_id])
        ended = revoke_all_sessions_for_user(db, user_id) if disabled else 0
        add_event(
            db,
            kind="user disabled" if disabled else "user enabled",
            user_id=by_user_id,
            before={"user": user_id, "disabled": before["disabled"]},
            after={"user": user_id, "disabled": bool(disabled)},
        )
    return ended


def list_users(db: sqlite_utils.Database) -> list[Row]:
    """Every account for the command line: its state, how many sites it is on and when it
    last logged in (the newest session's start), by e-mail."""
    return many(
        db,
        f"""
        SELECT {", ".join("u." + c for c in _USER_COLUMNS.split(", "))},
          (SELECT count(*) FROM memberships m WHERE m.user_id = u.id) AS sites,
          (SELECT max(s.created_at) FROM sessions s WHERE s.user_id = u.id) AS last_login_at
        FROM users u ORDER BY u.email
        """,
    )


def set_may_make_sites(
    db: sqlite_utils.Database, *, user_id: int, allowed: bool, by_user_id: int | None
) -> bool:
    """Give or take away the permission to make sites; True if it changed."""
    with transaction(db):
        before = one(db, "SELECT may_make_sites FROM users WHERE id = ?", [user_id])
        if before is None:
            raise NotFound(f"No user with id {user_id}")
        if before["may_make_sites"] == bool(allowed):
            return False
        db.execute(
            "UPDATE users SET may_make_sites = ? WHERE id = ?", [int(bool(allowed)), user_id]
        )
        add_event(
            db,
            kind="may make sites given" if allowed else "may make sites taken away",
            user_id=by_user_id,
            before={"user": user_id, "may_make_sites": before["may_make_sites"]},
            after={"user": user_id, "may_make_sites": bool(allowed)},
        )
    return True


def people_sharing_sites(db: sqlite_utils.Database, user_id: int) -> list[Row]:
    """Everyone on a site that ``user_id`` is on (``user_id`` too), with whether they may
    make sites and the shared sites as "site name (role)" lines. No e-mail addresses."""
    rows = many(
        db,
        """
        SELECT u.id, u.name, u.disabled, u.may_make_sites, s.name AS site_name, m.role
        FROM memberships mine
        JOIN memberships m ON m.site_id = mine.site_id
        JOIN users u ON u.id = m.user_id
        JOIN sites s ON s.id = m.site_id
        WHERE mine.user_id = ?
        ORDER BY u.name COLLATE NOCASE, u.id, s.name COLLATE NOCASE
        """,
        [user_id],
    )
    people: dict[int, Row] = {}
    for row in rows:
        person = people.setdefault(
            row["id"],
            {
                "id": row["id"],
                "name": row["name"],
                "disabled": row["disabled"],
                "may_make_sites": row["may_make_sites"],
                "sites": [],
            },
        )
        person["sites"].append(f"{row['site_name']} ({row['role']})")
    return list(people.values())


def create_session(
    db: sqlite_utils.Database, *, session_id: str, user_id: int, now: datetime | None = None
) -> None:
    at = timestamp(now or utc_now())
    db.execute(
        "INSERT INTO sessions (id, user_id, created_at, last_seen_at) VALUES (?, ?, ?, ?)",
        [_session_id(session_id), user_id, at, at],
    )


def get_session_user(
    db: sqlite_utils.Database,
    session_id: str,
    *,
    idle_s: int = SESSION_IDLE_S,
    absolute_s: int = SESSION_ABSOLUTE_S,
    now: datetime | None = None,
) -> Row | None:
    """The signed-in user, or None if the session is unknown, revoked, expired or disabled;
    ``session_seen_at`` is when the session was last marked as used (see touch_session)."""
    try:
        session_id = _session_id(session_id)
    except ValueError:
        return None
    now = now or utc_now()
    return one(
        db,
        """
        SELECT u.id, u.email, u.name, u.disabled, u.must_change_password, u.may_make_sites,
               u.created_at, s.last_seen_at AS session_seen_at
        FROM sessions s JOIN users u ON u.id = s.user_id
        WHERE s.id = ? AND s.revoked_at IS NULL AND u.disabled = 0
          AND s.last_seen_at > ? AND s.created_at > ?
        """,
        [
            session_id,
            timestamp(now - timedelta(seconds=idle_s)),
            timestamp(now - timedelta(seconds=absolute_s)),
        ],
    )


def touch_session(
    db: sqlite_utils.Database,
    session_id: str,
    *,
    now: datetime | None = None,
    min_interval_s: int = TOUCH_INTERVAL_S,
    seen_at: str | None = None,
) -> bool:
    """Move last_seen_at forward (at most once a minute); True if it was written."""
    now = now or utc_now()
    if seen_at is not None and seen_at > timestamp(now - timedelta(seconds=min_interval_s)):
        return False  # marked within the minute: no write (most requests)
    cursor = db.execute(
        """
        UPDATE sessions SET last_seen_at = ?
        WHERE id = ? AND revoked_at IS NULL AND last_seen_at <= ?
        """,
        [
            timestamp(now),
            _session_id(session_id),
            timestamp(now - timedelta(seconds=min_interval_s)),
        ],
    )
    return cursor.rowcount == 1


def revoke_session(
    db: sqlite_utils.Database, session_id: str, *, now: datetime | None = None
) -> bool:
    cursor = db.execute(
        "UPDATE sessions SET revoked_at = ? WHERE id = ? AND revoked_at IS NULL",
        [timestamp(now or utc_now()), _session_id(session_id)],
    )
    return cursor.rowcount == 1


def revoke_all_sessions_for_user(
    db: sqlite_utils.Database, user_id: int, *, now: datetime | None = None
) -> int:
    cursor = db.execute(
        "UPDATE sessions SET revoked_at = ? WHERE user_id = ? AND revoked_at IS NULL",
        [timestamp(now or utc_now()), user_id],
    )
    return cursor.rowcount


def record_login_attempt(
    db: sqlite_utils.Database,
    *,
    email: str,
    remote_addr: str,
    ok: bool,
    now: datetime | None = None,
) -> None:
    db.execute(
        "INSERT INTO login_attempts (email, remote_addr, at, ok) VALUES (?, ?, ?, ?)",
        [normalise_email(email), remote_addr or "", timestamp(now or utc_now()), int(bool(ok))],
    )


# A dataclass, not a NamedTuple: a tuple's own count() would stand in the way of the field.
@dataclass(frozen=True)
class FailedLogIns:
    """Failed log-ins in the window, and when the latest was (UTC text, None if none)."""

    count: int
    last_at: str | None


def failed_log_ins(
    db: sqlite_utils.Database,
    *,
    email: str,
    remote_addr: str,
    window_s: int,
    now: datetime | None = None,
) -> tuple[FailedLogIns, FailedLogIns]:
    """Failures of this account from this address since its last success there, and of any
    account from this address, both within the window.

    Nothing is counted per account across addresses: then a stranger anywhere could keep a
    person out of their own account by failing on purpose.
    """
    since = timestamp((now or utc_now()) - timedelta(seconds=window_s))
    row = the_row(
        db,
        """
        WITH pair AS (
          SELECT at, ok FROM login_attempts
          WHERE email = :email AND remote_addr = :addr AND at > :since
        ),
        last_ok AS (SELECT coalesce(max(at), '') AS at FROM pair WHERE ok = 1)
        SELECT
          (SELECT count(*) FROM pair WHERE ok = 0 AND at > (SELECT at FROM last_ok))
            AS pair_count,
          (SELECT max(at) FROM pair WHERE ok = 0 AND at > (SELECT at FROM last_ok))
            AS pair_last,
          (SELECT count(*) FROM login_attempts WHERE remote_addr = :addr AND at > :since
             AND ok = 0) AS addr_count,
          (SELECT max(at) FROM login_attempts WHERE remote_addr = :addr AND at > :since
             AND ok = 0) AS addr_last
        """,
        {"email": normalise_email(email), "addr": remote_addr or "", "since": since},
    )
    return (
        FailedLogIns(row["pair_count"], row["pair_last"]),
        FailedLogIns(row["addr_count"], row["addr_last"]),
    )


def prune_login_attempts(
    db: sqlite_utils.Database, *, older_than_s: int, now: datetime | None = None
) -> int:
    """Delete attempts older than the window; they only ever served throttling."""
    cursor = db.execute(
        "DELETE FROM login_attempts WHERE at < ?",
        [timestamp((now or utc_now()) - timedelta(seconds=older_than_s))],
    )
    return cursor.rowcount


def sessions_for_user(db: sqlite_utils.Database, user_id: int) -> list[Row]:
    """Live and ended sessions of a user, newest first (for a 'where am I signed in' page)."""
    return many(
        db,
        """
        SELECT id, created_at, last_seen_at, revoked_at FROM sessions
        WHERE user_id = ? ORDER BY created_at DESC
        """,
        [user_id],
    )
