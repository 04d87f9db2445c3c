"""Who is logged in: a log-in (slowed after failures), a log-out, a new password, an account
disabled or enabled; each begins or ends server-side sessions and writes its event.

No Flask here: the log-in views keep the cookie (the session token it carries), the forms
and the words; this module decides what is kept.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime

from sitecheck import credentials, store


def user_for_token(db: store.Database, token: str) -> store.Row | None:
    """The user behind a session cookie's token, or None: a revoked, expired or disabled
    session gives None straight away (the cookie alone proves nothing). The session is
    marked as used at most once a minute, not on every request."""
    session_id = credentials.session_id_for(token)
    user = store.get_session_user(db, session_id)
    if user is None:
        return None
    store.touch_session(db, session_id, seen_at=user.pop("session_seen_at"))
    return user


@dataclass(frozen=True)
class LogIn:
    """What came of a log-in: a session's ``token`` (None: refused), or ``wait`` seconds
    before this account may be tried again from this address (then nothing was checked)."""

    token: credentials.SessionToken | None
    wait: int = 0


def log_in(
    db: store.Database,
    *,
    email: str,
    password: str,
    remote_addr: str,
    window_s: int,
    rules: tuple[credentials.ThrottleRule, credentials.ThrottleRule],
    now: datetime | None = None,
) -> LogIn:
    """Check an e-mail and password and begin a session. ``rules`` slow failures of this
    account at this address and of any account at this address, within ``window_s``; a
    disabled account is refused as a wrong password is. Every try writes its event."""
    detail = {"email": email, "remote_addr": remote_addr}
    wait = _log_in_wait(db, email, remote_addr, window_s, rules, now or store.utc_now())
    if wait:
        store.add_event(db, kind="log-in throttled", detail=detail)
        return LogIn(token=None, wait=wait)
    cred = store.login_credentials(db, email)
    ok = credentials.verify_login(cred["password_hash"] if cred else None, password)
    if ok and cred and cred["disabled"]:
        ok = False
    store.record_login_attempt(db, email=email, remote_addr=remote_addr, ok=ok)
    if not ok or cred is None:
        store.add_event(db, kind="log-in failed", detail=detail)
        return LogIn(token=None)
    return LogIn(token=begin_session(db, user_id=cred["id"], how={"remote_addr": remote_addr}))


def _log_in_wait(
    db: store.Database,
    email: str,
    remote_addr: str,
    window_s: int,
    rules: tuple[credentials.ThrottleRule, credentials.ThrottleRule],
    now: datetime,
) -> int:
    """Seconds before this account may be tried again from this address (0: now)."""
    store.prune_login_attempts(db, older_than_s=window_s, now=now)
    waits = [0]
    for failed, rule in zip(
        store.failed_log_ins(db, email=email, remote_addr=remote_addr, window_s=window_s, now=now),
        rules,
        strict=True,
    ):
        if failed.last_at is not None:
            since = (now - datetime.fromisoformat(failed.last_at)).total_seconds()
            waits.append(credentials.throttle_wait(failed.count, since, rule))
    return max(waits)


def begin_session(
    db: store.Database, *, user_id: int, how: dict[str, str]
) -> credentials.SessionToken:
    """A new session for someone who has just proven who they are, with its log-in event
    (``how``: from where, or by which link)."""
    token = credentials.new_session_token()
    store.create_session(db, session_id=token.session_id, user_id=user_id)
    store.add_event(db, kind="log-in", user_id=user_id, detail=how)
    return token


def is_password(db: store.Database, *, email: str, password: str) -> bool:
    """Whether this is the account's password now (timed alike for any answer)."""
    cred = store.login_credentials(db, email)
    return credentials.verify_login(cred["password_hash"] if cred else None, password)


def new_password(db: store.Database, *, user_id: int, password: str) -> credentials.SessionToken:
    """The person's own new password: every session of the account ends (a stolen one
    too), and the one returned starts afresh."""
    with store.transaction(db):
        store.set_password_hash(
            db,
            user_id=user_id,
            password_hash=credentials.hash_password(password),
            by_user_id=user_id,
        )
        token = credentials.new_session_token()
        store.create_session(db, session_id=token.session_id, user_id=user_id)
    return token


def log_out(db: store.Database, *, token: str, user_id: int | None) -> None:
    """End the session the cookie carries (``user_id``: whose it was, if it still worked)."""
    store.revoke_session(db, credentials.session_id_for(token))
    if user_id is not None:
        store.add_event(db, kind="log-out", user_id=user_id)


def set_disabled(db: store.Database, *, user_id: int, disabled: bool, by_user_id: int) -> int:
    """Disable an account (its sessions end at once; returns how many) or enable it."""
    return store.set_disabled(db, user_id=user_id, disabled=disabled, by_user_id=by_user_id)
