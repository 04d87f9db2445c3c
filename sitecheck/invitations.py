"""Inviting someone to a site: the pending offer, the single-use link that proves a new
account's address, and the e-mail that carries it, made together in one transaction.

What the inviter learns is the same whether or not the address has an account: with mail,
that a message is on its way; without mail, a link to hand over. Only the person holding
the address (or the link) learns more.
"""

from __future__ import annotations

from dataclasses import dataclass

from sitecheck import credentials, store
from sitecheck.mail import MailSettings

INVITATION_VALID_S = 7 * 24 * 3600
JOIN_PATH = "/join/"  # + the link's token; the view is sitecheck.web.login.join


@dataclass(frozen=True)
class Invited:
    invitation: dict
    mail_id: int | None  # the queued message, when mail is configured
    handover_link: str | None  # the link the inviter hands over, when mail is not configured


def invite(
    db,
    *,
    site: dict,
    email: str,
    role: str,
    inviter: dict,
    mail: MailSettings | None,
    base_url: str,
) -> Invited:
    """Make the offer (replacing one still pending for the same address and site)."""
    email = store.normalise_email(email)
    with store.transaction(db):
        invitation = store.create_invitation(
            db,
            site_id=site["id"],
            email=email,
            role=role,
            invited_by=inviter["id"],
            valid_s=INVITATION_VALID_S,
        )
        has_account = store.get_user_by_email(db, email) is not None
        link = None
        # Without mail every invitation gets a link, so the inviter's screen is the same
        # whether or not the address has an account. With mail, only a new address needs
        # one: an existing account answers after logging in.
        if mail is None or not has_account:
            token = credentials.new_link_token()
            store.create_link(
                db,
                token_hash=token.token_hash,
                purpose=store.INVITATION,
                email=email,
                invitation_id=invitation["id"],
                valid_s=INVITATION_VALID_S,
            )
            link = (mail.base_url if mail else base_url.rstrip("/")) + JOIN_PATH + token.token
        mail_id = None
        if mail is not None:
            subject, body = invitation_message(invitation, link=link, login_url=mail.link("/login"))
            mail_id = store.queue_mail(
                db, kind="invitation", to_addr=email, subject=subject, body=body
            )
            store.attach_mail(db, invitation_id=invitation["id"], mail_id=mail_id)
    return Invited(
        invitation=invitation, mail_id=mail_id, handover_link=None if mail is not None else link
    )


def make_account(db, *, token_hash: str, name: str, password: str) -> dict:
    """A new account for the address an invitation's link went to (following the link
    proves the address). ``store.NotFound``: another request used the link a moment ago;
    ``store.DuplicateEmail``: the address has an account now."""
    password_hash = credentials.hash_password(password)
    with store.transaction(db):
        used = store.use_link(db, token_hash=token_hash, purpose=store.INVITATION)
        if used is None:
            raise store.NotFound("link used")
        return store.create_user(
            db, email=used["email"], name=name.strip(), password_hash=password_hash
        )


def _one_line(text: str) -> str:
    return " ".join((text or "").split())


def invitation_message(invitation: dict, *, link: str | None, login_url: str) -> tuple[str, str]:
    """Subject and body of the invitation e-mail: with ``link`` for an address that has no
    account yet, else an invitation to log in and answer."""
    who = _one_line(invitation["invited_by_name"]) or "An engineer"
    site = _one_line(invitation["site_name"])
    until = utc_words(invitation["expires_at"])
    subject = f"{who} invites you to the site {site} on sitecheck"
    lines = [
        f"{who} invites you to the site “{site}” on sitecheck, as {invitation['role']}.",
        "",
        "sitecheck re-checks beam bearings on masonry as built, before they are closed up.",
        "",
    ]
    if link:
        lines += [
            f"To accept, make your account with this link. It works once, until {until}:",
            "",
            link,
        ]
    else:
        lines += [
            f"Log in with this address to accept or decline it; it waits until {until}:",
            "",
            login_url,
        ]
    lines += [
        "",
        "If you did not expect this, ignore this message: nothing happens unless you act on it.",
    ]
    return subject, "\n".join(lines) + "\n"


def utc_words(ts: str) -> str:
    """A stored UTC time as people read it, saying UTC so nobody guesses the zone."""
    return f"{ts[:10]} {ts[11:16]} UTC"


def withdraw(db, *, invitation_id: str, site_id: str, by_user_id: int) -> bool:
    """Withdraw an open invitation of the site (its link stops working); False when there
    is no such open invitation."""
    return store.withdraw_invitation(
        db, invitation_id=invitation_id, site_id=site_id, by_user_id=by_user_id
    )


def answer(db, *, invitation_id: str, user: dict, accept: bool) -> dict:
    """The invited person's answer; store.NotFound when the invitation is not open to them."""
    return store.answer_invitation(
        db, invitation_id=invitation_id, user_id=user["id"], email=user["email"], accept=accept
    )
