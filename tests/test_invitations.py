"""Invitations as the people involved live them: the engineer invites, a real SMTP server on
127.0.0.1 (started here) receives the e-mail, the invited person follows its link, makes
an account, and accepts or declines. Also without a mail server (the link is handed over),
with the server down, and with STARTTLS and a password.

Real app, real SQLite file; every address is invented.
"""

from __future__ import annotations

import re
import time
from datetime import timedelta

import pytest

from kit.servers import free_port
from kit.smtp_server import LocalMailServer
from kit.web import PASSWORD, csrf_token, new_site
from sitecheck import credentials, mail, store
from sitecheck.mail import MailSettings
from sitecheck.web import create_app

NEW = "nia.new@example.test"
CHOSEN = "slate grey lintel over the porch"
LINK = re.compile(r"http://[^\s<\"]+/join/[A-Za-z0-9_-]{20,}")


def post(client, url, data=None, **kw):
    return client.post(url, data={**(data or {}), "csrf_token": csrf_token(client)}, **kw)


def log_in(client, email, password=PASSWORD):
    r = post(client, "/login", {"email": email, "password": password})
    assert r.status_code == 302, r.data[:300]
    return client


def settings(port: int, **more) -> MailSettings:
    return MailSettings(
        host="127.0.0.1",
        port=port,
        sender="sitecheck@firm.example",
        base_url="http://sitecheck.firm.example",
        timeout_s=10,
        **more,
    )


def path_of(link: str) -> str:
    return "/" + link.split("/", 3)[3]


@pytest.fixture
def smtp():
    server = LocalMailServer().start()
    yield server
    server.stop()


@pytest.fixture
def mail_app(tmp_path, smtp):
    """The app with mail through the local server, its sender thread running."""
    app = create_app(tmp_path / "mailed.db", TESTING=True, MAIL=settings(smtp.port))
    yield app
    app.extensions["mail_sender"].stop()


def people_on_a_site(app):
    """An engineer (who may make sites) with a site, and an account on no site."""
    db = store.open_db(app.config["DB_PATH"])
    try:
        engineer = store.create_user(
            db,
            email="esme@example.test",
            name="Esme Engineer",
            password_hash=credentials.hash_password(PASSWORD),
            may_make_sites=True,
        )
        other = store.create_user(
            db,
            email="otto@example.test",
            name="Otto Outsider",
            password_hash=credentials.hash_password(PASSWORD),
        )
        site = new_site(db, name="Invented Mill", created_by=engineer["id"])
    finally:
        db.conn.close()
    return engineer, other, site


def wait_until(condition, timeout_s: float = 20.0) -> bool:
    """Whether ``condition()`` came true, looking every 50 ms (a wait, not a timing)."""
    deadline = time.monotonic() + timeout_s
    while not condition():
        if time.monotonic() > deadline:
            return False
        time.sleep(0.05)
    return True


def every_stored_text(app) -> str:
    db = store.open_db(app.config["DB_PATH"])
    try:
        tables = [r[0] for r in db.execute("SELECT name FROM sqlite_master WHERE type='table'")]
        return "\n".join(
            repr(row) for table in tables for row in db.execute(f"SELECT * FROM [{table}]")
        )
    finally:
        db.conn.close()


# --- with mail ----------------------------------------------------------------------------------


def test_a_new_address_gets_a_single_use_link_by_e_mail_that_the_inviter_never_sees(mail_app, smtp):
    engineer, _other, site = people_on_a_site(mail_app)
    esme = log_in(mail_app.test_client(), engineer["email"])
    members = f"/sites/{site['id']}/members"
    r = post(esme, f"{members}/invite", {"email": "Nia.New@Example.test", "role": "inspector"})
    assert r.status_code == 302
    page = esme.get(members).data.decode()
    assert "An e-mail telling them what to do next is on its way" in page
    assert "/join/" not in r.data.decode() + page
    assert "nia.new@example.test" in page  # listed as waiting for an answer

    (message,) = smtp.inbox.wait_for(1)
    assert message["To"] == NEW and message["From"] == "sitecheck@firm.example"
    assert "Esme Engineer invites you to the site Invented Mill" in message["Subject"]
    body = message.get_content()
    assert "as inspector" in body and "It works once" in body
    link = LINK.search(body).group(0)
    assert link.startswith("http://sitecheck.firm.example/join/")  # SITECHECK_BASE_URL
    token = link.rsplit("/", 1)[1]
    # The server has the message a moment before the sender notes that it went.
    assert wait_until(lambda: "e-mail sent" in esme.get(members).data.decode())
    assert token not in every_stored_text(mail_app)  # only its hash is kept; the body emptied

    # The newcomer follows the link in another browser: no account exists until then.
    db = store.open_db(mail_app.config["DB_PATH"])
    assert store.get_user_by_email(db, NEW) is None
    nia = mail_app.test_client()
    form = nia.get(path_of(link))
    assert form.status_code == 200 and b"Make your account for nia.new@example.test" in form.data
    assert form.headers["Referrer-Policy"] == "no-referrer"
    r = post(nia, path_of(link), {"name": "Nia New", "new": CHOSEN, "again": CHOSEN + "!"})
    assert r.status_code == 400 and b"differ" in r.data
    r = post(nia, path_of(link), {"name": "Nia New", "new": "short", "again": "short"})
    assert r.status_code == 400 and b"at least 10" in r.data
    r = post(nia, path_of(link), {"name": "Nia New", "new": CHOSEN, "again": CHOSEN})
    assert r.status_code == 302 and r.headers["Location"] == "/"
    user = store.get_user_by_email(db, NEW)
    assert user["name"] == "Nia New" and user["may_make_sites"] is False

    # Logged in, the invitation waits on the first page; nothing of the site before it.
    home = nia.get("/").data.decode()
    assert "Invitations for you" in home and "Invented Mill" in home
    assert nia.get(f"/sites/{site['id']}").status_code == 404
    assert store.role_of(db, user_id=user["id"], site_id=site["id"]) is None
    (invitation,) = store.open_invitations_for_email(db, email=NEW)
    r = post(nia, f"/invitations/{invitation['id']}/accept")
    assert r.status_code == 302 and r.headers["Location"] == f"/sites/{site['id']}"
    assert nia.get(f"/sites/{site['id']}").status_code == 200
    assert store.role_of(db, user_id=user["id"], site_id=site["id"]) == "inspector"

    # The link worked once; the chosen password works.
    assert nia.get(path_of(link)).status_code == 410
    assert (
        post(
            mail_app.test_client(), path_of(link), {"name": "X", "new": CHOSEN, "again": CHOSEN}
        ).status_code
        == 410
    )
    log_in(mail_app.test_client(), NEW, CHOSEN)
    kinds = [e["kind"] for e in store.events_for(db, site_id=site["id"])]
    assert "invitation made" in kinds and "invitation accepted" in kinds
    assert NEW not in str(store.events_for(db, site_id=site["id"]))  # history names no address
    db.conn.close()


def test_an_existing_account_is_told_to_log_in_and_joins_only_when_it_accepts(mail_app, smtp):
    engineer, other, site = people_on_a_site(mail_app)
    esme = log_in(mail_app.test_client(), engineer["email"])
    r = post(
        esme, f"/sites/{site['id']}/members/invite", {"email": other["email"], "role": "viewer"}
    )
    assert r.status_code == 302
    (message,) = smtp.inbox.wait_for(1)
    body = message.get_content()
    assert "/join/" not in body and "http://sitecheck.firm.example/login" in body

    otto = log_in(mail_app.test_client(), other["email"])
    assert otto.get(f"/sites/{site['id']}").status_code == 404  # not before accepting
    home = otto.get("/").data.decode()
    invitation_id = re.search(r'data-invitation="([^"]+)"', home).group(1)
    r = post(otto, f"/invitations/{invitation_id}/decline")
    assert r.status_code == 302
    assert otto.get(f"/sites/{site['id']}").status_code == 404
    assert "Invitations for you" not in otto.get("/").data.decode()
    # Declined stays declined.
    assert post(otto, f"/invitations/{invitation_id}/accept").status_code == 404
    db = store.open_db(mail_app.config["DB_PATH"])
    assert store.role_of(db, user_id=other["id"], site_id=site["id"]) is None
    assert store.open_invitations_for_site(db, site_id=site["id"]) == []
    db.conn.close()


def test_the_inviter_is_answered_alike_whether_or_not_the_address_has_an_account(
    mail_app, tmp_path
):
    """Before: inviting an existing address answered with that person's name and added them
    at once; an unknown one made an account. Now both answers read the same."""
    for app in (mail_app, create_app(tmp_path / "nomail.db", TESTING=True)):
        engineer, other, site = people_on_a_site(app)
        esme = log_in(app.test_client(), engineer["email"])
        answers = []
        for email in (other["email"], "nobody.yet@example.test"):
            r = post(
                esme, f"/sites/{site['id']}/members/invite", {"email": email, "role": "viewer"}
            )
            shown = esme.get(r.headers["Location"]).data if r.status_code == 302 else r.data
            text = shown.decode()
            text = re.sub(r"/join/[A-Za-z0-9_-]+", "/join/TOKEN", text)
            text = re.sub(r'data-invitation="[^"]+"', "", text)
            text = re.sub(r'invitations/[^/"]+/withdraw', "", text)
            text = re.sub(r'name="csrf_token"[^>]*', "", text)
            text = text.replace(email, "ADDRESS")
            answers.append((r.status_code, text))
            assert "Otto" not in text and "already exists" not in text
        (first_status, first), (second_status, second) = answers
        assert first_status == second_status
        # The pending list holds both by then; compare the answers' own panels.
        assert _answer_panel(first) == _answer_panel(second)
        db = store.open_db(app.config["DB_PATH"])
        assert store.role_of(db, user_id=other["id"], site_id=site["id"]) is None
        assert store.get_user_by_email(db, "nobody.yet@example.test") is None
        db.conn.close()


def _answer_panel(html: str) -> str:
    flash = re.findall(r'<p class="flash"[^>]*>.*?</p>', html, re.S)
    handover = re.findall(r'<section class="panel handover".*?</section>', html, re.S)
    assert flash or handover
    return "".join(flash + handover)


def test_nobody_else_may_answer_someone_elses_invitation(mail_app, smtp):
    engineer, other, site = people_on_a_site(mail_app)
    esme = log_in(mail_app.test_client(), engineer["email"])
    post(esme, f"/sites/{site['id']}/members/invite", {"email": NEW, "role": "engineer"})
    db = store.open_db(mail_app.config["DB_PATH"])
    (invitation,) = store.open_invitations_for_site(db, site_id=site["id"])
    otto = log_in(mail_app.test_client(), other["email"])
    for answer in ("accept", "decline"):
        r = post(otto, f"/invitations/{invitation['id']}/{answer}")
        assert r.status_code == 404 and b"no longer open" in r.data
    assert store.role_of(db, user_id=other["id"], site_id=site["id"]) is None
    assert len(store.open_invitations_for_site(db, site_id=site["id"])) == 1
    db.conn.close()


# --- without mail -------------------------------------------------------------------------------


@pytest.fixture
def plain_app(tmp_path):
    return create_app(tmp_path / "nomail.db", TESTING=True)


def test_without_mail_the_inviter_gets_the_link_to_hand_over_said_plainly(plain_app):
    engineer, _other, site = people_on_a_site(plain_app)
    esme = log_in(plain_app.test_client(), engineer["email"])
    r = post(esme, f"/sites/{site['id']}/members/invite", {"email": NEW, "role": "contractor"})
    assert r.status_code == 201
    page = r.data.decode()
    assert "sitecheck has no mail server set up, so it sends no e-mail" in page
    assert "Hand this link to them yourself" in page and "It works once" in page
    link = re.search(r"data-invitation-link>([^<]+)<", page).group(1)
    assert link.startswith("http://localhost/join/")
    assert link not in esme.get(f"/sites/{site['id']}/members").data.decode()  # shown once
    assert (
        "no e-mail: the link was handed over"
        in esme.get(f"/sites/{site['id']}/members").data.decode()
    )

    newcomer = plain_app.test_client()
    r = post(newcomer, path_of(link), {"name": "Nia New", "new": CHOSEN, "again": CHOSEN})
    assert r.status_code == 302
    (invitation,) = re.findall(r'data-invitation="([^"]+)"', newcomer.get("/").data.decode())
    assert post(newcomer, f"/invitations/{invitation}/accept").status_code == 302
    db = store.open_db(plain_app.config["DB_PATH"])
    user = store.get_user_by_email(db, NEW)
    assert store.role_of(db, user_id=user["id"], site_id=site["id"]) == "contractor"
    assert user["must_change_password"] is False  # the password is their own
    db.conn.close()


def test_a_withdrawn_replaced_or_expired_invitation_and_its_link_stop_working(plain_app):
    engineer, _other, site = people_on_a_site(plain_app)
    esme = log_in(plain_app.test_client(), engineer["email"])
    invite_url = f"/sites/{site['id']}/members/invite"

    def invite(role):
        r = post(esme, invite_url, {"email": NEW, "role": role})
        return re.search(r"data-invitation-link>([^<]+)<", r.data.decode()).group(1)

    first = invite("viewer")
    second = invite("inspector")  # invited again: the newer offer stands, the older goes
    assert plain_app.test_client().get(path_of(first)).status_code == 410
    db = store.open_db(plain_app.config["DB_PATH"])
    (pending,) = store.open_invitations_for_site(db, site_id=site["id"])
    assert pending["role"] == "inspector"
    r = post(esme, f"/sites/{site['id']}/invitations/{pending['id']}/withdraw")
    assert r.status_code == 302
    assert plain_app.test_client().get(path_of(second)).status_code == 410
    assert store.open_invitations_for_site(db, site_id=site["id"]) == []
    assert (
        post(esme, f"/sites/{site['id']}/invitations/{pending['id']}/withdraw").status_code == 404
    )

    # An offer past its time is not listed, and its link no longer makes an account.
    third = invite("viewer")
    later = store.utc_now() + timedelta(days=8)
    assert store.open_invitations_for_site(db, site_id=site["id"], now=later) == []
    token_hash = credentials.link_token_hash(third.rsplit("/", 1)[1])
    assert store.open_link(db, token_hash=token_hash, purpose=store.INVITATION, now=later) is None
    assert store.use_link(db, token_hash=token_hash, purpose=store.INVITATION, now=later) is None
    db.conn.close()


def test_only_whoever_may_invite_sees_addresses_and_waiting_invitations(plain_app):
    engineer, other, site = people_on_a_site(plain_app)
    esme = log_in(plain_app.test_client(), engineer["email"])
    post(esme, f"/sites/{site['id']}/members/invite", {"email": NEW, "role": "viewer"})
    db = store.open_db(plain_app.config["DB_PATH"])
    store.add_membership(
        db, user_id=other["id"], site_id=site["id"], role="viewer", invited_by=engineer["id"]
    )
    db.conn.close()
    otto = log_in(plain_app.test_client(), other["email"])
    page = otto.get(f"/sites/{site['id']}/members").data.decode()
    assert "Esme Engineer" in page and "Otto Outsider" in page
    assert "@example.test" not in page and "Invitations waiting" not in page
    assert "Invitations waiting" in esme.get(f"/sites/{site['id']}/members").data.decode()


# --- the mail server down, STARTTLS, settings ------------------------------------------------------


def test_an_invitation_is_made_at_once_with_the_mail_server_down_and_its_e_mail_goes_later(
    tmp_path,
):
    port = free_port()  # nothing listens here yet
    app = create_app(tmp_path / "down.db", TESTING=True, MAIL=settings(port), MAIL_SENDER=False)
    engineer, _other, site = people_on_a_site(app)
    esme = log_in(app.test_client(), engineer["email"])
    r = post(esme, f"/sites/{site['id']}/members/invite", {"email": NEW, "role": "viewer"})
    assert r.status_code == 302  # the action does not wait on, or fail with, the mail server
    members = f"/sites/{site['id']}/members"
    assert "e-mail waiting to be sent" in esme.get(members).data.decode()

    assert mail.send_due(app.config["DB_PATH"], app.config["MAIL"]) == 0
    db = store.open_db(app.config["DB_PATH"])
    (invitation,) = store.open_invitations_for_site(db, site_id=site["id"])
    status = store.mail_status(db, invitation["mail_id"])
    assert status["attempts"] == 1 and status["sent_at"] is None
    assert "Connection" in status["last_error"] or "refused" in status["last_error"]
    assert "1 try failed" in esme.get(members).data.decode()
    # Not due again at once: a pause first, which grows with each try.
    assert mail.send_due(app.config["DB_PATH"], app.config["MAIL"]) == 0
    assert store.mail_status(db, invitation["mail_id"])["attempts"] == 1
    assert [mail.pause_after(n) for n in (1, 2, 3, 8, mail.MOST_TRIES)] == [30, 60, 120, 3600, None]

    server = LocalMailServer(port).start()
    try:
        due = store.utc_now() + timedelta(seconds=mail.FIRST_PAUSE_S + 1)
        assert mail.send_due(app.config["DB_PATH"], app.config["MAIL"], now=due) == 1
        (message,) = server.inbox.wait_for(1)
    finally:
        server.stop()
    assert LINK.search(message.get_content())
    assert store.mail_status(db, invitation["mail_id"])["sent_at"] is not None
    assert "e-mail sent" in esme.get(members).data.decode()
    db.conn.close()


def test_a_message_given_up_says_so_to_the_inviter(tmp_path):
    app = create_app(
        tmp_path / "gone.db", TESTING=True, MAIL=settings(free_port()), MAIL_SENDER=False
    )
    engineer, _other, site = people_on_a_site(app)
    esme = log_in(app.test_client(), engineer["email"])
    post(esme, f"/sites/{site['id']}/members/invite", {"email": NEW, "role": "viewer"})
    db = store.open_db(app.config["DB_PATH"])
    (invitation,) = store.open_invitations_for_site(db, site_id=site["id"])
    store.mail_failed(db, invitation["mail_id"], error="550 no such mailbox", retry_at=None)
    page = esme.get(f"/sites/{site['id']}/members").data.decode()
    assert "e-mail could not be sent (550 no such mailbox); invite them again" in page
    assert every_stored_text(app).count("It works once") == 0  # the body went with it
    db.conn.close()
