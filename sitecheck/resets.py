"""A new password for someone who has lost theirs: a single-use link, never a password.

Started from the command line (``sitecheck users reset-password EMAIL``) or by an account
that may make sites, for a person on its sites ("People on your sites"). The link goes by
e-mail to the account's own address when mail is configured, and whoever started the reset
never sees it; without mail it is shown once to whoever started it, to hand over in person
(as an invitation's link is). Following it, the person chooses a new password; every
session of the account then ends. A newer link replaces an older one; a link works once,
for a day.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import timedelta

from sitecheck import credentials, sessions, store
from sitecheck.invitations import utc_words
from sitecheck.mail import MailSettings

RESET_VALID_S = 24 * 3600
RESET_PATH = "/new-password/"  # + the link's token; the view is sitecheck.web.people


class ResetRefused(ValueError):
    """A reset that cannot be started; the message says why and what to do."""


@dataclass(frozen=True)
class ResetStarted:
    email: str
    expires_at: str
    mail_id: int | None  # the queued message, when mail is configured
    handover_link: str | None  # the link to hand over, when mail is not configured


def start_reset(
    db, *, user: dict, by_user_id: int | None, mail: MailSettings | None, base_url: str
) -> ResetStarted:
    """Make the link (ending any older one) and queue its e-mail, in one transaction.

    ``by_user_id`` None: from the command line. A disabled account is refused: enable it
    first, deliberately.
    """
    if user["disabled"]:
        raise ResetRefused(
            f"{user['email']} is disabled; enable it first (sitecheck users enable), then "
            "reset its password"
        )
    token = credentials.new_link_token()
    root = (mail.base_url if mail else base_url).rstrip("/")
    link = root + RESET_PATH + token.token
    now = store.utc_now()
    expires_at = store.timestamp(now + timedelta(seconds=RESET_VALID_S))
    with store.transaction(db):
        store.expire_links(db, email=user["email"], purpose=store.PASSWORD_RESET, now=now)
        store.create_link(
            db,
            token_hash=token.token_hash,
            purpose=store.PASSWORD_RESET,
            email=user["email"],
            valid_s=RESET_VALID_S,
            now=now,
        )
        mail_id = None
        if mail is not None:
            subject, body = reset_message(user, link=link, expires_at=expires_at)
            mail_id = store.queue_mail(
                db, kind="password reset", to_addr=user["email"], subject=subject, body=body
            )
        store.add_event(
            db,
            kind="password reset started",
            user_id=by_user_id,
            detail={"user": user["id"], "by": "command line" if by_user_id is None else "page"},
        )
    return ResetStarted(
        email=user["email"],
        expires_at=expires_at,
        mail_id=mail_id,
        handover_link=None if mail is not None else link,
    )


def finish_reset(
    db, *, token_hash: str, user_id: int, password: str
) -> credentials.SessionToken | None:
    """Follow a reset link with the new password: it replaces the old, every session of the
    account ends (a stolen one too), and the session returned begins. None: the link was
    used by another request a moment ago, and nothing changed."""
    password_hash = credentials.hash_password(password)
    with store.transaction(db):
        if store.use_link(db, token_hash=token_hash, purpose=store.PASSWORD_RESET) is None:
            return None
        store.set_password_hash(
            db, user_id=user_id, password_hash=password_hash, by_user_id=user_id
        )
        return sessions.begin_session(db, user_id=user_id, how={"by": "new-password link"})


def reset_message(user: dict, *, link: str, expires_at: str) -> tuple[str, str]:
    subject = "A new password for your sitecheck account"
    body = "\n".join(
        [
            f"A new password was asked for the sitecheck account {user['email']}.",
            "",
            f"Choose it with this link. It works once, until {utc_words(expires_at)}:",
            "",
            link,
            "",
            "Your password now keeps working until you choose a new one. If you did not "
            "expect this, ignore this message, and tell whoever runs sitecheck for your firm.",
        ]
    )
    return subject, body + "\n"
