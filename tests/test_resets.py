"""A new password for someone who lost theirs: a single-use link from the command line
(``sitecheck users reset-password``) or from "People on your sites"; never a password on
anyone's screen. With mail the link goes only to the account's address (a real SMTP server
on 127.0.0.1, started here); without mail it is shown once, to hand over."""

from __future__ import annotations

import re
import subprocess

import pytest

from kit.client import Client
from kit.data_folder import prepare_home
from kit.servers import SITECHECK, Served
from kit.smtp_server import LocalMailServer
from kit.web import PASSWORD, csrf_token
from sitecheck import resets, store

pytestmark = pytest.mark.timeout(120)

LINK = re.compile(r"http://[^\s<\"]+/new-password/[A-Za-z0-9_-]{20,}")
CHOSEN = "a padstone under every beam end"


def _path(link: str) -> str:
    return "/" + link.split("/", 3)[3]


def _reset(home, email, env=None) -> subprocess.CompletedProcess:
    return subprocess.run(
        [SITECHECK, "users", "reset-password", email, "--home", str(home)],
        capture_output=True,
        text=True,
        env={"PATH": "/usr/bin:/bin", **(env or {})},
    )


def _choose(person: Client, path: str, new: str, again: str | None = None):
    page = person.get(path)
    assert page.status == 200, page.text[:300]
    token = re.search(r'name="csrf_token" type="hidden" value="([^"]+)"', page.text).group(1)
    return person.post_form(path, {"new": new, "again": again or new}, token=token)


@pytest.fixture
def home(tmp_path):
    home = tmp_path / "data"
    prepare_home(home, inspectors=2)
    return home


def test_from_the_command_line_without_mail_the_link_is_shown_once_and_works_once(home):
    server = Served(home, workers=2)
    try:
        elsewhere = Client(server.url)  # the person's phone, still logged in
        assert elsewhere.log_in("inspector0@example.test", PASSWORD).status == 302

        done = _reset(home, "inspector0@example.test")
        assert done.returncode == 0, done.stderr
        links = LINK.findall(done.stdout)
        assert (
            len(links) == 1 and "give this link to inspector0@example.test yourself" in done.stdout
        )
        assert PASSWORD not in done.stdout and "password:" not in done.stdout.lower()
        path = _path(links[0])

        person = Client(server.url)
        assert _choose(person, path, CHOSEN, "another thing").status == 400  # nothing used yet
        answer = _choose(person, path, CHOSEN)
        assert answer.status == 302 and answer.headers["Location"] == "/"
        assert person.get("/").status == 200  # logged in with the new password's session
        assert person.get(path).status == 410  # once only
        assert elsewhere.get("/").status == 302  # every other session ended
        assert Client(server.url).try_log_in("inspector0@example.test", PASSWORD).status == 401
        assert Client(server.url).log_in("inspector0@example.test", CHOSEN).status == 302
    finally:
        server.stop()


def test_from_the_command_line_with_mail_the_link_goes_only_to_the_address(home):
    smtp = LocalMailServer().start()
    try:
        env = {
            "SITECHECK_SMTP_HOST": "127.0.0.1",
            "SITECHECK_SMTP_PORT": str(smtp.port),
            "SITECHECK_MAIL_FROM": "sitecheck@firm.example",
            "SITECHECK_BASE_URL": "http://sitecheck.firm.example",
        }
        done = _reset(home, "Inspector1@example.test", env)
        assert done.returncode == 0, done.stderr
        assert "went to inspector1@example.test" in done.stdout
        assert not LINK.search(done.stdout)
        (message,) = smtp.inbox.wait_for(1)
    finally:
        smtp.stop()
    assert message["To"] == "inspector1@example.test"
    assert message["Subject"] == "A new password for your sitecheck account"
    (link,) = LINK.findall(message.get_content())
    assert link.startswith("http://sitecheck.firm.example/new-password/")
    server = Served(home)
    try:
        assert _choose(Client(server.url), _path(link), CHOSEN).status == 302
    finally:
        server.stop()


def test_a_newer_link_ends_the_older_and_a_disabled_account_is_refused(home):
    first = LINK.search(_reset(home, "inspector0@example.test").stdout).group(0)
    second = LINK.search(_reset(home, "inspector0@example.test").stdout).group(0)
    subprocess.run(
        [SITECHECK, "users", "disable", "inspector1@example.test", "--home", str(home)],
        check=True,
        capture_output=True,
    )
    refused = _reset(home, "inspector1@example.test")
    assert refused.returncode == 2
    assert "inspector1@example.test is disabled; enable it first" in refused.stderr
    server = Served(home)
    try:
        person = Client(server.url)
        assert person.get(_path(first)).status == 410
        assert person.get(_path(second)).status == 200
    finally:
        server.stop()


def _post(client, url):
    return client.post(url, data={"csrf_token": csrf_token(client)})


def test_people_on_your_sites_disable_enable_and_a_handed_over_link(
    app, db, people, site, client_as
):
    engineer = client_as("engineer")
    inspector = client_as("inspector")
    page = engineer.get("/people")
    assert page.status_code == 200
    assert b"Ivo Inspector" in page.data and b"inspector@example.test" not in page.data

    who = people["inspector"].id
    assert _post(engineer, f"/people/{who}/disable").status_code == 302
    assert inspector.get("/").status_code == 302  # logged out at once
    assert b"disabled" in engineer.get("/people").data
    assert _post(engineer, f"/people/{who}/new-password").status_code == 409
    assert _post(engineer, f"/people/{who}/enable").status_code == 302

    answer = _post(engineer, f"/people/{who}/new-password")
    assert answer.status_code == 200 and answer.headers["Cache-Control"] == "no-store"
    (link,) = LINK.findall(answer.get_data(as_text=True))
    assert PASSWORD.encode() not in answer.data
    kinds = [e["kind"] for e in store.events_for_user(db, user_id=people["engineer"].id)]
    assert "password reset started" in kinds

    stranger = app.test_client()
    path = _path(link)
    form = stranger.get(path)
    assert form.status_code == 200 and form.headers["Referrer-Policy"] == "no-referrer"
    token = re.search(rb'name="csrf_token" type="hidden" value="([^"]+)"', form.data).group(1)
    done = stranger.post(path, data={"new": CHOSEN, "again": CHOSEN, "csrf_token": token.decode()})
    assert done.status_code == 302
    assert stranger.get("/").status_code == 200


def test_people_refuses_yourself_and_anyone_not_on_your_sites(people, site, client_as):
    engineer = client_as("engineer")
    me = people["engineer"].id
    assert _post(engineer, f"/people/{me}/disable").status_code == 409
    answer = _post(engineer, f"/people/{people['outsider'].id}/new-password")
    assert answer.status_code == 404 and b"not on any of your sites" in answer.data
    assert client_as("inspector").get("/people").status_code == 403


def test_an_expired_link_no_longer_works(app, people, site, client_as, monkeypatch):
    monkeypatch.setattr(resets, "RESET_VALID_S", 0)
    answer = _post(client_as("engineer"), f"/people/{people['viewer'].id}/new-password")
    (link,) = LINK.findall(answer.get_data(as_text=True))
    gone = app.test_client().get(_path(link))
    assert gone.status_code == 410 and b"This link no longer works" in gone.data
