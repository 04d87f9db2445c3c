"""The engineer's screens: new site, schedule, bearing page and form, import, settings,
members; who may see and do what on each. Real app, real SQLite files.

Every site, person, load and size here is invented for the tests.
"""

from __future__ import annotations

import csv
import io
import re
import uuid
from html import unescape

import pytest
from flask import url_for
from markupsafe import escape
from werkzeug.datastructures import FileStorage
from werkzeug.test import encode_multipart

from kit.schedule_rows import schedule_row
from kit.web import csrf_token, post
from sitecheck import credentials, services, store, workflow
from sitecheck.bearing import SOURCES, basis_from_dict
from sitecheck.bearing.review import settings_from_dict
from sitecheck.schedule import DESIGN_COLUMNS, parse_schedule

# An invented bearing that passes at design: a 133 mm flange on a 440 × 215 × 140 plain
# padstone on a 215 mm aggregate concrete block wall.
GOOD = {
    "reference": "T-1",
    "location": "Test wall, grid A-1",
    "reaction_kN": "40",
    "wall_load_kN_per_m": "",
    "member": "beam",
    "orientation": "across",
    "flange_width": "133",
    "bearing_length": "150",
    "reaction_at": "centroid",
    "offset_along": "",
    "offset_across": "",
    "padstone": "yes",
    "padstone_length": "440",
    "padstone_width": "215",
    "padstone_depth": "140",
    "padstone_concrete": "C25/30",
    "padstone_f_ck": "",
    "padstone_reinforced": "plain",
    "wall_thickness": "215",
    "height_to_bearing": "2475",
    "clear_height": "",
    "effective_height": "",
    "effective_thickness": "",
    "a1": "",
    "a2": "",
    "unit_material": "aggregate concrete",
    "unit_group": "1",
    "unit_strength": "7.3",
    "unit_height": "215",
    "unit_width": "215",
    "conditioning": "air-dried",
    "mortar": "M4",
    "f_k": "",
    "unit_category": "I",
    "execution_class": "2",
    "manufacturing_control": "normal",
    "construction_control": "normal",
    "gamma_M": "",
    "bearing_type": "1",
    "e_mk": "",
    "phi_m": "",
    "beta_s": "",
}


# --- helpers ------------------------------------------------------------------------------------


def post_large(client, url, fields):
    """POST a large multipart body built in memory (the test client would spool it to a
    temporary file it never closes)."""
    boundary, body = encode_multipart({**fields, "csrf_token": csrf_token(client)})
    return client.post(url, data=body, content_type=f"multipart/form-data; boundary={boundary}")


def counts(db) -> dict[str, int]:
    return {
        t: db[t].count
        for t in ("sites", "bearings", "bearing_revisions", "memberships", "users", "events")
    }


def field_errors(html: bytes, name: str) -> list[str]:
    return [
        m.decode()
        for m in re.findall(rb'id="' + name.encode() + rb'-error-\d+">(.*?)</p>', html, re.S)
    ]


def all_error_fields(html: bytes) -> set[str]:
    return {m.decode() for m in re.findall(rb'id="([\w]+)-error-\d+"', html)}


def a_bearing(db, site) -> dict:
    return store.list_bearings(db, site_id=site["id"])[0]


def schedule_text(rows: list[dict[str, str]]) -> str:
    out = io.StringIO()
    writer = csv.DictWriter(out, fieldnames=list(DESIGN_COLUMNS), lineterminator="\n")
    writer.writeheader()
    writer.writerows(rows)
    return out.getvalue()


def measure_as_designed(db, site, bearing, inspector_id) -> None:
    services.record_as_built(
        db,
        site=site,
        bearing=bearing,
        uuid=str(uuid.uuid4()),
        measured_at="2026-03-02T09:30:00Z",
        design_revision=bearing["revision"],
        measurements={
            "bearing_length": 150.0,
            "padstone_present": True,
            "padstone_length": 440.0,
            "padstone_width": 215.0,
            "padstone_depth": 140.0,
            "wall_thickness": 215.0,
            "masonry_group": 1,
        },
        checklist={
            "bedded": True,
            "packing": 0.0,
            "cracks": False,
            "cut_units": False,
            "level": True,
        },
        notes="",
        inspector_id=inspector_id,
    )


def release_it(db, site, people, reference: str) -> dict:
    """Measure a bearing as designed, accept it if the engineer must decide, release it."""
    bearing = store.bearing_by_reference(db, site_id=site["id"], reference=reference)
    measure_as_designed(db, site, bearing, people["inspector"].id)
    bearing = store.get_bearing(db, site_id=site["id"], bearing_id=bearing["id"])
    if bearing["state"] != workflow.WITHIN_DESIGN:
        services.decide(
            db,
            site=site,
            bearing=bearing,
            kind="accept",
            reason="Invented: accepted as built.",
            engineer_id=people["engineer"].id,
        )
        bearing = store.get_bearing(db, site_id=site["id"], bearing_id=bearing["id"])
    services.release(
        db,
        site=site,
        bearing=bearing,
        contractor_id=people["contractor"].id,
        contractor_name=people["contractor"].name,
        statement="Invented: released for closing up.",
    )
    return store.get_bearing(db, site_id=site["id"], bearing_id=bearing["id"])


# --- routes, roles and CSRF ---------------------------------------------------------------------


def _routes(site_id: str, bearing_id: str, user_id: int):
    """(method, url, action) for every route of the blueprint on one site."""
    s = f"/sites/{site_id}"
    b = f"{s}/bearings/{bearing_id}"
    return [
        ("GET", s, "view"),
        ("GET", s + ".json", "view"),
        ("GET", b, "view"),
        ("GET", b + ".json", "view"),
        ("GET", f"{s}/members", "view"),
        ("GET", f"{s}/members.json", "view"),
        ("GET", f"{s}/settings", "edit-site"),
        ("GET", f"{s}/settings.json", "edit-site"),
        ("POST", f"{s}/settings", "edit-site"),
        ("GET", f"{s}/bearings/new", "edit-schedule"),
        ("POST", f"{s}/bearings/new", "edit-schedule"),
        ("GET", f"{b}/revise", "edit-schedule"),
        ("POST", f"{b}/revise", "edit-schedule"),
        ("GET", f"{s}/import", "edit-schedule"),
        ("POST", f"{s}/import", "edit-schedule"),
        ("GET", f"{s}/import/template.csv", "edit-schedule"),
        ("POST", f"{s}/members/invite", "invite"),
        ("POST", f"{s}/members/{user_id}/role", "invite"),
        ("POST", f"{s}/members/{user_id}/remove", "invite"),
    ]


def test_an_outsider_gets_404_on_every_route_and_so_does_an_unknown_id(client_as, db, site, people):
    c = client_as("outsider")
    bearing = a_bearing(db, site)
    before = counts(db)
    for method, url, _action in _routes(site["id"], bearing["id"], people["inspector"].id):
        r = c.get(url) if method == "GET" else post(c, url, {"role": "viewer"})
        assert r.status_code == 404, (method, url, r.status_code)
        assert site["name"].encode() not in r.data
    assert counts(db) == before

    engineer = client_as("engineer")
    assert engineer.get("/sites/no-such-site").status_code == 404
    assert engineer.get(f"/sites/{site['id']}/bearings/no-such-bearing").status_code == 404
    assert engineer.get(f"/sites/{site['id']}/bearings/no-such-bearing/revise").status_code == 404


def test_other_roles_are_refused_the_engineers_pages_and_posts(client_as, db, site, people):
    bearing = a_bearing(db, site)
    target = people["inspector"].id
    before = store.members_of(db, site_id=site["id"]), store.list_bearings(db, site_id=site["id"])
    data = {**GOOD, "reference": "X-9", "role": "viewer", "email": "new@example.test"}
    for role in ("viewer", "inspector", "contractor"):
        c = client_as(role)
        refused = 0
        for method, url, action in _routes(site["id"], bearing["id"], target):
            if workflow.allowed(role, action):
                assert c.get(url).status_code == 200, (role, url)
                continue
            r = c.get(url) if method == "GET" else post(c, url, data)
            assert r.status_code == 403, (role, method, url, r.status_code)
            assert b"may not" in r.data
            refused += 1
        events = [
            e
            for e in store.events_for(db, site_id=site["id"])
            if e["kind"] == "refused" and e["user_id"] == people[role].id
        ]
        assert len(events) == refused and {e["detail"]["role"] for e in events} == {role}
    after = store.members_of(db, site_id=site["id"]), store.list_bearings(db, site_id=site["id"])
    assert after == before


def test_a_post_without_its_csrf_token_is_refused_and_changes_nothing(client_as, db, site, people):
    c = client_as("engineer")
    bearing = a_bearing(db, site)
    before = counts(db)
    s = f"/sites/{site['id']}"
    posts = [
        ("/sites/new", {"name": "Invented site", "basis": "EC6 + UK NA"}),
        (f"{s}/settings", {"name": "Renamed", "alpha_cc": "1.0"}),
        (f"{s}/bearings/new", {**GOOD, "reference": "NO-TOKEN"}),
        (f"{s}/bearings/{bearing['id']}/revise", {**GOOD, "reaction_kN": "99"}),
        (f"{s}/import", {"text": schedule_text([schedule_row("NO-TOKEN-1")])}),
        (f"{s}/members/invite", {"email": "someone@example.test", "role": "viewer"}),
        (f"{s}/members/{people['inspector'].id}/role", {"role": "viewer"}),
        (f"{s}/members/{people['inspector'].id}/remove", {}),
    ]
    for url, data in posts:
        r = c.post(url, data=data)
        assert r.status_code == 400, url
        assert b"nothing was saved" in r.data
    assert counts(db) == before
    assert store.get_site(db, site["id"])["name"] == site["name"]


def test_log_in_is_needed(app, site):
    c = app.test_client()
    r = c.get(f"/sites/{site['id']}")
    assert r.status_code == 302 and "/login" in r.headers["Location"]
    assert c.get(f"/sites/{site['id']}.json").status_code == 401
    assert c.get("/sites/new").status_code == 302


# --- new site ----------------------------------------------------------------------------------


def test_a_new_site_makes_its_creator_the_engineer(client_as, db, people):
    # An account on no site, given the permission to make sites.
    store.set_may_make_sites(db, user_id=people["outsider"].id, allowed=True, by_user_id=None)
    c = client_as("outsider")
    assert c.get("/sites/new").status_code == 200
    before = counts(db)
    r = post(c, "/sites/new", {"name": "  ", "basis": "EC6 + UK NA"})
    assert r.status_code == 400
    assert field_errors(r.data, "name") == ["✗ Give the site a name."]
    r = post(c, "/sites/new", {"name": "Invented Mill", "basis": "BS 8000"})
    assert r.status_code == 400 and field_errors(r.data, "basis")
    assert b'value="Invented Mill"' in r.data  # what was typed is kept
    assert counts(db) == before

    r = post(
        c,
        "/sites/new",
        {"name": "Invented Mill, east range", "address": "1 Invented Lane", "basis": "BS 5628-1"},
    )
    assert r.status_code == 302
    site_id = r.headers["Location"].rsplit("/", 1)[-1]
    assert store.role_of(db, user_id=people["outsider"].id, site_id=site_id) == "engineer"
    site = store.get_site(db, site_id)
    assert site["code_basis"]["name"] == "BS 5628-1"
    assert basis_from_dict(site["code_basis"]).name == "BS 5628-1"
    page = c.get(r.headers["Location"])
    assert page.status_code == 200
    assert b"Invented Mill, east range" in page.data and b"No bearings yet" in page.data


def test_only_an_account_that_may_make_sites_sees_new_site_or_may_make_one(
    client_as, db, site, people
):
    """Before: any logged-in account made a site, became its engineer and invited people."""
    for role in ("viewer", "inspector", "contractor", "outsider"):
        c = client_as(role)
        home = c.get("/")
        assert home.status_code == 200 and b"New site" not in home.data, role
        assert b"/sites/new" not in home.data and b"/may-make-sites" not in home.data
        before = counts(db)
        assert c.get("/sites/new").status_code == 403
        r = post(c, "/sites/new", {"name": "A site of my own", "basis": "EC6 + UK NA"})
        assert r.status_code == 403
        assert b"may not make sites" in r.data
        assert counts(db) == before | {"events": before["events"] + 2}  # the two refusals
        assert c.get("/may-make-sites").status_code == 403
        assert post(c, f"/may-make-sites/{people[role].id}", {"allowed": "yes"}).status_code == 403
    refused = [
        e for e in store.events_for_user(db, user_id=people["viewer"].id) if e["kind"] == "refused"
    ]
    assert {e["detail"]["action"] for e in refused} == {"make-sites"}
    assert store.get_user_by_id(db, people["viewer"].id)["may_make_sites"] is False

    engineer = client_as("engineer").get("/")
    assert b"New site" in engineer.data and b"Who may make sites" in engineer.data


def test_an_account_that_may_make_sites_gives_it_and_takes_it_away(client_as, db, site, people):
    c = client_as("engineer")
    page = c.get("/may-make-sites")
    assert page.status_code == 200
    for role in ("engineer", "inspector", "contractor", "viewer"):
        assert people[role].name.encode() in page.data
    assert people["outsider"].name.encode() not in page.data  # on none of the engineer's sites
    assert b"@example.test" not in page.data  # names and sites, not e-mail addresses
    assert str(escape(f"{site['name']} (viewer)")).encode() in page.data

    viewer = people["viewer"].id
    r = post(c, f"/may-make-sites/{viewer}", {"allowed": "yes"})
    assert r.status_code == 302
    assert store.get_user_by_id(db, viewer)["may_make_sites"] is True
    assert client_as("viewer").get("/sites/new").status_code == 200
    r = post(c, f"/may-make-sites/{viewer}", {"allowed": "no"})
    assert r.status_code == 302
    assert client_as("viewer").get("/sites/new").status_code == 403

    kinds = [e["kind"] for e in store.events_for_user(db, user_id=people["engineer"].id)]
    assert "may make sites given" in kinds and "may make sites taken away" in kinds
    before = counts(db)
    r = post(c, f"/may-make-sites/{people['outsider'].id}", {"allowed": "yes"})
    assert r.status_code == 404 and b"not on any of your sites" in r.data
    r = post(c, f"/may-make-sites/{people['engineer'].id}", {"allowed": "no"})
    assert r.status_code == 409 and b"cannot take this from yourself" in r.data
    assert post(c, f"/may-make-sites/{viewer}", {"allowed": "maybe"}).status_code == 400
    assert counts(db) == before
    assert store.get_user_by_id(db, people["outsider"].id)["may_make_sites"] is False


# --- the site page -----------------------------------------------------------------------------


def test_the_schedule_page_for_each_role(client_as, db, site, people):
    measured = store.bearing_by_reference(db, site_id=site["id"], reference="GF-B1-E")
    measure_as_designed(db, site, measured, people["inspector"].id)
    record = store.records_for_bearing(db, site_id=site["id"], bearing_id=measured["id"])[0]
    bearings = store.list_bearings(db, site_id=site["id"])
    for role in ("engineer", "inspector", "contractor", "viewer"):
        c = client_as(role)
        r = c.get(f"/sites/{site['id']}")
        assert r.status_code == 200
        for b in bearings:
            assert f'data-reference="{b["reference"]}"'.encode() in r.data
        assert b'<span aria-hidden="true">\xe2\x97\x8b</span> awaiting survey' in r.data
        for link in (b"/bearings/new", b"/import", b"/settings"):
            assert (link in r.data) == (role == "engineer"), (role, link)
        assert f"/sites/{site['id']}/members".encode() in r.data

        data = c.get(f"/sites/{site['id']}.json").get_json()
        assert data["role"] == role and "caution" in data
        assert len(data["bearings"]) == len(bearings)
        assert sum(data["counts"].values()) == len(bearings)
        assert data["counts"]["awaiting survey"] == len(bearings) - 1
        rows = {b["reference"]: b for b in data["bearings"]}
        row = rows["GF-B1-E"]
        assert row["design_utilisation"] == pytest.approx(measured["design_utilisation"])
        assert row["governing_title"]
        assert row["latest"]["utilisation"] == pytest.approx(record["utilisation"])
        assert all(b["latest"] is None for ref, b in rows.items() if ref != "GF-B1-E")


def test_links_to_other_jobs_show_only_to_who_may_use_them(app, client_as, db, site):
    # The site page builds every link with url_for and checks for no endpoint first: a
    # renamed page makes this page fail here, not hide its button.
    bearing = store.list_bearings(db, site_id=site["id"])[0]
    with app.test_request_context():
        record = url_for("inspect.record_form", site_id=site["id"], bearing_id=bearing["id"])
        release = url_for("release.site", site_id=site["id"])
    record, release = record.encode(), release.encode()
    inspector = client_as("inspector").get(f"/sites/{site['id']}")
    assert record in inspector.data and release not in inspector.data
    contractor = client_as("contractor").get(f"/sites/{site['id']}")
    assert release in contractor.data and record not in contractor.data
    assert b"Release for closing up" in contractor.data


def test_pages_carry_no_inline_script_or_style_and_carry_the_caution(client_as, db, site):
    c = client_as("engineer")
    bearing = a_bearing(db, site)
    s = f"/sites/{site['id']}"
    for url in (
        "/sites/new",
        s,
        f"{s}/bearings/{bearing['id']}",
        f"{s}/bearings/new",
        f"{s}/bearings/{bearing['id']}/revise",
        f"{s}/import",
        f"{s}/settings",
        f"{s}/members",
    ):
        html = c.get(url).data
        assert b" style=" not in html and b"<style" not in html, url
        assert re.search(rb"<script(?![^>]*\bsrc=)", html) is None, url
        assert b" onclick=" not in html, url
        assert b'class="caution"' in html, url


# --- the bearing page --------------------------------------------------------------------------


def test_the_bearing_page_shows_design_records_decisions_and_history(client_as, db, site, people):
    bearing = store.bearing_by_reference(db, site_id=site["id"], reference="GF-B1-E")
    measure_as_designed(db, site, bearing, people["inspector"].id)
    bearing = store.get_bearing(db, site_id=site["id"], bearing_id=bearing["id"])
    services.decide(
        db,
        site=site,
        bearing=bearing,
        kind="accept",
        reason="Invented reason: as built matches the design.",
        engineer_id=people["engineer"].id,
    )
    url = f"/sites/{site['id']}/bearings/{bearing['id']}"
    r = client_as("viewer").get(url)
    assert r.status_code == 200
    html = r.data.decode()
    assert "Bearing GF-B1-E" in html and "design revision 1" in html
    assert "62 kN" in html  # the stored 62 000 N shown in kN
    assert "440 × 215 × 140 mm" in html
    assert "Full calculation" in html and 'data-check="' in html
    assert people["inspector"].name in html
    assert "Invented reason: as built matches the design." in html
    assert "bearing added" in html and people["engineer"].name in html
    assert re.search(r"\d{4}-\d\d-\d\d \d\d:\d\d UTC", html)
    assert "Revise design" not in html  # a viewer may not

    data = client_as("engineer").get(url + ".json").get_json()
    assert data["bearing"]["reference"] == "GF-B1-E" and data["bearing"]["revision"] == 1
    assert data["result"]["governing"] == bearing["design_governing"]
    record = data["records"][0]
    assert record["inspector"] == people["inspector"].name
    assert record["measured_at"].startswith("2026-03-02T09:30:00")
    assert record["older_revision"] is False and record["late"] is False
    assert record["blocking"] == 0 or bearing["state"] == workflow.ENGINEER_TO_DECIDE
    assert data["decisions"][0]["kind"] == "accept"
    assert data["decisions"][0]["engineer"] == people["engineer"].name
    kinds = [e["kind"] for e in data["events"]]
    assert {"bearing added", "record received", "decision"} <= set(kinds)
    assert all(e["by"] and e["at"].endswith("Z") for e in data["events"])


# --- the bearing form --------------------------------------------------------------------------


def test_adding_a_bearing_by_form_checks_it_at_once(client_as, db, site, people):
    c = client_as("engineer")
    url = f"/sites/{site['id']}/bearings/new"
    assert c.get(url).status_code == 200
    r = post(c, url, GOOD)
    assert r.status_code == 302, all_error_fields(r.data)
    stored = store.bearing_by_reference(db, site_id=site["id"], reference="T-1", with_result=True)
    assert r.headers["Location"].endswith(f"/bearings/{stored['id']}")
    assert stored["design_input"]["load"]["reaction"] == pytest.approx(40_000.0)  # kN → N
    assert stored["design_input"]["padstone"]["length"] == 440.0
    assert stored["design_result"]["checks"] and stored["revision"] == 1
    assert stored["created_by"] == people["engineer"].id
    page = c.get(r.headers["Location"])
    verdict = "✓ Passes at design" if stored["design_passed"] else "✗ Fails at design"
    assert verdict in page.data.decode()

    no_pad = GOOD | {
        "reference": "T-NOPAD",
        "padstone": "none",
        "padstone_length": "",
        "padstone_width": "",
        "padstone_depth": "",
        "bearing_length": "100",
    }
    assert post(c, url, no_pad).status_code == 302
    stored = store.bearing_by_reference(db, site_id=site["id"], reference="T-NOPAD")
    assert stored["design_input"]["padstone"] is None


BAD_INPUT = [
    # (what is typed, the field the error must be on, words of the error)
    ({"reaction_kN": ""}, "reaction_kN", "Required: enter the ULS end reaction in kN."),
    (
        {"reaction_kN": "-5"},
        "reaction_kN",
        "“-5” is not accepted; expected a positive end reaction.",
    ),
    (
        {"flange_width": "abc"},
        "flange_width",
        "“abc” is not a number; expected a number in mm, e.g. 215.",
    ),
    ({"flange_width": "1_33"}, "flange_width", "without underscores: write 133"),
    ({"flange_width": "133 mm"}, "flange_width", "without the unit: write 133"),
    ({"wall_thickness": "0.215"}, "wall_thickness", "looks like metres: did you mean 215 mm?"),
    (
        {"bearing_length": "250"},
        "bearing_length",
        "no longer than the padstone it sits on (215 mm)",
    ),
    ({"padstone_depth": "-140"}, "padstone_depth", "a positive length"),
    ({"unit_strength": "7,3"}, "unit_strength", "with a decimal point: write 7.3"),
    ({"reference": "GF-B1-E"}, "reference", "already used on this site"),
    ({"padstone": "none"}, "padstone", "no padstone but gave padstone sizes"),
    # Refused by the check itself rather than by input_errors: a unit size in a blank
    # cell of EN 772-1 Table A.1 (40 mm high, 215 mm wide).
    ({"unit_height": "40"}, "unit_width", "blank cell"),
]


def test_bad_bearing_input_is_refused_on_its_field_and_stores_nothing(client_as, db, site):
    c = client_as("engineer")
    before = counts(db)
    for typed, field, words in BAD_INPUT:
        r = post(c, f"/sites/{site['id']}/bearings/new", GOOD | typed)
        assert r.status_code == 400, typed
        errors = field_errors(r.data, field)
        assert errors and words in errors[0], (typed, errors)
        assert all_error_fields(r.data) == {field}, typed
        assert b"Nothing was saved." in r.data and b'aria-invalid="true"' in r.data
        shown = _form_values(r.data)
        assert all(shown[name] == value for name, value in typed.items()), typed  # kept
    assert counts(db) == before


def test_the_bearing_form_reads_numbers_as_the_schedule_does(client_as, db, site):
    """One reader for the form and the CSV (bearing/typed.py): a reaction in kN becomes N by
    moving the decimal point, so 1.005 kN is 1005 N from either (1.005 × 1000 in binary
    floating point is 1004.9999999999999, IEEE 754 double arithmetic); thousands read with a
    decimal point; a refusal in the summary names the field's label, the text and the fix."""
    c = client_as("engineer")
    url = f"/sites/{site['id']}/bearings/new"
    assert 1.005 * 1000 != 1005.0
    typed = {"reference": "T-KN", "reaction_kN": "1.005", "bearing_length": "1,50.0"}
    r = post(c, url, GOOD | typed)
    assert r.status_code == 400
    (error,) = field_errors(r.data, "bearing_length")
    assert "“1,50.0” has commas" in error and "1,234.5 or 1234.5" in error
    summary = r.data.decode().split('id="problems"', 1)[1].split("</div>", 1)[0]
    assert "Bearing length l_b (mm)</a>: “1,50.0” has commas;" in summary
    assert post(c, url, GOOD | typed | {"bearing_length": " 150 "}).status_code == 302
    stored = store.bearing_by_reference(db, site_id=site["id"], reference="T-KN")
    assert stored["design_input"]["load"]["reaction"] == 1005.0
    (row,) = parse_schedule(schedule_text([schedule_row("T-KN", reaction_kN="1.005")])).rows
    assert row.design.load.reaction == 1005.0


def test_an_empty_bearing_form_names_every_missing_value(client_as, db, site):
    c = client_as("engineer")
    before = counts(db)
    r = post(c, f"/sites/{site['id']}/bearings/new", {k: "" for k in GOOD})
    assert r.status_code == 400
    assert {
        "reference",
        "reaction_kN",
        "flange_width",
        "bearing_length",
        "padstone_length",
        "padstone_width",
        "padstone_depth",
        "wall_thickness",
        "height_to_bearing",
    } <= all_error_fields(r.data)
    assert counts(db) == before


def _form_values(html: bytes) -> dict[str, str]:
    """What a browser would send back from a rendered form, unchanged."""
    data = {}
    for tag in re.findall(rb"<input\b[^>]*>", html):
        attrs = {k.decode(): v.decode() for k, v in re.findall(rb'([\w-]+)="([^"]*)"', tag)}
        name, kind = attrs.get("name"), attrs.get("type")
        if not name or name == "csrf_token":
            continue
        if kind in ("text", "hidden", "email"):
            data[name] = attrs.get("value", "")
        elif kind == "checkbox" and re.search(rb"\bchecked\b", tag):
            data[name] = "y"
    for name, body in re.findall(rb'<select[^>]*name="(\w+)"[^>]*>(.*?)</select>', html, re.S):
        chosen = re.search(rb'<option selected value="([^"]*)"', body)
        data[name.decode()] = chosen.group(1).decode()
    return data


def input_value(html: bytes, name: str) -> str | None:
    return _form_values(html).get(name)


def test_revising_a_bearing_makes_a_new_checked_revision(client_as, db, site):
    c = client_as("engineer")
    bearing = store.bearing_by_reference(
        db, site_id=site["id"], reference="GF-B1-E", with_result=True
    )
    url = f"/sites/{site['id']}/bearings/{bearing['id']}/revise"
    form = c.get(url)
    assert form.status_code == 200
    assert input_value(form.data, "reaction_kN") == "62"  # N shown back as kN
    assert b'name="reference"' not in form.data  # the reference stays
    data = _form_values(form.data) | {"reaction_kN": "70"}
    r = post(c, url, data)
    assert r.status_code == 302, all_error_fields(r.data)
    revised = store.get_bearing(db, site_id=site["id"], bearing_id=bearing["id"], with_result=True)
    assert revised["revision"] == 2
    assert revised["design_input"]["load"]["reaction"] == pytest.approx(70_000.0)
    assert revised["design_input"]["padstone"] == bearing["design_input"]["padstone"]
    assert revised["design_input"]["masonry"] == bearing["design_input"]["masonry"]
    demand = {c["code"]: c["demand"] for c in bearing["design_result"]["checks"]}
    pressure = next(
        c for c in revised["design_result"]["checks"] if c["unit"] == "N/mm²" and c["demand"]
    )
    assert pressure["demand"] / demand[pressure["code"]] == pytest.approx(70 / 62)
    assert len(store.bearing_revisions(db, site_id=site["id"], bearing_id=bearing["id"])) == 2

    stale = post(c, url, data)  # the same form again, still saying revision 1
    assert stale.status_code == 409 and b"revised by someone else" in stale.data
    assert store.get_bearing(db, site_id=site["id"], bearing_id=bearing["id"])["revision"] == 2


def test_a_released_bearing_cannot_be_revised(client_as, db, site, people):
    bearing = release_it(db, site, people, "GF-B1-E")
    c = client_as("engineer")
    url = f"/sites/{site['id']}/bearings/{bearing['id']}/revise"
    page = c.get(url)
    assert page.status_code == 200 and b"locked" in page.data
    before = counts(db)
    r = post(c, url, _form_values(page.data) | {"reaction_kN": "30"})
    assert r.status_code == 409
    assert b"Nothing was saved" in r.data and b"released bearing is locked" in r.data
    assert counts(db) == before
    assert store.get_bearing(db, site_id=site["id"], bearing_id=bearing["id"])["revision"] == 1


# --- the schedule import -----------------------------------------------------------------------


def test_a_good_schedule_imports_every_bearing_with_its_design_result(client_as, db, site):
    c = client_as("engineer")
    url = f"/sites/{site['id']}/import"
    assert c.get(url).status_code == 200
    text = schedule_text([schedule_row(f"IMP-{i}") for i in range(1, 4)])
    r = post(c, url, {"file": (io.BytesIO(text.encode()), "schedule.csv")})
    assert r.status_code == 200
    assert "✓ 3 bearings added".encode() in r.data
    for i in range(1, 4):
        b = store.bearing_by_reference(
            db, site_id=site["id"], reference=f"IMP-{i}", with_result=True
        )
        assert b is not None and b["design_result"]["checks"]
        assert b["design_input"]["load"]["reaction"] == pytest.approx(40_000.0)


def test_one_bad_row_imports_nothing_unless_the_good_rows_are_asked_for(client_as, db, site):
    c = client_as("engineer")
    url = f"/sites/{site['id']}/import"
    before = counts(db)
    rows = [
        schedule_row("IMP-1"),
        schedule_row("IMP-2", wall_thickness="abc"),
        schedule_row("IMP-3"),
    ]
    r = post(c, url, {"text": schedule_text(rows)})
    assert r.status_code == 400
    assert b"Nothing was imported." in r.data
    refused = re.findall(rb'data-row="(\d+)" data-column="(\w+)"', r.data)
    assert refused == [(b"3", b"wall_thickness")]  # the header is row 1
    assert b"a number in mm" in r.data and b'<td data-label="Value">abc</td>' in r.data
    assert counts(db) == before

    r = post(c, url, {"text": schedule_text(rows), "keep_good_rows": "y"})
    assert r.status_code == 200
    assert "✓ 2 bearings added".encode() in r.data
    assert re.findall(rb'data-row="(\d+)" data-column="(\w+)"', r.data) == refused
    refs = {b["reference"] for b in store.list_bearings(db, site_id=site["id"])}
    assert {"IMP-1", "IMP-3"} <= refs and "IMP-2" not in refs


def test_an_oversize_schedule_is_refused_with_the_limit(client_as, db, site):
    c = client_as("engineer")
    before = counts(db)
    big = schedule_text([schedule_row("BIG-1")]).encode() + b"," * (2 * 1024 * 1024)
    url = f"/sites/{site['id']}/import"
    upload = FileStorage(io.BytesIO(big), filename="big.csv", content_type="text/csv")
    with post_large(c, url, {"file": upload}) as r:
        assert r.status_code == 413
        assert "The file is larger than 2 MB" in field_errors(r.data, "file")[0]
        assert b"nothing was imported" in r.data
    # Pasted into the page's form (multipart), the server's form-field limit answers first.
    pasted = {"text": "reference\n" + "x" * (1024 * 1024 + 10)}
    with post_large(c, url, pasted) as r:
        assert r.status_code == 413 and b"up to 2 MB" in r.data and b"1 MB" in r.data
    # Sent any other way, the import's own limit does.
    pasted = {"text": "reference\n" + "x" * (2 * 1024 * 1024 + 10)}
    with post(c, url, pasted) as r:
        assert r.status_code == 413
        assert "The pasted text is larger than 2 MB" in field_errors(r.data, "text")[0]
    assert counts(db) == before


def test_an_import_needs_a_file_or_text_and_reads_windows_spreadsheets(client_as, db, site):
    c = client_as("engineer")
    url = f"/sites/{site['id']}/import"
    r = post(c, url, {})
    assert r.status_code == 400 and "Choose a CSV file" in field_errors(r.data, "file")[0]
    text = schedule_text([schedule_row("WIN-1", location="Lintel over door, 2° off square")])
    r = post(c, url, {"file": (io.BytesIO(text.encode("cp1252")), "schedule.csv")})
    assert r.status_code == 200
    b = store.bearing_by_reference(db, site_id=site["id"], reference="WIN-1")
    assert b["location"] == "Lintel over door, 2° off square"


def test_the_template_csv_has_the_schedule_columns_and_imports_once_filled(client_as, db, site):
    c = client_as("engineer")
    r = c.get(f"/sites/{site['id']}/import/template.csv")
    assert r.status_code == 200 and r.mimetype == "text/csv"
    assert "attachment" in r.headers["Content-Disposition"]
    header = r.data.decode().strip().split(",")
    assert header == list(DESIGN_COLUMNS)
    filled = r.data.decode() + ",".join(schedule_row("TPL-1").get(c, "") for c in header) + "\r\n"
    r = post(c, f"/sites/{site['id']}/import", {"file": (io.BytesIO(filled.encode()), "t.csv")})
    assert r.status_code == 200
    assert store.bearing_by_reference(db, site_id=site["id"], reference="TPL-1")


# --- site settings -----------------------------------------------------------------------------


def test_the_settings_page_shows_every_value_with_its_source(client_as, site):
    c = client_as("engineer")
    r = c.get(f"/sites/{site['id']}/settings")
    assert r.status_code == 200
    html = r.data.decode()
    for name, source in SOURCES.items():
        assert str(escape(source)) in html, name
        assert f'data-setting="{name}"' in html, name
    memory = [n for n, s in SOURCES.items() if "[M]" in s]
    review_memory = 2  # the wall thickness tolerances, EN 1996-2 [M]
    assert html.count("⚠ From memory:") == len(memory) + review_memory
    shown = _form_values(r.data)
    assert shown["alpha_cc"] == "0.85" and shown["k_clay_1_general"] == "0.5"
    assert shown["threshold"] == "0.9" and shown["k_clay_4_thin_layer"] == ""
    data = c.get(f"/sites/{site['id']}/settings.json").get_json()
    assert data["code_basis"]["alpha_cc"] == 0.85
    assert data["sources"]["k_values"]["tag"][0] == "M"


def test_changed_settings_are_stored_and_used_by_the_next_bearing(client_as, db, site):
    c = client_as("engineer")
    url = f"/sites/{site['id']}/settings"
    data = _form_values(c.get(url).data)
    data |= {
        "alpha_cc": "1.0",
        "alpha_cc_pl": "0.8",
        "plain_partial_area_enhancement": "y",
        "k_clay_1_general": "0.6",
        "threshold": "0.8",
    }
    r = post(c, url, data)
    assert r.status_code == 302, all_error_fields(r.data)
    saved = store.get_site(db, site["id"])
    basis = basis_from_dict(saved["code_basis"])  # what was stored reads back
    review = settings_from_dict(saved["review_settings"])
    assert basis.alpha_cc == 1.0 and basis.k_value("clay", 1, "general") == 0.6
    assert basis.k_value("clay", 2, "general") == 0.40  # untouched rows keep their values
    assert basis.k_value("clay", 4, "thin-layer") is None  # and empty cells stay empty
    assert basis.gamma_M_for(2, "I") == 2.7 and basis.name == site["code_basis"]["name"]
    assert basis.spreader_route_for_groups_2_to_4 is False
    assert basis.alpha_cc_pl == 0.8 and basis.plain_partial_area_enhancement is True
    assert review.threshold == 0.8 and review.required == services.settings_for(site).required
    kinds = [e["kind"] for e in store.events_for(db, site_id=site["id"])]
    assert "site settings changed" in kinds

    clay = GOOD | {
        "reference": "CLAY-1",
        "unit_material": "clay",
        "unit_strength": "20",
        "unit_height": "65",
        "unit_width": "102.5",
    }
    r = post(c, f"/sites/{site['id']}/bearings/new", clay)
    assert r.status_code == 302, all_error_fields(r.data)
    stored = store.bearing_by_reference(
        db, site_id=site["id"], reference="CLAY-1", with_result=True
    )
    strengths = stored["design_result"]["strengths"]
    # The padstone is plain: f_cd,pl = α_cc,pl f_ck / γ_c (EN 1992-1-1 12.3.1 with eqn 3.15):
    # C25/30 with the site's α_cc,pl = 0.8, γ_c = 1.5.
    assert strengths["f_cd"] == pytest.approx(0.8 * 25 / 1.5)
    reinforced = GOOD | {"reference": "R-1", "padstone_reinforced": "reinforced"}
    r = post(c, f"/sites/{site['id']}/bearings/new", reinforced)
    assert r.status_code == 302, all_error_fields(r.data)
    stored_r = store.bearing_by_reference(db, site_id=site["id"], reference="R-1", with_result=True)
    # Reinforced: f_cd = α_cc f_ck / γ_c, EN 1992-1-1 eqn 3.15, with α_cc = 1.0.
    assert stored_r["design_result"]["strengths"]["f_cd"] == pytest.approx(1.0 * 25 / 1.5)
    assert stored_r["design_input"]["padstone"]["reinforced"] is True
    # f_k = K f_b^0.7 f_m^0.3, EN 1996-1-1 eqn 3.1, is in proportion to K: 0.6 here
    # against the default 0.50 for clay Group 1 (UK NA, from memory).
    default = services.add_bearing(
        db,
        site={**site, "code_basis": services.default_site_settings()[0]},
        reference="CLAY-DEFAULT",
        location="",
        design=services.design_of(stored),
        user_id=stored["created_by"],
    )
    default_fk = store.get_bearing(
        db, site_id=site["id"], bearing_id=default["id"], with_result=True
    )["design_result"]["strengths"]["f_k"]
    assert strengths["f_k"] / default_fk == pytest.approx(0.6 / 0.5)


BAD_SETTINGS = [
    ("alpha_cc", "abc", "“abc” is not a number; expected a number, e.g. 0.85."),
    ("alpha_cc", "85", "“85” is out of range; expected a number from 0.5 to 1."),
    ("alpha_cc", "0,85", "write 0.85"),
    ("gamma_c", "", "Required"),
    ("k_clay_1_general", "5", "“5” is out of range; expected a number from 0.1 to 1."),
    ("gamma_M_ec6_2_I", "0", "“0” is out of range; expected a number from 1 to 5."),
    ("tol_bearing_length", "-1", "“-1” is out of range; expected a number from 0 to 100 mm."),
    ("name", "", "Give the site a name."),
]


def test_bad_settings_are_refused_on_their_field(client_as, db, site):
    c = client_as("engineer")
    url = f"/sites/{site['id']}/settings"
    good = _form_values(c.get(url).data)
    for field, typed, words in BAD_SETTINGS:
        r = post(c, url, good | {field: typed})
        assert r.status_code == 400, field
        assert words in field_errors(r.data, field)[0], (field, typed)
        assert all_error_fields(r.data) == {field}
        assert f'value="{typed}"'.encode() in r.data or not typed
    assert store.get_site(db, site["id"]) == site


# --- members -----------------------------------------------------------------------------------


def test_every_member_sees_the_members_but_only_the_engineer_may_invite(client_as, site, people):
    url = f"/sites/{site['id']}/members"
    viewer = client_as("viewer").get(url)
    assert viewer.status_code == 200
    for role in ("engineer", "inspector", "contractor", "viewer"):
        assert people[role].name.encode() in viewer.data
        # Addresses are for whoever may invite: a viewer (building control) gets names.
        assert people[role].email.encode() not in viewer.data
    assert b"Invite someone" not in viewer.data and b"Change role" not in viewer.data
    engineer = client_as("engineer").get(url)
    assert b"Invite someone" in engineer.data and b"Change role" in engineer.data
    assert people["viewer"].email.encode() in engineer.data


def test_an_invitation_is_an_offer_and_adds_nobody(client_as, db, site, people):
    c = client_as("engineer")
    url = f"/sites/{site['id']}/members/invite"
    before = counts(db)
    r = post(c, url, {"email": "not-an-address", "role": "viewer"})
    assert r.status_code == 400 and "e-mail address" in field_errors(r.data, "email")[0]
    r = post(c, url, {"email": "a@b.test", "role": "boss"})
    assert r.status_code == 400 and field_errors(r.data, "role")
    r = post(c, url, {"email": people["inspector"].email, "role": "engineer"})
    assert r.status_code == 409
    assert "already on this site as inspector" in field_errors(r.data, "email")[0]
    assert counts(db) == before

    # Before: an existing account was added at once, by name.
    r = post(c, url, {"email": people["outsider"].email.upper(), "role": "viewer"})
    assert r.status_code == 201
    assert people["outsider"].name.encode() not in r.data
    assert store.role_of(db, user_id=people["outsider"].id, site_id=site["id"]) is None
    assert client_as("outsider").get(f"/sites/{site['id']}").status_code == 404
    assert counts(db)["memberships"] == before["memberships"]
    # Before: an unknown address got an account with a password shown to the inviter.
    r = post(c, url, {"email": "Nia.New@Example.test", "role": "inspector"})
    assert r.status_code == 201 and b"one-time password" not in r.data
    assert store.get_user_by_email(db, "nia.new@example.test") is None
    assert counts(db)["users"] == before["users"]


def test_a_password_set_by_someone_else_is_changed_at_the_first_log_in(app, client_as, db, people):
    """An account whose password someone else set must choose its own before going on."""
    given = "a password someone else chose"
    store.set_password_hash(
        db,
        user_id=people["inspector"].id,
        password_hash=credentials.hash_password(given),
        by_user_id=people["engineer"].id,
    )
    newcomer = app.test_client()
    r = post(newcomer, "/login", {"email": people["inspector"].email, "password": given})
    assert r.status_code == 302
    r = newcomer.get("/")
    assert r.status_code == 302 and r.headers["Location"] == "/account/password"
    page = newcomer.get("/account/password")
    assert b"Choose your own before going on" in page.data
    mine = "slate grey lintel over the porch"
    for sent, field, says in (
        ({"current": "not it at all", "new": mine, "again": mine}, "current", b"not your password"),
        ({"current": given, "new": mine, "again": mine + "!"}, "again", b"differ"),
        ({"current": given, "new": given, "again": given}, "new", b"other than"),
        ({"current": given, "new": "short", "again": "short"}, "new", b"at least 10"),
    ):
        r = post(newcomer, "/account/password", sent)
        assert r.status_code == 400, field
        assert re.search(rf'data-error-for="{field}">[^<]*'.encode() + says, r.data), field
    assert store.get_user_by_id(db, people["inspector"].id)["must_change_password"] is True

    r = post(newcomer, "/account/password", {"current": given, "new": mine, "again": mine})
    assert r.status_code == 302
    assert newcomer.get("/").status_code == 200  # still logged in
    assert store.get_user_by_id(db, people["inspector"].id)["must_change_password"] is False
    stranger = app.test_client()
    login = {"email": people["inspector"].email, "password": given}
    assert post(stranger, "/login", login).status_code == 401
    assert post(stranger, "/login", {**login, "password": mine}).status_code == 302


def test_an_account_with_its_own_password_is_not_asked_to_change_it(client_as, site):
    r = client_as("inspector").get(f"/sites/{site['id']}")
    assert r.status_code == 200


def test_changing_a_role_and_removing_a_member(client_as, db, site, people):
    c = client_as("engineer")
    s = f"/sites/{site['id']}/members"
    inspector, contractor = people["inspector"].id, people["contractor"].id
    r = post(c, f"{s}/{inspector}/role", {"role": "viewer"})
    assert r.status_code == 302
    assert store.role_of(db, user_id=inspector, site_id=site["id"]) == "viewer"
    r = post(c, f"{s}/{contractor}/remove")
    assert r.status_code == 302
    assert store.role_of(db, user_id=contractor, site_id=site["id"]) is None
    assert client_as("contractor").get(f"/sites/{site['id']}").status_code == 404
    kinds = [e["kind"] for e in store.events_for(db, site_id=site["id"])]
    assert "member role changed" in kinds and "member removed" in kinds
    assert post(c, f"{s}/{contractor}/remove").status_code == 404
    assert post(c, f"{s}/{inspector}/role", {"role": "boss"}).status_code == 400


def test_the_last_engineer_cannot_be_demoted_or_removed(client_as, db, site, people):
    c = client_as("engineer")
    s = f"/sites/{site['id']}/members"
    me = people["engineer"].id
    before = counts(db)
    for url, data in ((f"{s}/{me}/role", {"role": "viewer"}), (f"{s}/{me}/remove", {})):
        r = post(c, url, data)
        assert r.status_code == 409
        assert b"only engineer" in r.data and b"Nothing was changed." in r.data
    assert store.role_of(db, user_id=me, site_id=site["id"]) == "engineer"
    assert counts(db) == before

    # With a second engineer, the first may step down.
    assert post(c, f"{s}/{people['inspector'].id}/role", {"role": "engineer"}).status_code == 302
    r = post(c, f"{s}/{me}/role", {"role": "viewer"})
    assert r.status_code == 302 and r.headers["Location"].endswith(f"/sites/{site['id']}")
    assert store.role_of(db, user_id=me, site_id=site["id"]) == "viewer"
    r = post(client_as("inspector"), f"{s}/{people['inspector'].id}/remove")
    assert r.status_code == 409  # the only engineer again


def test_the_height_is_asked_to_the_padstones_underside_with_a_drawing_and_said_in_the_trace(
    client_as, db, site
):
    """Typing the beam's seating level instead of the padstone's underside overstates h_c:
    the form names the height, explains it, and draws it; the calculation repeats it."""
    c = client_as("engineer")
    html = c.get(f"/sites/{site['id']}/bearings/new").data.decode()
    field = unescape(re.search(r"<label for=\"height_to_bearing\">([^<]*)</label>", html).group(1))
    assert field == "Height from the wall's base to the padstone's underside h_c (mm)"
    hint = re.search(r'<figure class="field height-hint".*?</figure>', html, flags=re.S).group(0)
    assert "<svg" in hint and "not to where the beam sits on the padstone" in unescape(hint)
    assert 'style="' not in hint  # the CSP allows presentation attributes only
    r = post(c, f"/sites/{site['id']}/bearings/new", GOOD | {"reference": "H-1"})
    assert r.status_code == 302, all_error_fields(r.data)
    stored = store.bearing_by_reference(db, site_id=site["id"], reference="H-1", with_result=True)
    assert stored["design_result"]["notes"][0] == (
        "h_c = 2,475 mm, from the wall's base to the padstone's underside (not to where the "
        "beam sits on the padstone)."
    )
    assert "padstone's underside" in DESIGN_COLUMNS["height_to_bearing"][0]
