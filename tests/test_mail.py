"""The mail sender on its own: settings from the environment, delivery over STARTTLS with a
password to a real SMTP server on 127.0.0.1 (started here), the queue's claims.

Every address is invented.
"""

from __future__ import annotations

import re
from datetime import timedelta

import pytest

from kit.smtp_server import LocalMailServer, self_signed
from sitecheck import credentials, mail, store
from sitecheck.mail import MailSettings, MailSettingsError
from sitecheck.web import create_app

NEW = "nia.new@example.test"


def settings(port: int, **more) -> MailSettings:
    return MailSettings(
        host="127.0.0.1",
        port=port,
        sender="sitecheck@firm.example",
        base_url="http://sitecheck.firm.example",
        timeout_s=10,
        **more,
    )


@pytest.fixture
def plain_app(tmp_path):
    return create_app(tmp_path / "nomail.db", TESTING=True)


def test_mail_goes_over_starttls_with_a_password_and_never_in_clear(tmp_path):
    cert, key = self_signed(tmp_path)
    secure = LocalMailServer(certificate=(cert, key), logins=[("sitecheck", "mail secret")]).start()
    try:
        mail.deliver(
            settings(secure.port, user="sitecheck", password="mail secret", ca_file=str(cert)),
            to_addr=NEW,
            subject="A test",
            body="Sent over STARTTLS.",
        )
        (message,) = secure.inbox.wait_for(1)
        assert message.get_content().strip() == "Sent over STARTTLS."
        assert secure.logins_seen == ["sitecheck"]
        # A certificate nobody vouches for is refused.
        with pytest.raises(mail.MailError, match="CERTIFICATE_VERIFY_FAILED"):
            mail.deliver(
                settings(secure.port, user="sitecheck", password="mail secret"),
                to_addr=NEW,
                subject="x",
                body="x",
            )
    finally:
        secure.stop()
    plain = LocalMailServer().start()
    try:
        with pytest.raises(mail.MailError, match="offers no STARTTLS"):
            mail.deliver(
                settings(plain.port, user="sitecheck", password="mail secret"),
                to_addr=NEW,
                subject="x",
                body="x",
            )
        assert plain.inbox.messages == []
    finally:
        plain.stop()


BASE = {
    "SITECHECK_SMTP_HOST": "mail.firm.example",
    "SITECHECK_MAIL_FROM": "sitecheck@firm.example",
    "SITECHECK_BASE_URL": "https://sitecheck.firm.example/",
}


def test_mail_settings_from_the_environment():
    assert MailSettings.from_env({}) is None
    got = MailSettings.from_env(
        BASE | {"SITECHECK_SMTP_USER": "u", "SITECHECK_SMTP_PASSWORD": "s3cret-pw"}
    )
    assert (got.host, got.port, got.base_url, got.password) == (
        "mail.firm.example",
        587,
        "https://sitecheck.firm.example",
        "s3cret-pw",
    )
    assert "s3cret-pw" not in repr(got)  # settings may be logged; the password may not


@pytest.mark.parametrize(
    ("change", "says"),
    [
        ({"SITECHECK_SMTP_PORT": "smtp"}, "SITECHECK_SMTP_PORT"),
        ({"SITECHECK_MAIL_FROM": ""}, "SITECHECK_MAIL_FROM"),
        ({"SITECHECK_BASE_URL": ""}, "SITECHECK_BASE_URL"),
        ({"SITECHECK_BASE_URL": "sitecheck.firm.example"}, "SITECHECK_BASE_URL"),
        ({"SITECHECK_SMTP_USER": "u"}, "both SITECHECK_SMTP_USER and SITECHECK_SMTP_PASSWORD"),
        ({"SITECHECK_SMTP_CA_FILE": "/no/such/file.pem"}, "SITECHECK_SMTP_CA_FILE"),
    ],
)
def test_incomplete_mail_settings_are_refused_saying_what_to_give(change, says):
    with pytest.raises(MailSettingsError, match=re.escape(says)):
        MailSettings.from_env(BASE | change)


def test_a_link_is_used_once_and_a_message_is_claimed_by_one_sender_at_a_time(plain_app):
    db = store.open_db(plain_app.config["DB_PATH"])
    other = store.open_db(plain_app.config["DB_PATH"])
    try:
        token = credentials.new_link_token()
        store.create_link(
            db, token_hash=token.token_hash, purpose=store.INVITATION, email=NEW, valid_s=60
        )
        with pytest.raises(ValueError, match="sha256 hex"):
            store.create_link(
                db, token_hash=token.token, purpose=store.INVITATION, email=NEW, valid_s=60
            )
        with pytest.raises(ValueError, match="purpose"):
            store.create_link(db, token_hash="0" * 64, purpose="anything", email=NEW, valid_s=60)
        used = store.use_link(db, token_hash=token.token_hash, purpose=store.INVITATION)
        assert used["email"] == NEW
        assert store.use_link(other, token_hash=token.token_hash, purpose=store.INVITATION) is None
        assert store.open_link(other, token_hash=token.token_hash, purpose=store.INVITATION) is None

        store.queue_mail(db, kind="test", to_addr=NEW, subject="One", body="first")
        store.queue_mail(db, kind="test", to_addr=NEW, subject="Two", body="second")
        first = store.claim_due_mail(db, lease_s=60)
        assert [m["subject"] for m in first] == ["One", "Two"]
        assert store.claim_due_mail(other, lease_s=60) == []  # held by the first sender
        later = store.utc_now() + timedelta(seconds=61)
        assert len(store.claim_due_mail(other, lease_s=60, now=later)) == 2  # its lease ran out
        with pytest.raises(ValueError, match="one line"):
            store.queue_mail(db, kind="test", to_addr=NEW, subject="Two\r\nBcc: x@y.z", body="")
    finally:
        db.conn.close()
        other.conn.close()
