"""Invitations (an offer to join a site in a role, waiting for an answer) and single-use
links (which prove an e-mail address: used once, before they expire)."""

from datetime import datetime, timedelta

import sqlite_utils

from sitecheck.store.base import (
    Row,
    inserted_id,
    many,
    new_id,
    one,
    present,
    timestamp,
    transaction,
    utc_now,
)
from sitecheck.store.errors import NotFound
from sitecheck.store.events import add_event
from sitecheck.store.migrations import ROLES
from sitecheck.store.sites import add_membership, role_of

# What a single-use link may be for. A new purpose is a new word here; the table takes it.
INVITATION = "invitation"
PASSWORD_RESET = "password reset"
LINK_PURPOSES = (INVITATION, PASSWORD_RESET)

_NOT_OPEN = (
    "This invitation is no longer open: it was answered, withdrawn or has expired. Ask the "
    "site's engineer to invite you again."
)


def _role(role: str) -> str:
    if role not in ROLES:
        raise ValueError(f"role {role!r} is not one of {', '.join(ROLES)}")
    return role


def _email(email: str) -> str:
    email = (email or "").strip().lower()
    if "@" not in email:
        raise ValueError(f"email {email!r} has no '@'; give a full e-mail address")
    return email


def create_invitation(
    db: sqlite_utils.Database,
    *,
    site_id: str,
    email: str,
    role: str,
    invited_by: int,
    valid_s: int,
    now: datetime | None = None,
) -> Row:
    """A pending offer; one that was pending for the same address and site is withdrawn
    (the newer role and expiry stand). The event names no address: the site's history is
    read by every member."""
    now = now or utc_now()
    email = _email(email)
    invitation_id = new_id()
    with transaction(db):
        for old in many(
            db,
            "SELECT id, role FROM invitations WHERE site_id = ? AND email = ? AND state = 'pending'",
            [site_id, email],
        ):
            _close(db, old["id"], "withdrawn", invited_by, now)
            add_event(
                db,
                kind="invitation withdrawn",
                user_id=invited_by,
                site_id=site_id,
                detail={"invitation": old["id"], "role": old["role"], "reason": "invited again"},
            )
        db.execute(
            """
            INSERT INTO invitations (id, site_id, email, role, invited_by, created_at, expires_at)
            VALUES (?, ?, ?, ?, ?, ?, ?)
            """,
            [
                invitation_id,
                site_id,
                email,
                _role(role),
                invited_by,
                timestamp(now),
                timestamp(now + timedelta(seconds=valid_s)),
            ],
        )
        add_event(
            db,
            kind="invitation made",
            user_id=invited_by,
            site_id=site_id,
            detail={"invitation": invitation_id, "role": role},
        )
    return present(get_invitation(db, invitation_id), "the invitation")


def _close(
    db: sqlite_utils.Database, invitation_id: str, state: str, by: int | None, now: datetime
) -> None:
    db.execute(
        "UPDATE invitations SET state = ?, answered_at = ?, answered_by = ? WHERE id = ?",
        [state, timestamp(now), by, invitation_id],
    )
    # Its links go with it: a closed offer must not still make an account.
    db.execute(
        "UPDATE single_use_links SET expires_at = ? WHERE invitation_id = ? AND used_at IS NULL",
        [timestamp(now), invitation_id],
    )


def get_invitation(db: sqlite_utils.Database, invitation_id: str) -> Row | None:
    return one(
        db,
        """
        SELECT i.*, s.name AS site_name, u.name AS invited_by_name
        FROM invitations i JOIN sites s ON s.id = i.site_id JOIN users u ON u.id = i.invited_by
        WHERE i.id = ?
        """,
        [invitation_id],
    )


def attach_mail(db: sqlite_utils.Database, *, invitation_id: str, mail_id: int) -> None:
    db.execute("UPDATE invitations SET mail_id = ? WHERE id = ?", [mail_id, invitation_id])


def open_invitations_for_site(
    db: sqlite_utils.Database, *, site_id: str, now: datetime | None = None
) -> list[Row]:
    """Pending, unexpired offers of a site, with who made them and how their e-mail went."""
    return many(
        db,
        """
        SELECT i.id, i.email, i.role, i.created_at, i.expires_at, u.name AS invited_by_name,
               i.mail_id, m.sent_at AS mail_sent_at, m.attempts AS mail_attempts,
               m.last_error AS mail_error, m.gave_up_at AS mail_gave_up_at
        FROM invitations i
        JOIN users u ON u.id = i.invited_by
        LEFT JOIN outgoing_mail m ON m.id = i.mail_id
        WHERE i.site_id = ? AND i.state = 'pending' AND i.expires_at > ?
        ORDER BY i.created_at DESC
        """,
        [site_id, timestamp(now or utc_now())],
    )


def open_invitations_for_email(
    db: sqlite_utils.Database, *, email: str, now: datetime | None = None
) -> list[Row]:
    """Pending, unexpired offers to an address: the site's name, the role, who invited."""
    return many(
        db,
        """
        SELECT i.id, i.site_id, s.name AS site_name, i.role, u.name AS invited_by_name,
               i.created_at, i.expires_at
        FROM invitations i JOIN sites s ON s.id = i.site_id JOIN users u ON u.id = i.invited_by
        WHERE i.email = ? AND i.state = 'pending' AND i.expires_at > ?
        ORDER BY i.created_at
        """,
        [_email(email), timestamp(now or utc_now())],
    )


def answer_invitation(
    db: sqlite_utils.Database,
    *,
    invitation_id: str,
    user_id: int,
    email: str,
    accept: bool,
    now: datetime | None = None,
) -> Row:
    """Accept (the person joins the site in the offered role) or decline. Only the account
    with the invited address may answer, only while the offer is open; otherwise NotFound,
    the same for every reason, so the answer tells nothing about other people's offers."""
    now = now or utc_now()
    with transaction(db):
        invitation = one(
            db,
            """
            SELECT * FROM invitations
            WHERE id = ? AND email = ? AND state = 'pending' AND expires_at > ?
            """,
            [invitation_id, _email(email), timestamp(now)],
        )
        if invitation is None:
            raise NotFound(_NOT_OPEN)
        site_id = invitation["site_id"]
        if accept and role_of(db, user_id=user_id, site_id=site_id) is None:
            add_membership(
                db,
                user_id=user_id,
                site_id=site_id,
                role=invitation["role"],
                invited_by=invitation["invited_by"],
            )
        _close(db, invitation_id, "accepted" if accept else "declined", user_id, now)
        add_event(
            db,
            kind="invitation accepted" if accept else "invitation declined",
            user_id=user_id,
            site_id=site_id,
            detail={"invitation": invitation_id, "role": invitation["role"]},
        )
    return present(get_invitation(db, invitation_id), "the invitation")


def withdraw_invitation(
    db: sqlite_utils.Database,
    *,
    invitation_id: str,
    site_id: str,
    by_user_id: int,
    now: datetime | None = None,
) -> bool:
    """Withdraw a site's pending offer; False if there is none open by that id on the site."""
    now = now or utc_now()
    with transaction(db):
        invitation = one(
            db,
            "SELECT role FROM invitations WHERE id = ? AND site_id = ? AND state = 'pending'",
            [invitation_id, site_id],
        )
        if invitation is None:
            return False
        _close(db, invitation_id, "withdrawn", by_user_id, now)
        add_event(
            db,
            kind="invitation withdrawn",
            user_id=by_user_id,
            site_id=site_id,
            detail={"invitation": invitation_id, "role": invitation["role"]},
        )
    return True


# --- single-use links --------------------------------------------------------------------------


def _purpose(purpose: str) -> str:
    if purpose not in LINK_PURPOSES:
        raise ValueError(f"purpose {purpose!r} is not one of {', '.join(LINK_PURPOSES)}")
    return purpose


def _token_hash(token_hash: str) -> str:
    # Only the sha256 of a link's token is ever stored; refusing anything else stops a raw
    # token from being stored by mistake.
    if (
        not isinstance(token_hash, str)
        or len(token_hash) != 64
        or token_hash.strip("0123456789abcdef")
    ):
        raise ValueError(
            "token_hash must be the sha256 hex of the link's token "
            "(sitecheck.credentials.new_link_token()), not the token itself"
        )
    return token_hash


def create_link(
    db: sqlite_utils.Database,
    *,
    token_hash: str,
    purpose: str,
    email: str,
    valid_s: int,
    invitation_id: str | None = None,
    now: datetime | None = None,
) -> int:
    now = now or utc_now()
    cursor = db.execute(
        """
        INSERT INTO single_use_links (token_hash, purpose, email, invitation_id, created_at,
                                      expires_at)
        VALUES (?, ?, ?, ?, ?, ?)
        """,
        [
            _token_hash(token_hash),
            _purpose(purpose),
            _email(email),
            invitation_id,
            timestamp(now),
            timestamp(now + timedelta(seconds=valid_s)),
        ],
    )
    return inserted_id(cursor)


def open_link(
    db: sqlite_utils.Database, *, token_hash: str, purpose: str, now: datetime | None = None
) -> Row | None:
    """The link if it is unused and unexpired, else None (the same for every reason)."""
    try:
        token_hash = _token_hash(token_hash)
    except ValueError:
        return None
    return one(
        db,
        """
        SELECT id, purpose, email, invitation_id, created_at, expires_at FROM single_use_links
        WHERE token_hash = ? AND purpose = ? AND used_at IS NULL AND expires_at > ?
        """,
        [token_hash, _purpose(purpose), timestamp(now or utc_now())],
    )


def use_link(
    db: sqlite_utils.Database, *, token_hash: str, purpose: str, now: datetime | None = None
) -> Row | None:
    """Mark the link used and return it, or None if it is unknown, used or expired. One
    UPDATE: two requests with the same link cannot both use it."""
    try:
        token_hash = _token_hash(token_hash)
    except ValueError:
        return None
    at = timestamp(now or utc_now())
    # In a transaction of its own (or the caller's): a statement that returns rows is not
    # committed by sqlite-utils on its own.
    with transaction(db):
        rows = db.execute(
            """
            UPDATE single_use_links SET used_at = ?
            WHERE token_hash = ? AND purpose = ? AND used_at IS NULL AND expires_at > ?
            RETURNING id, purpose, email, invitation_id, created_at, expires_at
            """,
            [at, token_hash, _purpose(purpose), at],
        ).fetchall()
    if not rows:
        return None
    keys = ("id", "purpose", "email", "invitation_id", "created_at", "expires_at")
    return dict(zip(keys, rows[0], strict=True))


def expire_links(
    db: sqlite_utils.Database, *, email: str, purpose: str, now: datetime | None = None
) -> int:
    """End every unused link of ``purpose`` for ``email`` (a newer one replaces them);
    returns how many were still open."""
    at = timestamp(now or utc_now())
    cursor = db.execute(
        """
        UPDATE single_use_links SET expires_at = ?
        WHERE email = ? AND purpose = ? AND used_at IS NULL AND expires_at > ?
        """,
        [at, _email(email), _purpose(purpose), at],
    )
    return cursor.rowcount
