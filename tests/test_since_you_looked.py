""" "Since you last looked": each person's sites list and site page say what came into their
hands since they last opened the site's lists, and the engineer's header counts what waits.
No mail here: this is what everyone has when mail is not set up.

Real app, real SQLite file, a test client per person.
"""

from __future__ import annotations

from kit.review_steps import as_designed, bearing_named, decide_form, decision_url, record
from sitecheck import services


def since_of(client, site) -> dict:
    sites = client.get("/.json").get_json()["sites"]
    (mine,) = [s for s in sites if s["id"] == site["id"]]
    return {k["kind"]: (k["count"], k["references"]) for k in mine["since"]}


def test_each_person_sees_what_came_into_their_hands_until_they_look(db, people, site, client_as):
    engineer, inspector, contractor = (
        client_as(r) for r in ("engineer", "inspector", "contractor")
    )
    record(db, site, "FF-B5", people["inspector"])  # fails: to decide
    record(db, site, "GF-B1-E", people["inspector"])  # within design: releasable

    assert since_of(engineer, site) == {"to-decide": (1, ["FF-B5"])}
    assert since_of(contractor, site) == {"releasable": (1, ["GF-B1-E"])}
    assert since_of(inspector, site) == {}
    # Only someone who is a site's engineer is offered the queue in the header.
    for other in (inspector, contractor):
        assert "data-to-decide" not in other.get("/").data.decode().split("</header>")[0]
    home = engineer.get("/").data.decode()
    assert "Since you last looked:" in home and "1 new to decide (FF-B5)" in home
    header = home.split("</header>")[0]
    assert 'data-to-decide="1"' in header and "(1 new)" in header

    # The engineer looks at the queue: nothing is new any more, one still waits.
    assert engineer.get("/review").status_code == 200
    assert since_of(engineer, site) == {}
    header = engineer.get("/").data.decode().split("</header>")[0]
    assert 'data-to-decide="1"' in header and "new)" not in header

    # The engineer asks for FF-B5 to be measured again: the inspector sees it, with the
    # count on the sites list, until they open the survey list.
    b = bearing_named(db, site, "FF-B5")
    form = decide_form(engineer, site, b, kind="measure-again", reason="Check the wall again.")
    assert engineer.post(decision_url(site, b), data=form).status_code == 302
    assert since_of(inspector, site) == {"measure-again": (1, ["FF-B5"])}
    page = inspector.get(f"/sites/{site['id']}").data.decode()
    assert "1 to measure again: FF-B5" in page
    assert inspector.get(f"/sites/{site['id']}/inspect").status_code == 200
    assert since_of(inspector, site) == {}

    # Remedial work is for the contractor and the inspector alike.
    record(db, site, "GF-B1-W", people["inspector"], bearing_length=100.0)
    bw = bearing_named(db, site, "GF-B1-W")
    services.decide(
        db,
        site=site,
        bearing=bw,
        kind="remedial",
        reason="Extend the bearing.",
        engineer_id=people["engineer"].id,
    )
    assert since_of(contractor, site)["remedial"] == (1, ["GF-B1-W"])
    assert since_of(inspector, site) == {"remedial": (1, ["GF-B1-W"])}
    # The contractor's release list is where they look: afterwards nothing is new.
    assert contractor.get(f"/sites/{site['id']}/release").status_code == 200
    assert since_of(contractor, site) == {}
    # A .json twin read by a script is not a look.
    engineer.get(f"/sites/{site['id']}.json")
    record(db, site, "GF-B2-N", people["inspector"], bearing_length=60.0)
    engineer.get(f"/sites/{site['id']}.json")
    assert since_of(engineer, site) == {"to-decide": (1, ["GF-B2-N"])}


def test_a_bearing_that_moved_on_before_the_person_looked_is_not_counted(
    db, people, site, client_as
):
    engineer = client_as("engineer")
    record(db, site, "FF-B5", people["inspector"])
    assert since_of(engineer, site) == {"to-decide": (1, ["FF-B5"])}
    b = bearing_named(db, site, "FF-B5")
    record(db, site, "FF-B5", people["inspector"], hours=0.5, **(as_designed(b) | {"a1": 400.0}))
    # Decided by another engineer (or measured within design) meanwhile: nothing to say.
    services.decide(
        db,
        site=site,
        bearing=bearing_named(db, site, "FF-B5"),
        kind="remedial",
        reason="A new padstone is needed here.",
        engineer_id=people["engineer"].id,
    )
    assert since_of(engineer, site) == {}


def test_the_site_page_says_what_is_next_for_each_role(db, people, site, client_as):
    record(db, site, "FF-B5", people["inspector"])
    record(db, site, "GF-B1-E", people["inspector"])
    counts = client_as("viewer").get(f"/sites/{site['id']}.json").get_json()["counts"]
    to_measure = counts["awaiting survey"] + counts["remedial"]
    assert to_measure > 1
    for role, words in (
        ("engineer", "1 bearing to decide"),
        ("contractor", "1 bearing may be closed up"),
        ("inspector", f"{to_measure} bearings to measure"),
    ):
        data = client_as(role).get(f"/sites/{site['id']}.json").get_json()
        assert data["next_for_you"]["words"] == words, role
    assert client_as("viewer").get(f"/sites/{site['id']}.json").get_json()["next_for_you"] is None
