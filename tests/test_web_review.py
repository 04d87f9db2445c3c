"""The engineer's review pages: the queue, one bearing's design against as-built, decisions.

Real SQLite, the real app, a test client per person. Records are made through
services.record_as_built, as the sync API makes them.
"""

from __future__ import annotations

import re
import uuid

import pytest

from kit.review_steps import (
    SECOND_PASSWORD,
    bearing_named,
    decide_form,
    decision_url,
    fails_unmeasured,
    hidden,
    hours_ago,
    login,
    other_site_with_engineer,
    record,
    review_url,
    state_of,
)
from kit.web import csrf_token, new_site
from sitecheck import services, store
from sitecheck.bearing.remedy import remedy
from sitecheck.demo import schedule_csv

# --- the queue ----------------------------------------------------------------------------------


def test_queue_lists_only_bearings_to_decide_on_the_engineers_sites_most_serious_first(
    app, db, people, site, client_as
):
    ins = people["inspector"]
    record(db, site, "GF-B1-E", ins)  # within design: not in the queue
    record(db, site, "GF-B1-W", ins, bearing_length=100.0)  # shorter than designed
    record(db, site, "FF-B5", ins)  # fails as designed and as built
    assert state_of(db, site, "GF-B1-E") == "within design"
    assert state_of(db, site, "GF-B1-W") == state_of(db, site, "FF-B5") == "engineer to decide"

    other, second = other_site_with_engineer(db)

    data = client_as("engineer").get("/review.json").get_json()
    refs = [i["reference"] for i in data["items"]]
    assert refs == ["FF-B5", "GF-B1-W"]
    utils = [i["utilisation"] for i in data["items"]]
    assert utils == sorted(utils, reverse=True)
    first = data["items"][0]
    assert first["site_name"] == site["name"]
    assert first["blocking"] >= 1
    assert "fails as built" in first["first_reason"]
    assert first["waiting_since"].endswith("Z")

    html = client_as("engineer").get("/review").data.decode()
    assert html.index("FF-B5") < html.index("GF-B1-W")
    assert "GF-B1-E" not in html
    assert '<span aria-hidden="true">?</span> engineer to decide' in html
    assert first["first_reason"].split("(")[0].strip() in html

    # Each engineer sees only their own sites' bearings.
    assert {i["site_id"] for i in data["items"]} == {site["id"]}
    c = app.test_client()
    login(c, second.email, SECOND_PASSWORD)
    theirs = c.get("/review.json").get_json()["items"]
    assert [(i["site_id"], i["reference"]) for i in theirs] == [(other["id"], "FF-B5")]


@pytest.mark.parametrize("role", ["inspector", "contractor", "viewer", "outsider"])
def test_queue_for_someone_who_is_not_an_engineer_is_empty_and_says_why(
    db, people, site, client_as, role
):
    record(db, site, "FF-B5", people["inspector"])
    client = client_as(role)
    data = client.get("/review.json").get_json()
    assert data["items"] == []
    assert "Only a site's engineer decides" in data["sentence"]
    page = client.get("/review")
    assert page.status_code == 200
    assert b"Only a site&#39;s engineer decides" in page.data
    assert b"FF-B5" not in page.data


# --- one bearing --------------------------------------------------------------------------------


def test_review_page_sets_design_against_as_built_with_both_traces(db, people, site, client_as):
    record(db, site, "GF-B1-W", people["inspector"], bearing_length=100.0, notes="Beam cut short.")
    b = bearing_named(db, site, "GF-B1-W")
    client = client_as("engineer")

    data = client.get(review_url(site, b, json=True)).get_json()
    rows = {r["field"]: r for r in data["comparison"]}
    assert rows["bearing_length"]["design"] == 150.0
    assert rows["bearing_length"]["as_built"] == 100.0
    assert rows["bearing_length"]["difference"] == -50.0
    assert rows["bearing_length"]["changed"] is True
    assert rows["wall_thickness"]["changed"] is False
    assert data["design_result"]["checks"] and data["latest"]["result"]["checks"]
    assert data["latest"]["result"]["utilisation"] > data["design_result"]["utilisation"]
    assert "bearing-length-off" in {r["code"] for r in data["latest"]["reasons"]}
    assert {c["item"]: c["answer_text"] for c in data["checklist"]}["bedded"] == "yes"
    assert data["latest"]["notes"] == "Beam cut short."

    html = client.get(review_url(site, b)).data.decode()
    row = re.search(r'<tr data-field="bearing_length" class="is-changed">(.*?)</tr>', html, re.S)
    assert row, "the changed bearing length is marked"
    assert "150 mm" in row.group(1) and "100 mm" in row.group(1)
    assert '<td class="num changed">-50 mm</td>' in row.group(1)
    unchanged = re.search(r'<tr data-field="wall_thickness">(.*?)</tr>', html, re.S)
    assert unchanged and "changed" not in unchanged.group(1)
    assert html.count('<details class="trace"') == 2
    assert "Design (revision 1)" in html and "As built" in html
    assert 'data-code="bearing-length-off"' in html
    assert "Beam cut short." in html
    assert "Keep this decision" in html and data["may_decide"] is True
    assert 'style="' not in html and "<script>" not in html


@pytest.mark.parametrize("role", ["inspector", "contractor", "viewer"])
def test_people_who_do_not_decide_see_the_review_without_the_form(
    db, people, site, client_as, role
):
    record(db, site, "FF-B5", people["inspector"])
    b = bearing_named(db, site, "FF-B5")
    page = client_as(role).get(review_url(site, b))
    assert page.status_code == 200
    assert b"FF-B5" in page.data and b"Full calculation" in page.data
    assert b"Keep this decision" not in page.data
    assert client_as(role).get(review_url(site, b, json=True)).get_json()["may_decide"] is False


def test_every_record_is_shown_and_the_newest_by_measured_time_drives_the_state(
    db, people, site, client_as
):
    # Two people measured offline; the later measurement arrives first.
    newer = record(db, site, "GF-B1-W", people["inspector"], hours=2, bearing_length=100.0)
    older = record(db, site, "GF-B1-W", people["engineer"], hours=5)
    b = bearing_named(db, site, "GF-B1-W")
    assert b["state"] == "engineer to decide" and b["latest_record_uuid"] == newer

    data = client_as("engineer").get(review_url(site, b, json=True)).get_json()
    assert [r["uuid"] for r in data["records"]] == [newer, older]
    assert [r["drives_state"] for r in data["records"]] == [True, False]
    assert [r["inspector"] for r in data["records"]] == ["Ivo Inspector", "Esme Engineer"]
    assert data["latest"]["uuid"] == newer
    html = client_as("engineer").get(review_url(site, b)).data.decode()
    assert html.count("data-record=") == 2
    assert "● drives the state" in html


def test_a_record_against_an_older_design_revision_is_flagged(db, people, site, client_as):
    b = bearing_named(db, site, "GF-B1-E")
    services.revise_bearing(
        db,
        site=site,
        bearing=b,
        design=services.design_of(b),
        location="Ground floor, spine wall grid C-4 (moved)",
        user_id=people["engineer"].id,
    )
    assert bearing_named(db, site, "GF-B1-E")["revision"] == 2
    record(db, site, "GF-B1-E", people["inspector"], design_revision=1)
    b = bearing_named(db, site, "GF-B1-E")
    data = client_as("engineer").get(review_url(site, b, json=True)).get_json()
    assert data["records"][0]["older_revision"] is True
    assert "older-design-revision" in {r["code"] for r in data["latest"]["reasons"]}
    html = client_as("engineer").get(review_url(site, b)).data.decode()
    assert "older design revision (1)" in html
    assert "measured against design revision 1" in html


def test_photos_of_the_latest_record_are_listed(app, db, people, site, client_as):
    record_uuid = record(db, site, "GF-B1-W", people["inspector"], bearing_length=100.0)
    photo_uuid = str(uuid.uuid4())
    store.insert_photo(
        db,
        site_id=site["id"],
        uuid=photo_uuid,
        record_uuid=record_uuid,
        sha256="a" * 64,
        thumb_sha256="b" * 64,
        width=1600,
        height=1200,
        size_bytes=123_456,
        captured_at=hours_ago(1),
        gps_lat=None,
        gps_lon=None,
        user_id=people["inspector"].id,
    )
    b = bearing_named(db, site, "GF-B1-W")
    data = client_as("engineer").get(review_url(site, b, json=True)).get_json()
    assert [p["uuid"] for p in data["photos"]] == [photo_uuid]
    html = client_as("engineer").get(review_url(site, b)).data.decode()
    if "inspect.photo" in app.view_functions:
        assert data["photos"][0]["thumb_url"] in html and data["photos"][0]["display_url"] in html
    else:
        assert "1 photo kept with this record" in html


# --- decisions ----------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("kind", "state"),
    [("accept", "accepted"), ("remedial", "remedial"), ("measure-again", "awaiting survey")],
)
def test_a_decision_moves_the_state_and_writes_its_event(db, people, site, client_as, kind, state):
    record_uuid = record(db, site, "GF-B1-W", people["inspector"], bearing_length=120.0)
    b = bearing_named(db, site, "GF-B1-W")
    client = client_as("engineer")
    form = decide_form(client, site, b, kind=kind, reason="Looked at the photos and the trace.")
    assert form["record_uuid"] == record_uuid and form["seen_state"] == "engineer to decide"

    r = client.post(decision_url(site, b), data=form)
    assert r.status_code == 302
    # Nothing else waits for this engineer: back to the (empty) queue, saying so.
    assert r.headers["Location"] == "/review"
    assert state_of(db, site, "GF-B1-W") == state

    decisions = store.decisions_for(db, site_id=site["id"], bearing_id=b["id"])
    assert [(d["kind"], d["reason"], d["record_uuid"]) for d in decisions] == [
        (kind, "Looked at the photos and the trace.", record_uuid)
    ]
    event = store.events_for(db, site_id=site["id"], bearing_id=b["id"], limit=1)[0]
    assert event["kind"] == "decision" and event["user_id"] == people["engineer"].id
    assert event["detail"]["before"]["state"] == "engineer to decide"
    assert event["detail"]["after"]["state"] == state

    queue = client.get("/review").data.decode()
    assert f"Bearing GF-B1-W is now &#39;{state}&#39;." in queue
    assert "Nothing else waits for your decision now." in queue
    page = client.get(review_url(site, b)).data.decode()
    assert "Looked at the photos and the trace." in page
    history = client.get(review_url(site, b, json=True)).get_json()["history"]
    assert [(h["what"], h["who"]) for h in history] == [("decision", "Esme Engineer")]


@pytest.mark.parametrize(
    ("change", "field_error"),
    [
        ({"reason": ""}, "Write the reason for your decision"),
        ({"reason": "   fine   "}, "Write at least 10 characters"),
        ({"kind": ""}, "Choose a decision"),
        ({"kind": "close-up"}, "Choose a decision"),
    ],
)
def test_a_decision_without_a_proper_reason_or_kind_is_refused_and_nothing_is_kept(
    db, people, site, client_as, change, field_error
):
    record(db, site, "GF-B1-W", people["inspector"], bearing_length=100.0)
    b = bearing_named(db, site, "GF-B1-W")
    client = client_as("engineer")
    events_before = len(store.events_for(db, site_id=site["id"]))
    r = client.post(decision_url(site, b), data=decide_form(client, site, b) | change)
    assert r.status_code == 400
    assert field_error in r.data.decode()
    assert b'class="field-error"' in r.data
    assert store.decisions_for(db, site_id=site["id"], bearing_id=b["id"]) == []
    assert state_of(db, site, "GF-B1-W") == "engineer to decide"
    assert len(store.events_for(db, site_id=site["id"])) == events_before


def test_a_decision_on_a_record_that_is_no_longer_the_latest_is_refused(
    db, people, site, client_as
):
    first = record(db, site, "GF-B1-W", people["inspector"], hours=3, bearing_length=100.0)
    b = bearing_named(db, site, "GF-B1-W")
    client = client_as("engineer")
    form = decide_form(client, site, b, reason="The short bearing is acceptable here.")
    assert form["record_uuid"] == first

    # Meanwhile a newer measurement arrives, still for the engineer.
    newer = record(db, site, "GF-B1-W", people["inspector"], hours=1, bearing_length=90.0)
    r = client.post(decision_url(site, b), data=form)
    assert r.status_code == 409
    html = r.data.decode()
    assert "newer as-built record" in html
    assert store.decisions_for(db, site_id=site["id"], bearing_id=b["id"]) == []
    assert state_of(db, site, "GF-B1-W") == "engineer to decide"
    # The fresh page is about the new record, and the engineer's words are kept.
    assert hidden(r.data, "record_uuid") == newer
    assert "The short bearing is acceptable here." in html
    assert "90 mm" in html


def test_a_decision_after_the_state_moved_is_refused(db, people, site, client_as):
    record(db, site, "GF-B1-W", people["inspector"], bearing_length=120.0)
    b = bearing_named(db, site, "GF-B1-W")
    client = client_as("engineer")
    form = decide_form(client, site, b, kind="remedial", reason="Needs a longer bearing.")
    services.decide(
        db,
        site=site,
        bearing=b,
        kind="accept",
        reason="Accepted by phone call with the site.",
        engineer_id=people["engineer"].id,
    )
    r = client.post(decision_url(site, b), data=form)
    assert r.status_code == 409
    assert b"is now &#39;accepted&#39;" in r.data
    kinds = [d["kind"] for d in store.decisions_for(db, site_id=site["id"], bearing_id=b["id"])]
    assert kinds == ["accept"]


@pytest.mark.parametrize("role", ["inspector", "contractor", "viewer"])
def test_only_the_engineer_may_decide(db, people, site, client_as, role):
    record(db, site, "GF-B1-W", people["inspector"], bearing_length=100.0)
    b = bearing_named(db, site, "GF-B1-W")
    engineer_form = decide_form(client_as("engineer"), site, b)
    client = client_as(role)
    data = engineer_form | {"csrf_token": csrf_token(client)}
    r = client.post(decision_url(site, b), data=data)
    assert r.status_code == 403
    assert store.decisions_for(db, site_id=site["id"], bearing_id=b["id"]) == []
    refused = store.events_for(db, site_id=site["id"], limit=1)[0]
    assert refused["kind"] == "refused" and refused["detail"]["action"] == "decide"


def test_a_decision_without_csrf_is_refused_and_changes_nothing(db, people, site, client_as):
    record(db, site, "GF-B1-W", people["inspector"], bearing_length=100.0)
    b = bearing_named(db, site, "GF-B1-W")
    client = client_as("engineer")
    form = decide_form(client, site, b)
    del form["csrf_token"]
    r = client.post(decision_url(site, b), data=form)
    assert r.status_code == 400
    assert b"nothing was saved" in r.data
    assert store.decisions_for(db, site_id=site["id"], bearing_id=b["id"]) == []
    assert state_of(db, site, "GF-B1-W") == "engineer to decide"


def test_an_outsider_gets_404_on_every_review_route(db, people, site, client_as):
    record(db, site, "GF-B1-W", people["inspector"], bearing_length=100.0)
    b = bearing_named(db, site, "GF-B1-W")
    client = client_as("outsider")
    assert client.get(review_url(site, b)).status_code == 404
    assert client.get(review_url(site, b, json=True)).status_code == 404
    r = client.post(
        decision_url(site, b),
        data={"csrf_token": csrf_token(client), "kind": "accept", "reason": "x" * 20},
    )
    assert r.status_code == 404
    assert state_of(db, site, "GF-B1-W") == "engineer to decide"
    # Nor does a member reach a bearing through another site's address.
    other, _ = other_site_with_engineer(db)
    wrong = f"/sites/{other['id']}/bearings/{b['id']}/review"
    assert client_as("engineer").get(wrong).status_code == 404


def test_review_pages_ask_for_a_log_in(app, db, people, site):
    b = bearing_named(db, site, "GF-B1-W")
    anonymous = app.test_client()
    assert anonymous.get("/review").status_code == 302
    assert anonymous.get("/review.json").status_code == 401
    assert anonymous.get(review_url(site, b, json=True)).status_code == 401


def test_a_failing_as_built_shows_what_would_pass_and_a_passing_one_does_not(
    client_as, db, site, people
):
    ins = people["inspector"]
    record(db, site, "GF-B1-W", ins, bearing_length=60.0)  # far below the minimum bearing
    record(db, site, "GF-B1-E", ins)  # as designed
    short = bearing_named(db, site, "GF-B1-W")
    latest = store.get_record(db, site_id=site["id"], uuid=short["latest_record_uuid"])
    assert latest["passed"] is False
    # The same hint, in the same words, as the core gives for the merged as-built input.
    built = services.recheck(site, short, latest["measurements"], latest["checklist"]).as_built
    expected = remedy(built, services.basis_for(site)).describe()
    assert "mm passes" in expected
    html = client_as("engineer").get(review_url(site, short)).data.decode()
    hint = re.search(r"<p class=\"remedy-hint\" data-remedy-hint>(.*?)</p>", html, flags=re.S)
    assert hint and expected in hint.group(1)

    fine = bearing_named(db, site, "GF-B1-E")
    html = client_as("engineer").get(review_url(site, fine)).data.decode()
    assert "data-remedy-hint" not in html


# --- the queue in order of severity, its filters, and the next to decide ---------------------------


def test_queue_puts_failing_first_then_blocking_then_the_rest_and_the_failing_check_first(
    db, people, site, client_as
):
    ins = people["inspector"]
    record(db, site, "GF-B1-W", ins, bearing_length=120.0)  # passes, blocking reasons
    fails_unmeasured(db, site, "GF-B1-E", ins)  # fails as built
    record(db, site, "FF-B5", ins)  # fails, at a higher utilisation
    record(db, site, "GF-B2-N", ins)  # within design; released, then reopened
    services.release(
        db,
        site=site,
        bearing=bearing_named(db, site, "GF-B2-N"),
        contractor_id=people["contractor"].id,
        contractor_name="Cora Contractor",
        statement="Closed up.",
    )
    services.reopen(
        db,
        site=site,
        bearing=bearing_named(db, site, "GF-B2-N"),
        role="engineer",
        reason="The plasterer saw a crack.",
        engineer_id=people["engineer"].id,
    )
    data = client_as("engineer").get("/review.json").get_json()
    assert [(i["reference"], i["tier_words"]) for i in data["items"]] == [
        ("FF-B5", "fails as built"),
        ("GF-B1-E", "fails as built"),
        ("GF-B1-W", "blocking reasons"),
        ("GF-B2-N", "no blocking reason"),
    ]
    e = data["items"][1]
    stored = [
        r["code"]
        for r in store.get_record(
            db, site_id=site["id"], uuid=bearing_named(db, site, "GF-B1-E")["latest_record_uuid"]
        )["reasons"]
    ]
    assert stored[0] == "not-measured"  # the review found it first ...
    codes = [r["code"] for r in e["reasons"]]
    assert codes[0] == "check-fails" and codes.index("not-measured") > codes.index("check-fails")
    assert (
        "fails as built (utilisation" in e["first_reason"]
    )  # ... the queue leads with the failure
    assert sorted(codes) == sorted(stored)  # and hides none of them
    page = client_as("engineer").get("/review").data.decode()
    card = page.split(f'data-bearing="{e["bearing_id"]}"')[1].split("</li>\n  \n")[0]
    assert "more reasons" in card and "Not measured" in card


def test_queue_filters_by_site_and_reason(db, people, site, client_as):
    ins = people["inspector"]
    fails_unmeasured(db, site, "GF-B1-E", ins)
    record(db, site, "GF-B1-W", ins, bearing_length=120.0)
    engineer = client_as("engineer")
    other = new_site(db, name="Invented Wharf", created_by=people["engineer"].id)
    text = "\n".join(r for r in schedule_csv().splitlines() if "BS 5628-1" not in r) + "\n"
    assert services.import_schedule(db, site=other, text=text, user_id=people["engineer"].id).ok
    other = store.get_site(db, other["id"])
    record(db, other, "FF-B5", people["engineer"])

    def refs(query: str) -> list[str]:
        return [i["reference"] for i in engineer.get(f"/review.json{query}").get_json()["items"]]

    assert refs("") == ["FF-B5", "GF-B1-E", "GF-B1-W"]
    assert refs(f"?site={other['id']}") == ["FF-B5"]
    assert refs("?reason=not-measured") == ["GF-B1-E"]
    assert refs(f"?site={site['id']}&reason=check-fails") == ["GF-B1-E"]
    data = engineer.get("/review.json?reason=cracks").get_json()
    assert (
        data["items"] == []
        and data["sentence"] == "No bearing waiting for you matches these filters."
    )
    reasons = {o["value"]: (o["label"], o["count"]) for o in data["reason_options"]}
    assert reasons["check-fails"] == ("A check fails as built", 2)
    sites = {o["label"]: o["count"] for o in data["site_options"]}
    assert sites == {site["name"]: 2, "Invented Wharf": 1}
    page = engineer.get(f"/review?site={other['id']}").data.decode()
    assert f'<option value="{other["id"]}" selected>' in page


def test_after_a_decision_the_next_to_decide_opens_within_the_same_filters(
    db, people, site, client_as
):
    ins = people["inspector"]
    fails_unmeasured(db, site, "GF-B1-E", ins)
    record(db, site, "FF-B5", ins)
    record(db, site, "GF-B1-W", ins, bearing_length=120.0)  # not failing: outside the filter
    engineer = client_as("engineer")
    query = "?reason=check-fails"
    first = engineer.get(f"/review.json{query}").get_json()["items"][0]
    assert first["reference"] == "FF-B5"
    b = bearing_named(db, site, "FF-B5")
    page = engineer.get(review_url(site, b) + query)
    form = {
        "csrf_token": hidden(page.data, "csrf_token"),
        "record_uuid": hidden(page.data, "record_uuid"),
        "seen_state": hidden(page.data, "seen_state"),
        "kind": "remedial",
        "reason": "Replace the padstone with a 440 long one.",
    }
    assert f'action="{decision_url(site, b)}?reason=check-fails"' in page.data.decode()
    r = engineer.post(decision_url(site, b) + query, data=form)
    nxt = bearing_named(db, site, "GF-B1-E")
    assert r.headers["Location"] == review_url(site, nxt) + query
    shown = engineer.get(r.headers["Location"]).data.decode()
    assert "Next to decide: GF-B1-E" in shown

    form = decide_form(engineer, site, nxt, kind="measure-again", reason="Measure a1 please.")
    r = engineer.post(decision_url(site, nxt) + query, data=form)
    assert r.headers["Location"] == "/review" + query
    assert "Nothing else waits for your decision with these filters now." in (
        engineer.get(r.headers["Location"]).data.decode()
    )


# --- accepting a bearing that fails as built ---------------------------------------------------------


def test_accepting_a_failing_bearing_needs_its_confirmation_and_a_full_sentence(
    db, people, site, client_as
):
    fails_unmeasured(db, site, "GF-B1-E", people["inspector"])
    b = bearing_named(db, site, "GF-B1-E")
    engineer = client_as("engineer")
    data = engineer.get(review_url(site, b, json=True)).get_json()
    failing = data["failing"]
    latest = data["latest"]
    assert failing["check"] == latest["result"]["governing"]
    assert failing["utilisation"] == latest["utilisation"] > 1
    title, shown = failing["title"], f"{failing['utilisation']:.2f}"
    page = engineer.get(review_url(site, b)).data.decode()
    assert f"I accept GF-B1-E although {title} fails as built with utilisation {shown}." in page
    assert "a full sentence: at least 8 words, ending with a full stop" in page

    sentence = "The wall below is solid brick, checked by hand on site today."
    attempts = [
        ({"reason": sentence}, "confirm_failing", "tick the confirmation"),
        (
            {"reason": "Fine as it is, I checked.", "confirm_failing": "y"},
            "reason",
            "you wrote 6 words",
        ),
        (
            {"reason": sentence[:-1], "confirm_failing": "y"},
            "reason",
            "End the reason with a full stop",
        ),
    ]
    for change, field, says in attempts:
        form = decide_form(engineer, site, b, kind="accept") | change
        r = engineer.post(decision_url(site, b), data=form)
        assert r.status_code == 400, change
        html = r.data.decode()
        assert re.search(f'data-error-for="{field}">[^<]*{says}', html), says
        assert change["reason"] in html  # nothing typed is lost
        assert store.decisions_for(db, site_id=site["id"], bearing_id=b["id"]) == []

    form = decide_form(engineer, site, b, kind="accept", reason=sentence) | {"confirm_failing": "y"}
    assert engineer.post(decision_url(site, b), data=form).status_code == 302
    (d,) = store.decisions_for(db, site_id=site["id"], bearing_id=b["id"])
    assert d["engineer_name"] == "Esme Engineer"
    assert d["accepted_failing"] == failing
    said = f"Accepted although it fails: {title}, utilisation {shown}"
    history = engineer.get(review_url(site, b, json=True)).get_json()["history"]
    assert [(h["title"], h["who"], h["text"]) for h in history] == [
        (said, "Esme Engineer", sentence)
    ]
    site_history = engineer.get(f"/sites/{site['id']}/history").data.decode()
    assert said.lower() in site_history


def test_accepting_a_bearing_that_passes_asks_for_no_confirmation(db, people, site, client_as):
    record(db, site, "GF-B1-W", people["inspector"], bearing_length=120.0)
    b = bearing_named(db, site, "GF-B1-W")
    engineer = client_as("engineer")
    assert engineer.get(review_url(site, b, json=True)).get_json()["failing"] is None
    assert "although" not in engineer.get(review_url(site, b)).data.decode()
    form = decide_form(engineer, site, b, kind="accept", reason="Short but fine.")
    assert engineer.post(decision_url(site, b), data=form).status_code == 302
    (d,) = store.decisions_for(db, site_id=site["id"], bearing_id=b["id"])
    assert d["accepted_failing"] is None and d["engineer_name"] == "Esme Engineer"
