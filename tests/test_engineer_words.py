"""The engineer's words reach the people who act on them: the inspector on the bearing's
as-built form (online, and offline from the site pack), the contractor on the release list
(tests/test_web_release.py).

Real app, real SQLite file, a test client per person.
"""

from __future__ import annotations

from kit.review_steps import bearing_named, record
from sitecheck import services

AGAIN = "The wall looks like 100 mm block, not 215 mm: measure it at the bearing itself."
REMEDIAL = "Bed a 440 x 215 x 140 padstone in M6 under the east end, then measure again."


def asked(db, site, people):
    """GF-B2-N to be measured again, GF-B1-W to have remedial work, each in the engineer's
    words; FF-B5 simply waiting for the engineer."""
    eng = people["engineer"].id
    for reference, kind, words in (
        ("GF-B2-N", "measure-again", AGAIN),
        ("GF-B1-W", "remedial", REMEDIAL),
    ):
        record(db, site, reference, people["inspector"], bearing_length=120.0)
        services.decide(
            db,
            site=site,
            bearing=bearing_named(db, site, reference),
            kind=kind,
            reason=words,
            engineer_id=eng,
            engineer_name="Esme Engineer",
        )
    record(db, site, "FF-B5", people["inspector"])


def test_the_site_pack_carries_the_engineers_standing_words_for_the_phone(
    db, people, site, client_as
):
    asked(db, site, people)
    pack = client_as("inspector").get(f"/api/sites/{site['id']}/pack").get_json()
    words = {b["reference"]: b["engineer_words"] for b in pack["bearings"]}
    assert words["GF-B2-N"]["text"] == AGAIN and words["GF-B2-N"]["title"] == "Measure again"
    assert words["GF-B2-N"]["by"] == "Esme Engineer" and words["GF-B2-N"]["at"].endswith("Z")
    assert words["GF-B1-W"]["text"] == REMEDIAL and words["GF-B1-W"]["kind"] == "remedial"
    assert words["FF-B5"] is None and words["GF-B1-E"] is None
    # Measured again: the request is answered, and its words no longer stand.
    record(db, site, "GF-B2-N", people["inspector"], hours=0.1)
    pack = client_as("inspector").get(f"/api/sites/{site['id']}/pack").get_json()
    assert {b["reference"]: b["engineer_words"] for b in pack["bearings"]}["GF-B2-N"] is None


def test_the_inspector_reads_the_engineers_words_on_the_bearings_form(db, people, site, client_as):
    asked(db, site, people)
    inspector = client_as("inspector")
    for reference, words, title in (
        ("GF-B2-N", AGAIN, "Measure again"),
        ("GF-B1-W", REMEDIAL, "Remedial work"),
    ):
        b = bearing_named(db, site, reference)
        page = inspector.get(f"/sites/{site['id']}/bearings/{b['id']}/record").data.decode()
        box = page.split("data-engineer-words")[1].split("</section>")[0]
        assert f"{title}: the engineer's words" in box and words in box
        assert "Esme Engineer" in box
    b = bearing_named(db, site, "FF-B5")
    assert (
        "data-engineer-words"
        not in inspector.get(f"/sites/{site['id']}/bearings/{b['id']}/record").data.decode()
    )
