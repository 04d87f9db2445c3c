"""Outgoing e-mail: settings from the environment, and a sender that delivers the queue.

An action that causes a message only queues it (``sitecheck.store.queue_mail``, in the
action's own transaction) and wakes the sender; the sender, a background thread, delivers
it over SMTP and retries with a growing pause when the server is down. So a mail server that
is slow or away never fails or slows what someone did in the app.

Settings (from the environment or the data folder's sitecheck.toml, see sitecheck.config; no
SITECHECK_SMTP_HOST means no mail at all):

- SITECHECK_SMTP_HOST, SITECHECK_SMTP_PORT (587; 465 means TLS from the first byte)
- SITECHECK_SMTP_USER, SITECHECK_SMTP_PASSWORD (both or neither)
- SITECHECK_MAIL_FROM: the sender's address, e.g. ``sitecheck@firm.example``
- SITECHECK_BASE_URL: the address people open sitecheck at, e.g. ``https://sitecheck.firm.example``;
  links in messages are built on it, never on the Host a request happened to carry
- SITECHECK_SMTP_CA_FILE: a CA certificate file, for a server with a private certificate

STARTTLS is used whenever the server offers it, and the certificate is verified. A password
is never sent to a server that offers no encryption.
"""

from __future__ import annotations

import contextlib
import logging
import os
import smtplib
import socket
import ssl
import threading
from collections.abc import Mapping
from dataclasses import dataclass
from datetime import datetime, timedelta
from email.message import EmailMessage
from email.utils import make_msgid
from pathlib import Path
from urllib.parse import urlsplit

from sitecheck import store

log = logging.getLogger(__name__)

# After each failed try the pause doubles, from half a minute up to an hour; after this many
# tries (about a day and a half) the message is given up and the pages say so.
FIRST_PAUSE_S = 30
LONGEST_PAUSE_S = 3600
MOST_TRIES = 40
# How long a sender holds a message it is trying; past that another process may try it.
CLAIM_S = 120
# A sender with nothing due looks again this often (other processes queue too, and only
# the sender holding the lease sends, so another process's new message waits for this).
IDLE_LOOK_S = 5.0
# Of the senders of all worker processes, the one holding this lease sends; it renews it
# every round. Another takes over within a lease's time if the holder stops.
SENDER_LEASE = "mail sender"
SENDER_LEASE_S = 120.0


class MailSettingsError(ValueError):
    """The mail settings in the environment are incomplete or wrong; says which and how."""


class MailError(Exception):
    """A message could not be handed to the mail server; the text says why."""


@dataclass(frozen=True)
class MailSettings:
    host: str
    port: int
    sender: str
    base_url: str
    user: str | None = None
    password: str | None = None
    ca_file: str | None = None
    timeout_s: float = 20.0

    def __repr__(self) -> str:  # never print the password
        return f"MailSettings(host={self.host!r}, port={self.port}, sender={self.sender!r})"

    @classmethod
    def from_env(cls, env: Mapping[str, str]) -> MailSettings | None:
        """The settings, or None when SITECHECK_SMTP_HOST is not set (no mail)."""
        host = (env.get("SITECHECK_SMTP_HOST") or "").strip()
        if not host:
            return None
        port_text = (env.get("SITECHECK_SMTP_PORT") or "587").strip()
        try:
            port = int(port_text)
        except ValueError:
            port = 0
        if not 0 < port < 65536:
            raise MailSettingsError(
                f"SITECHECK_SMTP_PORT is {port_text!r}: give the mail server's port, "
                "e.g. 587 (STARTTLS) or 465 (TLS)"
            )
        sender = (env.get("SITECHECK_MAIL_FROM") or "").strip()
        if "@" not in sender or any(c in sender for c in "\r\n"):
            raise MailSettingsError(
                "SITECHECK_MAIL_FROM must be the address messages come from, e.g. "
                "sitecheck@firm.example"
            )
        base_url = (env.get("SITECHECK_BASE_URL") or "").strip().rstrip("/")
        parts = urlsplit(base_url)
        if parts.scheme not in ("http", "https") or not parts.netloc:
            raise MailSettingsError(
                "SITECHECK_BASE_URL must be the address people open sitecheck at, e.g. "
                "https://sitecheck.firm.example: links in e-mails are built on it"
            )
        user = env.get("SITECHECK_SMTP_USER") or None
        password = env.get("SITECHECK_SMTP_PASSWORD") or None
        if bool(user) != bool(password):
            raise MailSettingsError(
                "Give both SITECHECK_SMTP_USER and SITECHECK_SMTP_PASSWORD, or neither"
            )
        ca_file = env.get("SITECHECK_SMTP_CA_FILE") or None
        if ca_file and not Path(ca_file).is_file():
            raise MailSettingsError(f"SITECHECK_SMTP_CA_FILE {ca_file!r} is not a file")
        return cls(
            host=host,
            port=port,
            sender=sender,
            base_url=base_url,
            user=user,
            password=password,
            ca_file=ca_file,
        )

    def link(self, path: str) -> str:
        return self.base_url + path


def pause_after(tries: int) -> float | None:
    """Seconds to wait after ``tries`` failed tries before the next; None: give up."""
    if tries >= MOST_TRIES:
        return None
    return min(LONGEST_PAUSE_S, FIRST_PAUSE_S * 2 ** min(tries - 1, 20))


def _tls_context(settings: MailSettings) -> ssl.SSLContext:
    return ssl.create_default_context(cafile=settings.ca_file)


def deliver(
    settings: MailSettings, *, to_addr: str, subject: str, body: str, html: str | None = None
) -> None:
    """Hand one message to the mail server, or raise MailError saying why not. With
    ``html`` the message has both parts, plain text first (mail readers show the last
    part they can)."""
    message = EmailMessage()
    message["From"] = settings.sender
    message["To"] = to_addr
    message["Subject"] = subject
    message["Message-ID"] = make_msgid(domain=settings.sender.rsplit("@", 1)[-1])
    message.set_content(body)
    if html:
        message.add_alternative(html, subtype="html")
    try:
        smtp: smtplib.SMTP
        if settings.port == 465:
            smtp = smtplib.SMTP_SSL(
                settings.host,
                settings.port,
                timeout=settings.timeout_s,
                context=_tls_context(settings),
            )
        else:
            smtp = smtplib.SMTP(settings.host, settings.port, timeout=settings.timeout_s)
        with smtp:
            smtp.ehlo()
            if settings.port != 465:
                if smtp.has_extn("starttls"):
                    smtp.starttls(context=_tls_context(settings))
                    smtp.ehlo()
                elif settings.user:
                    raise MailError(
                        f"{settings.host}:{settings.port} offers no STARTTLS; sitecheck will "
                        "not send the mail password unencrypted"
                    )
            if settings.user:
                smtp.login(settings.user, settings.password or "")
            smtp.send_message(message)
    except MailError:
        raise
    except (OSError, smtplib.SMTPException, ssl.SSLError) as error:
        raise MailError(f"{type(error).__name__}: {error}") from error


def send_due(db_path: str, settings: MailSettings, *, now: datetime | None = None) -> int:
    """Try every message that is due; returns how many went. Each outcome is kept at once,
    so a crash part-way neither loses nor repeats the others."""
    db = store.open_db(db_path)
    sent = 0
    try:
        for message in store.claim_due_mail(db, lease_s=CLAIM_S, now=now):
            try:
                deliver(
                    settings,
                    to_addr=message["to_addr"],
                    subject=message["subject"],
                    body=message["body"],
                    html=message["html"],
                )
            except MailError as error:
                tries = message["attempts"] + 1
                pause = pause_after(tries)
                moment = now or store.utc_now()
                retry_at = None if pause is None else moment + timedelta(seconds=pause)
                store.mail_failed(db, message["id"], error=str(error), retry_at=retry_at, now=now)
                log.warning(
                    "mail %s to %s not sent (try %d): %s",
                    message["id"],
                    message["to_addr"],
                    tries,
                    error,
                )
            else:
                store.mail_sent(db, message["id"], now=now)
                log.info("mail %s (%s) sent", message["id"], message["kind"])
                sent += 1
    finally:
        db.conn.close()
    return sent


def make_notices(db_path: str, settings: MailSettings, *, now: datetime | None = None) -> int:
    """Queue the notice messages that are due (sitecheck.notices); returns how many."""
    from sitecheck.notices import make_messages

    db = store.open_db(db_path)
    try:
        return make_messages(db, settings.base_url, now=now)
    finally:
        db.conn.close()


class MailSender:
    """The background thread that delivers the queue. Every app process has one; of these,
    only the one holding the sender's lease in the database sends (a message is also
    claimed before it is tried, so even two senders would never send it twice)."""

    def __init__(self, db_path: str, settings: MailSettings):
        self.db_path = db_path
        self.settings = settings
        self.holder = f"{socket.gethostname()}:{os.getpid()}:{id(self):x}"
        self._wake = threading.Event()
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None

    def start(self) -> None:
        if self._thread is None:
            self._thread = threading.Thread(target=self._run, name="sitecheck-mail", daemon=True)
            self._thread.start()

    def alive(self) -> bool:
        """Whether its thread runs (for the health check)."""
        return self._thread is not None and self._thread.is_alive()

    def wake(self) -> None:
        """Something was queued: look now rather than at the next idle look."""
        self._wake.set()

    def stop(self, timeout_s: float = 10.0) -> None:
        self._stop.set()
        self._wake.set()
        if self._thread is not None:
            self._thread.join(timeout_s)
            self._thread = None

    def _run(self) -> None:
        try:
            while not self._stop.is_set():
                self._wake.clear()
                try:
                    if self._holds_lease():
                        make_notices(self.db_path, self.settings)
                        send_due(self.db_path, self.settings)
                        wait = self._seconds_to_next()
                    else:
                        wait = IDLE_LOOK_S  # and try for the lease again
                except Exception:  # the sender must outlive any one bad round
                    log.exception("mail sender: a round failed; trying again shortly")
                    wait = FIRST_PAUSE_S
                self._wake.wait(wait)
        finally:
            self._give_up_lease()

    def _holds_lease(self) -> bool:
        db = store.open_db(self.db_path)
        try:
            return store.take_lease(
                db, name=SENDER_LEASE, holder=self.holder, lease_s=SENDER_LEASE_S
            )
        finally:
            db.conn.close()

    def _give_up_lease(self) -> None:
        # A clean stop frees the lease at once, so another process need not wait it out.
        with contextlib.suppress(Exception):
            db = store.open_db(self.db_path)
            try:
                store.release_lease(db, name=SENDER_LEASE, holder=self.holder)
            finally:
                db.conn.close()

    def _seconds_to_next(self) -> float:
        db = store.open_db(self.db_path)
        try:
            due = [at for at in (store.next_mail_due_at(db), store.next_notice_due_at(db)) if at]
        finally:
            db.conn.close()
        if not due:
            return IDLE_LOOK_S
        soonest = min(due)
        seconds = (datetime.fromisoformat(soonest) - store.utc_now()).total_seconds()
        return min(IDLE_LOOK_S, max(0.5, seconds))
