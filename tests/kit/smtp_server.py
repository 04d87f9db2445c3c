"""A real SMTP server on 127.0.0.1 for the tests (aiosmtpd), and what arrived at it."""

from __future__ import annotations

import email
import ssl
import subprocess
import threading
from email import policy
from email.message import EmailMessage
from pathlib import Path

from aiosmtpd.controller import Controller
from aiosmtpd.smtp import AuthResult

from kit.servers import free_port


class Inbox:
    """aiosmtpd's handler: keeps each message that arrives, and lets a test wait for one."""

    def __init__(self):
        self.messages: list[EmailMessage] = []
        self.envelopes = []
        self._arrived = threading.Condition()

    async def handle_DATA(self, server, session, envelope):
        message = email.message_from_bytes(envelope.content, policy=policy.default)
        with self._arrived:
            self.messages.append(message)
            self.envelopes.append(envelope)
            self._arrived.notify_all()
        return "250 Message accepted for delivery"

    def wait_for(self, count: int, timeout_s: float = 20.0) -> list[EmailMessage]:
        """The first ``count`` messages, once they have arrived (the test fails otherwise)."""
        with self._arrived:
            self._arrived.wait_for(lambda: len(self.messages) >= count, timeout_s)
            assert len(self.messages) >= count, f"{len(self.messages)} of {count} messages arrived"
            return list(self.messages[:count])


class LocalMailServer:
    """Started and stopped by the tests. With ``certificate`` (from :func:`self_signed`) it
    offers STARTTLS and takes AUTH only after it; ``logins`` are the accepted (user, password)."""

    def __init__(self, port: int | None = None, *, certificate=None, logins=()):
        self.port = port or free_port()
        self.inbox = Inbox()
        self.logins_seen: list[str] = []
        kwargs = {}
        if certificate is not None:
            context = ssl.create_default_context(ssl.Purpose.CLIENT_AUTH)
            context.load_cert_chain(certificate[0], certificate[1])
            kwargs.update(tls_context=context, require_starttls=True, auth_require_tls=True)
        if logins:
            accepted = set(logins)

            def authenticator(server, session, envelope, mechanism, auth_data):
                who = (auth_data.login.decode(), auth_data.password.decode())
                self.logins_seen.append(who[0])
                return AuthResult(success=who in accepted)

            kwargs.update(authenticator=authenticator, auth_required=True)
        self._controller = Controller(
            self.inbox, hostname="127.0.0.1", port=self.port, ready_timeout=20, **kwargs
        )

    def start(self) -> LocalMailServer:
        self._controller.start()
        return self

    def stop(self) -> None:
        self._controller.stop()


def self_signed(folder: Path) -> tuple[Path, Path]:
    """A certificate for 127.0.0.1 made by openssl, and its key."""
    cert, key = folder / "smtp-cert.pem", folder / "smtp-key.pem"
    subprocess.run(
        [
            "openssl", "req", "-x509", "-newkey", "rsa:2048", "-nodes", "-days", "2",
            "-keyout", str(key), "-out", str(cert), "-subj", "/CN=127.0.0.1",
            "-addext", "subjectAltName=IP:127.0.0.1",
        ],
        check=True,
        capture_output=True,
    )  # fmt: skip
    return cert, key
