"""Release for closing up (the hold point), reopening, and the site's history pages."""

from __future__ import annotations

import sqlite3

import pytest

from kit.release_steps import (
    STATEMENT,
    accepted,
    history_url,
    kinds_of_events,
    release_form,
    release_url,
    released,
    reopen_url,
)
from kit.review_steps import (
    bearing_named,
    decide_form,
    decision_url,
    other_site_with_engineer,
    record,
    review_url,
    state_of,
)
from kit.web import csrf_token
from sitecheck import services, store

# --- the release page ---------------------------------------------------------------------------


def test_the_release_page_sorts_bearings_by_whether_they_may_be_closed_up(
    db, people, site, client_as
):
    record(db, site, "GF-B1-E", people["inspector"])  # within design
    acc = accepted(db, site, people)
    record(db, site, "FF-B5", people["inspector"])  # engineer to decide
    client = client_as("contractor")
    data = client.get(release_url(site, json=True)).get_json()
    assert {b["reference"] for b in data["ready"]} == {"GF-B1-E", "GF-B1-W"}
    waiting = {b["reference"]: b for b in data["waiting"]}
    assert "GF-B1-E" not in waiting and "GF-B1-W" not in waiting
    assert waiting["FF-B5"]["reason"] == (
        "Bearing FF-B5 is 'engineer to decide': the engineer has not decided yet."
    )
    assert waiting["GF-L1"]["state"] == "awaiting survey"
    assert data["released"] == [] and data["may_release"] is True

    html = client.get(release_url(site)).data.decode()
    assert f'name="bearings" value="{acc["id"]}"' in html
    assert "The bearing has been inspected and may be closed up." in html  # the default
    assert "the engineer has not decided yet." in html
    # Everyone on the site sees the list; only the contractor gets the boxes.
    for role in ("engineer", "inspector", "viewer"):
        page = client_as(role).get(release_url(site))
        assert page.status_code == 200
        assert b'name="bearings"' not in page.data and b"GF-B1-W" in page.data


def test_the_contractor_releases_a_within_design_and_an_accepted_bearing(
    db, people, site, client_as
):
    record(db, site, "GF-B1-E", people["inspector"])
    within = bearing_named(db, site, "GF-B1-E")
    acc = accepted(db, site, people)
    client = client_as("contractor")

    r = client.post(release_url(site), data=release_form(client, within["id"], acc["id"]))
    assert r.status_code == 200
    assert "Released for closing up: GF-B1-E, GF-B1-W." in r.data.decode()
    assert state_of(db, site, "GF-B1-E") == state_of(db, site, "GF-B1-W") == "released"
    for b in (within, acc):
        (row,) = store.releases_for(db, site_id=site["id"], bearing_id=b["id"])
        assert row["contractor_id"] == people["contractor"].id
        assert row["contractor_name"] == "Cora Contractor" and row["statement"] == STATEMENT
        assert row["record_uuid"] == b["latest_record_uuid"]
        assert kinds_of_events(db, site, b)[0] == "release"

    data = client.get(release_url(site, json=True)).get_json()
    assert data["ready"] == []
    assert {(b["reference"], b["signed_as"], b["by"]) for b in data["released"]} == {
        ("GF-B1-E", "Cora Contractor", "Cora Contractor"),
        ("GF-B1-W", "Cora Contractor", "Cora Contractor"),
    }


def test_a_bearing_not_ready_is_refused_with_its_reason_and_the_others_still_released(
    db, people, site, client_as
):
    record(db, site, "GF-B1-E", people["inspector"])
    within = bearing_named(db, site, "GF-B1-E")
    record(db, site, "FF-B5", people["inspector"])
    to_decide = bearing_named(db, site, "FF-B5")
    client = client_as("contractor")

    r = client.post(release_url(site), data=release_form(client, within["id"], to_decide["id"]))
    assert r.status_code == 200  # partly done is still done; the page says which
    html = r.data.decode()
    assert "Released for closing up: GF-B1-E." in html
    assert "Not released (1)" in html
    assert (
        "Bearing FF-B5 is &#39;engineer to decide&#39;: the engineer has not decided yet." in html
    )
    assert state_of(db, site, "GF-B1-E") == "released"
    assert state_of(db, site, "FF-B5") == "engineer to decide"
    assert store.releases_for(db, site_id=site["id"], bearing_id=to_decide["id"]) == []
    refusal = store.events_for(db, site_id=site["id"], bearing_id=to_decide["id"], limit=1)[0]
    assert refusal["kind"] == "release refused"
    assert refusal["user_id"] == people["contractor"].id
    assert refusal["detail"]["state"] == "engineer to decide"

    # Only refusals: nothing was released at all.
    again = client.post(release_url(site, json=True), data=release_form(client, to_decide["id"]))
    assert again.status_code == 409
    assert again.get_json()["outcome"] == {
        "released": [],
        "refused": [
            {
                "id": to_decide["id"],
                "reference": "FF-B5",
                "reason": "Bearing FF-B5 is 'engineer to decide': the engineer has not decided yet.",
            }
        ],
    }


@pytest.mark.parametrize(
    ("change", "message"),
    [
        ({"contractor_name": "  "}, "Write your name"),
        ({"statement": ""}, "Write the statement"),
        ({"bearings": []}, "Tick at least one bearing"),
    ],
)
def test_a_release_without_a_name_statement_or_bearing_is_refused_whole(
    db, people, site, client_as, change, message
):
    record(db, site, "GF-B1-E", people["inspector"])
    within = bearing_named(db, site, "GF-B1-E")
    client = client_as("contractor")
    r = client.post(release_url(site), data=release_form(client, within["id"]) | change)
    assert r.status_code == 400
    assert message in r.data.decode()
    assert state_of(db, site, "GF-B1-E") == "within design"
    assert store.releases_for(db, site_id=site["id"], bearing_id=within["id"]) == []


@pytest.mark.parametrize("role", ["engineer", "inspector", "viewer"])
def test_only_the_contractor_may_release(db, people, site, client_as, role):
    record(db, site, "GF-B1-E", people["inspector"])
    within = bearing_named(db, site, "GF-B1-E")
    client = client_as(role)
    r = client.post(release_url(site), data=release_form(client, within["id"]))
    assert r.status_code == 403
    assert state_of(db, site, "GF-B1-E") == "within design"
    assert store.releases_for(db, site_id=site["id"], bearing_id=within["id"]) == []
    refused = store.events_for(db, site_id=site["id"], limit=1)[0]
    assert refused["kind"] == "refused" and refused["detail"]["action"] == "release"


def test_a_bearing_id_from_another_site_stops_the_whole_release(db, people, site, client_as):
    record(db, site, "GF-B1-E", people["inspector"])
    within = bearing_named(db, site, "GF-B1-E")
    other, _ = other_site_with_engineer(db)
    foreign = bearing_named(db, other, "GF-B1-E")
    client = client_as("contractor")
    r = client.post(release_url(site), data=release_form(client, within["id"], foreign["id"]))
    assert r.status_code == 404
    assert state_of(db, site, "GF-B1-E") == "within design"
    assert store.releases_for(db, site_id=site["id"], bearing_id=within["id"]) == []


def test_a_release_without_csrf_is_refused_and_changes_nothing(db, people, site, client_as):
    record(db, site, "GF-B1-E", people["inspector"])
    within = bearing_named(db, site, "GF-B1-E")
    client = client_as("contractor")
    form = release_form(client, within["id"])
    del form["csrf_token"]
    r = client.post(release_url(site), data=form)
    assert r.status_code == 400
    assert state_of(db, site, "GF-B1-E") == "within design"
    assert store.releases_for(db, site_id=site["id"], bearing_id=within["id"]) == []


# --- locked once released -----------------------------------------------------------------------


def test_a_released_bearing_is_locked_even_against_direct_sql(db, people, site, client_as):
    b = released(db, site, people)
    with pytest.raises(sqlite3.IntegrityError, match="released and locked"):
        db.execute("UPDATE bearings SET state = 'accepted' WHERE id = ?", [b["id"]])
    assert state_of(db, site, "GF-B1-E") == "released"


def test_a_decision_on_a_released_bearing_is_refused(db, people, site, client_as):
    record(db, site, "GF-B1-E", people["inspector"])
    b = bearing_named(db, site, "GF-B1-E")
    engineer = client_as("engineer")
    form = decide_form(engineer, site, b, kind="remedial", reason="Wants a longer padstone.")
    services.release(
        db,
        site=site,
        bearing=b,
        contractor_id=people["contractor"].id,
        contractor_name="Cora Contractor",
        statement=STATEMENT,
    )
    r = engineer.post(decision_url(site, b), data=form)
    assert r.status_code == 409
    assert b"released and locked" in r.data
    assert store.decisions_for(db, site_id=site["id"], bearing_id=b["id"]) == []
    assert state_of(db, site, "GF-B1-E") == "released"
    # The page of a released bearing offers no decision, only (to the engineer) a reopening.
    page = engineer.get(review_url(site, b)).data
    assert b"Keep this decision" not in page and b"Reopen this bearing" in page


def test_a_record_arriving_after_release_is_kept_as_late_and_moves_nothing(
    db, people, site, client_as
):
    b = released(db, site, people)
    late = record(db, site, "GF-B1-E", people["inspector"], hours=0.1, bearing_length=90.0)
    assert state_of(db, site, "GF-B1-E") == "released"
    data = client_as("engineer").get(review_url(site, b, json=True)).get_json()
    flagged = {r["uuid"]: r for r in data["records"]}[late]
    assert flagged["late"] is True and flagged["drives_state"] is False
    assert "⚠ recorded after release" in client_as("engineer").get(review_url(site, b)).text


# --- reopening ----------------------------------------------------------------------------------


def test_the_engineer_reopens_with_a_reason_and_both_stay_on_record(db, people, site, client_as):
    b = released(db, site, people)
    client = client_as("engineer")
    r = client.post(
        reopen_url(site, b),
        data={"csrf_token": csrf_token(client), "reason": "Crack found above the padstone."},
    )
    assert r.status_code == 302 and r.headers["Location"].endswith(review_url(site, b))
    assert state_of(db, site, "GF-B1-E") == "engineer to decide"
    assert len(store.releases_for(db, site_id=site["id"], bearing_id=b["id"])) == 1
    (reopening,) = store.reopenings_for(db, site_id=site["id"], bearing_id=b["id"])
    assert reopening["reason"] == "Crack found above the padstone."
    assert kinds_of_events(db, site, b)[:2] == ["reopening", "release"]

    page = client.get(review_url(site, b))
    assert b"is reopened and now &#39;engineer to decide&#39;" in page.data
    history = client.get(review_url(site, b, json=True)).get_json()["history"]
    assert [h["what"] for h in history] == ["reopening", "release"]
    assert history[0]["text"] == "Crack found above the padstone."
    assert b"Keep this decision" in page.data  # back with the engineer
    queue = client.get("/review.json").get_json()["items"]
    assert [i["reference"] for i in queue] == ["GF-B1-E"]


@pytest.mark.parametrize("reason", ["", "too short"])
def test_a_reopening_needs_a_written_reason(db, people, site, client_as, reason):
    b = released(db, site, people)
    client = client_as("engineer")
    r = client.post(reopen_url(site, b), data={"csrf_token": csrf_token(client), "reason": reason})
    assert r.status_code == 400
    assert b"reason" in r.data and b'class="field-error"' in r.data
    assert state_of(db, site, "GF-B1-E") == "released"
    assert store.reopenings_for(db, site_id=site["id"], bearing_id=b["id"]) == []


def test_reopening_a_bearing_that_is_not_released_is_refused_plainly(db, people, site, client_as):
    record(db, site, "GF-B1-E", people["inspector"])
    b = bearing_named(db, site, "GF-B1-E")
    client = client_as("engineer")
    r = client.post(
        reopen_url(site, b),
        data={"csrf_token": csrf_token(client), "reason": "Wanted to look again."},
    )
    assert r.status_code == 409
    assert "Only a released bearing can be reopened; GF-B1-E is &#39;within design&#39;." in r.text
    assert state_of(db, site, "GF-B1-E") == "within design"
    assert store.reopenings_for(db, site_id=site["id"], bearing_id=b["id"]) == []


@pytest.mark.parametrize("role", ["contractor", "inspector", "viewer"])
def test_only_the_engineer_may_reopen(db, people, site, client_as, role):
    b = released(db, site, people)
    client = client_as(role)
    r = client.post(
        reopen_url(site, b),
        data={"csrf_token": csrf_token(client), "reason": "Please let us change it."},
    )
    assert r.status_code == 403
    assert state_of(db, site, "GF-B1-E") == "released"
    assert store.reopenings_for(db, site_id=site["id"], bearing_id=b["id"]) == []


def test_a_reopening_without_csrf_changes_nothing(db, people, site, client_as):
    b = released(db, site, people)
    r = client_as("engineer").post(reopen_url(site, b), data={"reason": "Crack found on site."})
    assert r.status_code == 400
    assert state_of(db, site, "GF-B1-E") == "released"


# --- history ------------------------------------------------------------------------------------


def test_the_site_history_shows_who_did_what_newest_first(db, people, site, client_as):
    b = released(db, site, people)
    client = client_as("viewer")
    data = client.get(history_url(site, json=True)).get_json()
    events = data["events"]
    assert [e["id"] for e in events] == sorted((e["id"] for e in events), reverse=True)
    newest = events[0]
    assert newest["what"] == "release" and newest["who"] == "Cora Contractor"
    assert newest["bearing"] == "GF-B1-E" and newest["bearing_id"] == b["id"]
    assert (newest["state_before"], newest["state_after"]) == ("within design", "released")
    assert newest["at"].endswith("Z")
    assert "statement: " + STATEMENT in newest["notes"]
    assert data["pager"] == {
        "page": 1,
        "per_page": 200,
        "has_next": False,
        "next": None,
        "previous": None,
    }

    html = client.get(history_url(site)).text
    row = html[html.index(f'data-event="{newest["id"]}"') :]
    row = row[: row.index("data-event=", 1)]
    assert "Cora Contractor" in row and "GF-B1-E" in row and " UTC" in row
    assert '<span aria-hidden="true">✓</span> within design' in row
    assert '<span aria-hidden="true">■</span> released' in row
    assert newest["at"][:10] in row
    assert len(events) == html.count("data-event=")


def test_the_history_pages_by_two_hundred(db, people, site, client_as):
    for n in range(205):
        store.add_event(db, kind="note for paging", site_id=site["id"], detail={"n": n})
    total = len(store.events_for(db, site_id=site["id"]))
    client = client_as("engineer")
    first = client.get(history_url(site, json=True)).get_json()
    assert len(first["events"]) == 200 and first["pager"]["has_next"] is True
    assert first["events"][0]["detail"] == {"n": 204}
    second = client.get(first["pager"]["next"]).get_json()
    assert len(second["events"]) == total - 200 and second["pager"]["has_next"] is False
    assert second["pager"]["previous"].endswith("history.json?page=1")
    assert first["events"][-1]["id"] > second["events"][0]["id"]
    assert b'rel="next"' in client.get(history_url(site)).data
    assert client.get(history_url(site) + "?page=9").status_code == 404


# --- who may reach what --------------------------------------------------------------------------


def test_an_outsider_gets_404_on_every_release_route(db, people, site, client_as):
    b = released(db, site, people)
    other = bearing_named(db, site, "GF-B1-W")
    client = client_as("outsider")
    token = csrf_token(client)
    for url in (
        release_url(site),
        release_url(site, True),
        history_url(site),
        history_url(site, True),
    ):
        assert client.get(url).status_code == 404, url
    r = client.post(release_url(site), data=release_form(client, other["id"]))
    assert r.status_code == 404
    r = client.post(reopen_url(site, b), data={"csrf_token": token, "reason": "x" * 20})
    assert r.status_code == 404
    assert state_of(db, site, "GF-B1-E") == "released"


def test_the_json_pages_carry_what_the_html_pages_show(db, people, site, client_as):
    released(db, site, people)
    accepted(db, site, people)
    client = client_as("contractor")
    data = client.get(release_url(site, json=True)).get_json()
    html = client.get(release_url(site)).text
    for group in ("ready", "waiting", "released"):
        for b in data[group]:
            assert f'data-bearing="{b["id"]}"' in html or f'value="{b["id"]}"' in html
            assert b["reference"] in html
    assert "caution" in data and "form" not in data


# --- the next step on the release list --------------------------------------------------------------


def test_the_confirmation_appears_only_once_the_release_form_is_complete(
    db, people, site, client_as
):
    b = accepted(db, site, people)
    contractor = client_as("contractor")
    # Incomplete: the errors, and no confirmation step.
    r = contractor.post(
        release_url(site), data=release_form(contractor, b["id"], name="", confirmed="")
    )
    assert r.status_code == 400
    assert "Write your name" in r.data.decode() and "data-confirm-release" not in r.data.decode()
    # Complete: what will be signed, to confirm; nothing released yet.
    r = contractor.post(release_url(site), data=release_form(contractor, b["id"], confirmed=""))
    assert r.status_code == 200
    html = r.data.decode()
    step = html.split("data-confirm-release")[1].split("</section>")[0]
    assert "GF-B1-W" in step and "Cora Contractor" in step and STATEMENT in step
    assert 'name="confirmed" value="yes"' in step
    assert state_of(db, site, "GF-B1-W") == "accepted"
    assert store.releases_for(db, site_id=site["id"], bearing_id=b["id"]) == []
    data = contractor.post(
        release_url(site, json=True), data=release_form(contractor, b["id"], confirmed="")
    ).get_json()
    assert data["confirm"]["bearings"] == [{"id": b["id"], "reference": "GF-B1-W"}]
    # Signed from the confirmation step: released.
    r = contractor.post(release_url(site), data=release_form(contractor, b["id"]))
    assert r.status_code == 200 and state_of(db, site, "GF-B1-W") == "released"
    # The page script's own "are you sure" is gone: the step above replaces it.
    assert "data-confirm=" not in contractor.get(release_url(site)).data.decode()


def test_a_bearing_not_yet_releasable_says_why_who_must_act_and_the_engineers_words(
    db, people, site, client_as
):
    eng = people["engineer"].id
    record(db, site, "GF-B1-W", people["inspector"], bearing_length=120.0)
    remedial_words = "Take out the 60 mm packing and bed a 440 x 215 x 140 padstone in M6."
    services.decide(
        db,
        site=site,
        bearing=bearing_named(db, site, "GF-B1-W"),
        kind="remedial",
        reason=remedial_words,
        engineer_id=eng,
        engineer_name="Esme Engineer",
    )
    record(db, site, "GF-B2-N", people["inspector"], bearing_length=120.0)
    again_words = "The wall looks like 100 mm block, not 215 mm: measure it at the bearing."
    services.decide(
        db,
        site=site,
        bearing=bearing_named(db, site, "GF-B2-N"),
        kind="measure-again",
        reason=again_words,
        engineer_id=eng,
    )
    record(db, site, "FF-B5", people["inspector"])  # waits for the engineer
    accept_words = "Load test on site passed; the bearing is adequate as it stands."
    record(db, site, "GF-B1-E", people["inspector"], bearing_length=120.0)
    services.decide(
        db,
        site=site,
        bearing=bearing_named(db, site, "GF-B1-E"),
        kind="accept",
        reason=accept_words,
        engineer_id=eng,
        engineer_name="Esme Engineer",
    )
    data = client_as("contractor").get(release_url(site, json=True)).get_json()
    waiting = {w["reference"]: w for w in data["waiting"]}
    assert waiting["GF-B1-W"]["who_acts"] == "contractor"
    assert waiting["GF-B1-W"]["next_step"] == (
        "The contractor does the remedial work; then the inspector measures it again."
    )
    assert waiting["GF-B1-W"]["engineer_words"]["text"] == remedial_words
    assert waiting["GF-B1-W"]["engineer_words"]["title"] == "Remedial work"
    assert waiting["GF-B1-W"]["engineer_words"]["by"] == "Esme Engineer"
    assert waiting["GF-B2-N"]["who_acts"] == "inspector"
    assert waiting["GF-B2-N"]["reason"] == (
        "Bearing GF-B2-N is 'awaiting survey': the engineer asked for it to be measured again."
    )
    assert waiting["GF-B2-N"]["engineer_words"]["text"] == again_words
    # Signed by the account's name where the decision kept none.
    assert waiting["GF-B2-N"]["engineer_words"]["by"] == "Esme Engineer"
    assert waiting["FF-B5"]["who_acts"] == "engineer"
    assert waiting["FF-B5"]["next_step"] == "The engineer decides on it."
    assert waiting["FF-B5"]["engineer_words"] is None
    never = [
        w
        for w in data["waiting"]
        if w["state"] == "awaiting survey" and w["reference"] != "GF-B2-N"
    ]
    assert never and all(w["engineer_words"] is None for w in never)
    (ready,) = data["ready"]
    assert ready["engineer_words"]["text"] == accept_words
    html = client_as("contractor").get(release_url(site)).data.decode()
    assert remedial_words in html and again_words in html and accept_words in html
    assert "then the inspector measures it again" in html
