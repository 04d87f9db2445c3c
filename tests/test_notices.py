"""Notices by e-mail, as the three people live them: the inspector sends a record from the
phone, the engineer hears a bearing needs a decision, the inspector hears "measure again"
with the engineer's words, the contractor hears a bearing may be closed up. Everything goes
through a real SMTP server on 127.0.0.1 (started here) and the app's own background sender;
the quarter-hour batching is walked through with the clock given, never waited for.

Real app, real SQLite file; every address and site is invented.
"""

from __future__ import annotations

import uuid
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta

import pytest

from kit.review_steps import as_designed, bearing_named, decide_form, decision_url, record
from kit.review_steps import login as log_in_as
from kit.servers import free_port
from kit.smtp_server import LocalMailServer
from kit.web import PASSWORD, csrf_token, new_site
from sitecheck import credentials, mail, notices, services, store
from sitecheck.demo import schedule_csv
from sitecheck.mail import MailSettings
from sitecheck.web import create_app

BASE = "http://sitecheck.firm.example"


def settings(port: int) -> MailSettings:
    return MailSettings(
        host="127.0.0.1", port=port, sender="sitecheck@firm.example", base_url=BASE, timeout_s=10
    )


@pytest.fixture
def smtp():
    server = LocalMailServer().start()
    yield server
    server.stop()


@pytest.fixture
def app(tmp_path, smtp):
    """The app with mail through the local server and its sender thread running (this
    module's people, site and clients all live on it)."""
    app = create_app(tmp_path / "site.db", TESTING=True, MAIL=settings(smtp.port))
    yield app
    app.extensions["mail_sender"].stop()


@dataclass
class Person:
    """Someone made by a test here (tests/conftest.py's fixtures make their own)."""

    id: int
    email: str
    name: str
    role: str | None


def login(client, person: Person) -> None:
    log_in_as(client, person.email, PASSWORD)


NAMES = {
    "engineer": "Esme Engineer",
    "inspector": "Ivo Inspector",
    "contractor": "Cora Contractor",
    "viewer": "Vic Viewer",
}


def make_people(db, *roles: str) -> dict[str, Person]:
    """One invented person per role, as `sitecheck create-engineer` and invitations make
    them (the engineer may make sites)."""
    made = {}
    for role in roles:
        u = store.create_user(
            db,
            email=f"{role}@example.test",
            name=NAMES[role],
            password_hash=credentials.hash_password(PASSWORD),
            may_make_sites=role == "engineer",
        )
        made[role] = Person(u["id"], u["email"], u["name"], role)
    return made


def invented_site(db, people: dict[str, Person], name: str = "Invented Mill") -> dict:
    """A site made by the engineer, everyone else on it in their role, with the demo's
    schedule (EC6 rows)."""
    engineer = people["engineer"].id
    site = new_site(db, name=name, created_by=engineer)
    for role, person in people.items():
        if role != "engineer":
            store.add_membership(
                db, user_id=person.id, site_id=site["id"], role=role, invited_by=engineer
            )
    text = "\n".join(r for r in schedule_csv().splitlines() if "BS 5628-1" not in r) + "\n"
    assert services.import_schedule(db, site=site, text=text, user_id=engineer).ok
    return store.get_site(db, site["id"])


def send_record(client, site, bearing, **measurements) -> str:
    """An as-built record as the phone sends it from its outbox."""
    body = {
        "uuid": str(uuid.uuid4()),
        "site_id": site["id"],
        "bearing_id": bearing["id"],
        "design_revision": bearing["revision"],
        "measured_at": datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "measurements": measurements,
        "checklist": {"bedded": True, "packing": 0, "cracks": False},
        "notes": "",
    }
    r = client.post("/api/records", json=body, headers={"X-CSRFToken": csrf_token(client)})
    assert r.status_code == 201, r.get_json()
    return body["uuid"]


def to(messages, person) -> list:
    return [m for m in messages if m["To"] == person.email]


def text_of(message) -> str:
    return message.get_body(preferencelist=("plain",)).get_content()


def html_of(message) -> str:
    return message.get_body(preferencelist=("html",)).get_content()


def path_of(url: str) -> str:
    return "/" + url.split("/", 3)[3]


# --- end to end, with the app's own sender ---------------------------------------------------------


def test_each_person_hears_by_e_mail_that_a_bearing_is_in_their_hands(
    app, db, people, site, client_as, smtp
):
    b = bearing_named(db, site, "GF-B1-E")
    inspector, engineer = client_as("inspector"), client_as("engineer")

    # The inspector finds no padstone and does not measure the end distance: the bearing
    # fails as built and goes to the engineer.
    send_record(
        inspector,
        site,
        b,
        bearing_length=b["design_input"]["beam"]["bearing_length"],
        padstone_present=False,
        wall_thickness=215,
        masonry_group=1,
    )
    (first,) = smtp.inbox.wait_for(1)
    assert first["To"] == people["engineer"].email
    assert site["name"] in first["Subject"]
    text = text_of(first)
    review = f"{BASE}/sites/{site['id']}/bearings/{b['id']}/review"
    assert review in text and f'href="{review}"' in html_of(first)
    line = next(row for row in text.splitlines() if row.startswith("- GF-B1-E"))
    # The failing check leads, before the value that was not measured.
    assert "fails as built" in line
    assert line.index("fails as built (utilisation") < line.index("(and ")
    assert "Not measured" not in line.split("(and ")[0]
    assert list(first.iter_attachments()) == []  # no photos, nothing attached
    for person in ("inspector", "contractor", "viewer"):
        assert people[person].email not in first.as_string()
    assert engineer.get(path_of(review)).status_code == 200  # the link opens the bearing

    # The engineer asks for it to be measured again, in their own words.
    words = "Measure the end distance a1 and look for the padstone under the render."
    form = decide_form(engineer, site, b, kind="measure-again", reason=words)
    assert engineer.post(decision_url(site, b), data=form).status_code == 302
    second = smtp.inbox.wait_for(2)[1]
    assert second["To"] == people["inspector"].email
    text = text_of(second)
    assert words in text and "Esme Engineer" in text
    form_link = f"{BASE}/sites/{site['id']}/bearings/{b['id']}/record"
    assert form_link in text
    assert inspector.get(path_of(form_link)).status_code == 200

    # Measured again as designed: within design, so the contractor may close it up.
    send_record(inspector, site, b, **as_designed(b))
    assert store.get_bearing(db, site_id=site["id"], bearing_id=b["id"])["state"] == (
        "within design"
    )
    third = smtp.inbox.wait_for(3)[2]
    assert third["To"] == people["contractor"].email
    assert "GF-B1-E" in text_of(third) and "may be released for closing up" in text_of(third)
    assert f"{BASE}/sites/{site['id']}/release" in text_of(third)

    # Nobody was told about what they did themselves, and nobody else was told anything.
    assert len(smtp.inbox.messages) == 3
    assert [m["To"] for m in smtp.inbox.messages].count(people["viewer"].email) == 0


def test_a_mail_server_that_is_down_neither_fails_nor_loses_the_action(tmp_path, db_path_people):
    """The record is kept and answered at once; its notice waits in the queue with the
    server's error, to be tried again."""
    app, db, site, people, client_as = db_path_people
    b = bearing_named(db, site, "FF-B5")
    send_record(client_as("inspector"), site, b, **as_designed(b))
    assert store.get_bearing(db, site_id=site["id"], bearing_id=b["id"])["state"] == (
        "engineer to decide"
    )

    def tried() -> dict | None:
        return db.execute(
            "SELECT to_addr, attempts, last_error, sent_at FROM outgoing_mail WHERE kind = 'notice'"
        ).fetchone()

    assert wait_until(lambda: (row := tried()) is not None and row[1] >= 1)
    to_addr, attempts, last_error, sent_at = tried()
    assert to_addr == people["engineer"].email and sent_at is None
    assert "Connection refused" in last_error or "ConnectionRefused" in last_error


@pytest.fixture
def db_path_people(tmp_path):
    """An app whose mail server is not there (a free port nobody listens on)."""
    app = create_app(tmp_path / "down.db", TESTING=True, MAIL=settings(free_port()))
    db = store.open_db(app.config["DB_PATH"])
    people = make_people(db, "engineer", "inspector")
    site = invented_site(db, people)

    def client_as(role):
        c = app.test_client()
        login(c, people[role])
        return c

    yield app, db, site, people, client_as
    app.extensions["mail_sender"].stop()
    db.conn.close()


def wait_until(condition, timeout_s: float = 20.0) -> bool:
    """Whether ``condition()`` came true, looking every 50 ms (a wait, not a timing)."""
    import time

    deadline = time.monotonic() + timeout_s
    while not condition():
        if time.monotonic() > deadline:
            return False
        time.sleep(0.05)
    return True


# --- the quarter hour, with the clock given --------------------------------------------------------


@pytest.fixture
def quiet_app(tmp_path):
    """Mail configured but no sender thread: the test runs each round itself, at the times
    it chooses, and hands the queue to the real SMTP server with mail.send_due."""
    return create_app(
        tmp_path / "batched.db", TESTING=True, MAIL=settings(free_port()), MAIL_SENDER=False
    )


def test_at_most_one_message_a_quarter_hour_with_what_waited_grouped_and_nothing_stale(
    quiet_app, tmp_path
):
    app = quiet_app
    db = store.open_db(app.config["DB_PATH"])
    people = make_people(db, "engineer", "inspector")
    eng, inspector = people["engineer"], people["inspector"]
    sites = [invented_site(db, people, name) for name in ("Invented Mill", "Invented Wharf")]
    mill, wharf = sites
    t0 = datetime.now(UTC)

    def at(minutes: float) -> datetime:
        return t0 + timedelta(minutes=minutes)

    record(db, mill, "FF-B5", inspector)  # fails as designed: to decide
    assert notices.make_messages(db, BASE, now=at(0)) == 1  # the first goes at once

    record(db, mill, "GF-B1-W", inspector, bearing_length=100.0)  # to decide
    record(db, wharf, "FF-B5", inspector)  # to decide, on the other site
    record(db, mill, "GF-B2-N", inspector, bearing_length=60.0)  # to decide ...
    assert notices.make_messages(db, BASE, now=at(5)) == 0  # ... all wait
    assert store.next_notice_due_at(db) == store.timestamp(at(15))
    # ... and this one is decided before its message goes: it is left out.
    b = bearing_named(db, mill, "GF-B2-N")
    services_decide(db, mill, b, eng.id)
    # Only the inspector hears now (of the remedial work: their first message); the
    # engineer's quarter hour is not over.
    assert notices.make_messages(db, BASE, now=at(14.9)) == 1
    assert notices.make_messages(db, BASE, now=at(15)) == 1
    assert notices.make_messages(db, BASE, now=at(16)) == 0  # nothing more waits

    server = LocalMailServer(port=app.config["MAIL"].port).start()
    try:
        assert mail.send_due(app.config["DB_PATH"], app.config["MAIL"], now=at(16)) == 3
        messages = server.inbox.wait_for(3)
    finally:
        server.stop()
    (remedial,) = to(messages, inspector)
    assert "Remedial work" in text_of(remedial) and "GF-B2-N" in text_of(remedial)
    first, second = to(messages, eng)
    assert "FF-B5" in text_of(first) and "GF-B1-W" not in text_of(first)
    later = text_of(second)
    assert second["Subject"] == "sitecheck: 2 bearings need you on 2 sites"
    # Grouped by site, each bearing under its own site's heading.
    assert later.index("Invented Mill") < later.index("GF-B1-W") < later.index("Invented Wharf")
    assert later.index("Invented Wharf") < later.index("FF-B5")
    assert "GF-B2-N" not in later
    dropped = db.execute(
        "SELECT count(*) FROM notices WHERE dropped_at IS NOT NULL AND mailed_at IS NULL"
    ).fetchone()[0]
    assert dropped == 1
    db.conn.close()


def services_decide(db, site, bearing, engineer_id):
    services.decide(
        db,
        site=site,
        bearing=bearing,
        kind="remedial",
        reason="Lengthen the bearing to the designed 150 mm with a new padstone.",
        engineer_id=engineer_id,
    )


def test_each_person_turns_each_kind_off_on_their_own_page(quiet_app):
    app = quiet_app
    db = store.open_db(app.config["DB_PATH"])
    made = make_people(db, "engineer", "inspector", "contractor", "viewer")
    site = invented_site(db, made)

    inspector = app.test_client()
    login(inspector, made["inspector"])
    page = inspector.get("/notices").data.decode()
    # Only the inspector's own kinds are offered, each on until turned off.
    assert 'value="measure-again" checked' in page and 'value="remedial" checked' in page
    assert 'value="to-decide"' not in page and 'value="releasable"' not in page
    r = inspector.post("/notices", data={"on": ["remedial"], "csrf_token": csrf_token(inspector)})
    assert r.status_code == 302
    assert 'value="measure-again" checked' not in inspector.get("/notices").data.decode()

    viewer = app.test_client()
    login(viewer, made["viewer"])
    assert "no role on any site that has notices" in viewer.get("/notices").data.decode()

    record(db, site, "FF-B5", made["inspector"])
    notices.make_messages(db, BASE)
    b = bearing_named(db, site, "FF-B5")
    services.decide(
        db,
        site=site,
        bearing=b,
        kind="measure-again",
        reason="The wall looks thinner than drawn.",
        engineer_id=made["engineer"].id,
    )
    notices.make_messages(db, BASE)
    mailed = db.execute(
        "SELECT o.to_addr, o.body FROM outgoing_mail o WHERE kind = 'notice'"
    ).fetchall()
    # The engineer heard of the bearing to decide; the inspector, who turned "measure
    # again" off, heard nothing of it.
    assert [to for to, _ in mailed] == [made["engineer"].email]
    assert store.notices_of(db, user_id=made["inspector"].id) == []
    assert "None yet." in inspector.get("/notices").data.decode()
    db.conn.close()


def test_a_notice_names_only_the_persons_own_sites():
    """The rule: a person hears of a site's bearings only through their role on it, and
    never of what they did themselves."""
    event = {
        "kind": "decision",
        "user_id": 1,
        "detail": {
            "kind": "accept",
            "reason": "Fine as built.",
            "before": {"state": "engineer to decide"},
            "after": {"state": "accepted"},
        },
    }
    members = [
        {"id": 1, "role": "engineer", "disabled": False},
        {"id": 2, "role": "contractor", "disabled": False},
        {"id": 3, "role": "contractor", "disabled": True},
        {"id": 4, "role": "inspector", "disabled": False},
        {"id": 5, "role": "viewer", "disabled": False},
    ]
    assert list(notices.notices_for_event(event, members)) == [(2, "releasable", "", 1)]
    back = {
        "kind": "record received",
        "user_id": 4,
        "detail": {"before": {"state": "accepted"}, "after": {"state": "engineer to decide"}},
    }
    assert list(notices.notices_for_event(back, members)) == [(1, "to-decide", "", 4)]
    # Already waiting for the engineer: a further record is not "newly" to decide.
    again = {
        "kind": "record received",
        "user_id": 4,
        "detail": {
            "before": {"state": "engineer to decide"},
            "after": {"state": "engineer to decide"},
        },
    }
    assert list(notices.notices_for_event(again, members)) == []


def test_evidence_recorded_after_a_release_is_news_for_the_engineer(quiet_app):
    """The release stands, but a record arriving for a released bearing puts it back in the
    engineer's hands: a notice, and the header's count, until the engineer answers it."""
    app = quiet_app
    db = store.open_db(app.config["DB_PATH"])
    made = make_people(db, "engineer", "inspector", "contractor")
    site = invented_site(db, made)
    record(db, site, "GF-B1-E", made["inspector"], hours=2)
    services.release(
        db,
        site=site,
        bearing=bearing_named(db, site, "GF-B1-E"),
        contractor_id=made["contractor"].id,
        contractor_name="Contractor",
        statement="Closed up.",
    )
    t0 = datetime.now(UTC)
    notices.make_messages(db, BASE, now=t0)  # the contractor's "releasable" goes, nothing else
    assert store.to_decide_counts(db, user_id=made["engineer"].id) == {
        "waiting": 0,
        "new": 0,
        "engineer": True,
    }

    record(db, site, "GF-B1-E", made["inspector"], hours=0.5, bearing_length=60.0)
    assert bearing_named(db, site, "GF-B1-E")["state"] == "released"
    assert notices.make_messages(db, BASE, now=t0 + timedelta(minutes=1)) == 1
    (to_addr, body) = db.execute(
        "SELECT to_addr, body FROM outgoing_mail WHERE kind = 'notice' ORDER BY id DESC LIMIT 1"
    ).fetchone()
    assert to_addr == made["engineer"].email and "GF-B1-E" in body
    assert store.to_decide_counts(db, user_id=made["engineer"].id) == {
        "waiting": 1,
        "new": 1,
        "engineer": True,
    }
    db.conn.close()


def test_switching_mail_on_later_mails_nothing_of_the_past(quiet_app, tmp_path):
    """Events from while no sender looked (mail off, or the demo builder) are not news: the
    first sender to look after a long gap starts from the newest event."""
    app = quiet_app
    db = store.open_db(app.config["DB_PATH"])
    people = make_people(db, "engineer")
    site = invented_site(db, people)
    inspector = people["engineer"]  # the engineer measures: no notice to themself
    t0 = datetime.now(UTC)
    assert notices.make_messages(db, BASE, now=t0) == 0
    record(db, site, "FF-B5", inspector)  # recorded by the engineer: no notice to themself
    # Eleven minutes on, with nobody looking meanwhile: the past is skipped.
    other = store.create_user(db, email="sam@example.test", name="Sam", password_hash="x" * 20)
    store.add_membership(
        db, user_id=other["id"], site_id=site["id"], role="engineer", invited_by=inspector.id
    )
    record(db, site, "GF-B1-W", inspector, bearing_length=120.0)
    assert notices.make_messages(db, BASE, now=t0 + timedelta(minutes=11)) == 0
    assert db.execute("SELECT count(*) FROM notices").fetchone()[0] == 0
    # From then on, as usual.
    record(db, site, "GF-B2-N", inspector, bearing_length=60.0)
    assert notices.make_messages(db, BASE, now=t0 + timedelta(minutes=12)) == 1
    (to_addr,) = db.execute("SELECT to_addr FROM outgoing_mail WHERE kind = 'notice'").fetchone()
    assert to_addr == "sam@example.test"
    db.conn.close()


def test_a_message_names_at_most_twenty_bearings_a_kind_and_links_to_the_rest():
    """A morning's records can put hundreds of bearings in one message: the first twenty
    are named, the rest counted, with the page that lists them all."""
    rows = [
        {
            "site_id": "s1",
            "site_name": "Invented Mill",
            "bearing_id": f"b{n}",
            "reference": f"B{n:03d}",
            "location": "",
            "kind": "to-decide",
            "role_now": "engineer",
            "passed": True,
            "utilisation": 0.95,
            "reasons": [],
            "state": "engineer to decide",
        }
        for n in range(25)
    ]
    subject, text, html = notices.compose({"user_name": "Esme"}, rows, BASE)
    assert subject == "sitecheck: 25 bearings need you on Invented Mill"
    assert "B019" in text and "B020" not in text
    assert f"- and 5 more, all listed at\n  {BASE}/review?site=s1" in text
    assert f'href="{BASE}/review?site=s1"' in html
