"""The survey list's order kept in SQL: the references' order as a stored key, and the
list, the form's next bearings and the site pack in the order they always had.

The oracle is the survey order as it was first written in Python (before the store kept
it): references compared part by part, digits as numbers and the rest without case, the
bearings to measure first, those whose design fails last."""

from __future__ import annotations

import csv
import gzip
import io
import json
import re
import sqlite3
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from kit.schedule_rows import schedule_row
from sitecheck import services, store
from sitecheck.schedule import DESIGN_COLUMNS
from sitecheck.web.inspect import NEXT_OFFERED


def natural_key(text: str) -> tuple:
    return tuple(
        (1, int(part), "") if part.isdigit() else (0, 0, part.lower())
        for part in re.split(r"(\d+)", text)
        if part
    )


def survey_order(rows: list[dict]) -> list[dict]:
    """``rows`` by reference as the store lists them; ties in the key keep that order."""
    ranks = {"awaiting survey": 0, "remedial": 1}
    by_reference = sorted(rows, key=lambda b: natural_key(b["reference"]))
    for n, b in enumerate(by_reference):
        b["order"] = n
    return sorted(
        by_reference,
        key=lambda b: (3 if not b["design_passed"] else ranks.get(b["state"], 2), b["order"]),
    )


def test_the_key_sorts_references_as_people_read_them():
    references = ["GF-B10", "gf-b2", "GF-B02", "GF-B1-W", "GF-B1", "1F-B3", "B", "b7a", "B7"]
    by_key = sorted(references, key=store.reference_order_key)
    assert by_key == sorted(references, key=natural_key)
    # Digits as numbers (2 before 10), the rest without case; text before digits.
    assert by_key.index("gf-b2") < by_key.index("GF-B10")
    assert by_key.index("1F-B3") < by_key.index("B") or natural_key("B") < natural_key("1F-B3")
    # 2 and 02 read alike: the key ties them, and the store's order by reference breaks it.
    assert store.reference_order_key("GF-B02") == store.reference_order_key("gf-b2")


# What a reference holds on a schedule: letters of any case (some accented), digits (some
# with leading zeros), separators and spaces; no control characters.
REFERENCE = st.text(alphabet=st.sampled_from("aBcÉéß-/ _.0123456789٣"), min_size=1, max_size=12)


@settings(max_examples=400, deadline=None)
@given(st.lists(REFERENCE, min_size=2, max_size=30))
def test_the_key_orders_any_references_as_the_first_python_order_did(references):
    assert sorted(references, key=store.reference_order_key) == sorted(references, key=natural_key)
    for a in references:
        for b in references:
            same = store.reference_order_key(a) == store.reference_order_key(b)
            assert same == (natural_key(a) == natural_key(b))


def _row(reference: str, reaction_kN: float = 30) -> dict[str, str]:
    return schedule_row(
        reference,
        location=f"Level {reference[-1]}, grid {len(reference)}",
        reaction_kN=str(reaction_kN),
    )


# References that read alike in parts (B7, b07), accents, digits past nine, and a design
# that fails (the reaction far beyond the padstone), to put every rank and tie in play.
TRICKY = ["B10", "b9", "B07", "b7", "É2", "é10", "e3", "L1-10", "L1-9", "l1-09a", "Z", "z1"]
FAILING = {"b9", "L1-9"}
REMEDIAL = {"B10", "é10", "Z"}
MEASURED = {"b7", "L1-10", "e3"}


@pytest.fixture
def tricky_site(db, site, people):
    out = io.StringIO()
    writer = csv.DictWriter(out, fieldnames=list(DESIGN_COLUMNS), lineterminator="\n")
    writer.writeheader()
    writer.writerows(_row(r, 900 if r in FAILING else 30) for r in TRICKY)
    report = services.import_schedule(
        db, site=site, text=out.getvalue(), user_id=people["engineer"].id, keep_good_rows=True
    )
    assert len(report.added) == len(TRICKY), report.errors
    for reference in REMEDIAL | MEASURED:
        bearing = store.bearing_by_reference(db, site_id=site["id"], reference=reference)
        store.set_state(
            db,
            site_id=site["id"],
            bearing_id=bearing["id"],
            expected_state="awaiting survey",
            new_state="remedial" if reference in REMEDIAL else "within design",
            user_id=people["engineer"].id,
        )
    return site


def test_the_survey_list_pages_keep_the_first_order_over_tricky_references(
    client_as, db, tricky_site
):
    expected = survey_order(store.list_bearings(db, site_id=tricky_site["id"]))
    assert {b["state"] for b in expected} >= {"awaiting survey", "remedial", "within design"}
    assert any(not b["design_passed"] for b in expected)
    inspector = client_as("inspector")
    url = f"/sites/{tricky_site['id']}/inspect.json"
    first = inspector.get(url).get_json()
    seen = [(b["id"], b["order"]) for b in first["bearings"]]
    for n in range(2, first["listing"]["pages"] + 1):
        seen += [
            (b["id"], b["order"]) for b in inspector.get(f"{url}?page={n}").get_json()["bearings"]
        ]
    assert seen == [(b["id"], b["order"]) for b in expected]
    assert first["total"] == len(expected)
    assert first["to_survey"] == sum(
        1 for b in expected if b["design_passed"] and b["state"] in ("awaiting survey", "remedial")
    )
    # A search (every word in the reference or location) keeps each bearing's place among
    # all of them, not among the matches.
    found = inspector.get(f"{url}?q=LEVEL+0").get_json()["bearings"]
    assert [(b["id"], b["order"]) for b in found] == [
        (b["id"], b["order"])
        for b in expected
        if all(word in f"{b['reference']} {b['location']}".lower() for word in ("level", "0"))
    ]


def test_the_site_pack_and_the_forms_next_bearings_follow_the_same_order(
    client_as, db, tricky_site
):
    expected = survey_order(store.list_bearings(db, site_id=tricky_site["id"]))
    inspector = client_as("inspector")
    pack = inspector.get(f"/api/sites/{tricky_site['id']}/pack").get_json()
    assert [(b["id"], b["order"]) for b in pack["bearings"]] == [
        (b["id"], b["order"]) for b in expected
    ]
    to_survey = [b for b in expected if b["design_passed"] and b["state"] != "within design"]
    for here, bearing in enumerate(expected):
        html = inspector.get(
            f"/sites/{tricky_site['id']}/bearings/{bearing['id']}/record"
        ).get_data(as_text=True)
        capture = json.loads(
            re.search(
                r'<script type="application/json" id="capture-context">(.*?)</script>', html
            ).group(1)
        )
        after = [b for b in expected[here + 1 :] + expected[:here] if b in to_survey]
        assert [b["id"] for b in capture["next"]] == [b["id"] for b in after[:NEXT_OFFERED]]


def test_a_bearing_cannot_be_added_without_its_key(db, site, people):
    with pytest.raises(sqlite3.IntegrityError, match="reference_key must be given"):
        db.execute(
            "INSERT INTO bearings (id, site_id, reference, location, revision, design_input, "
            "design_passed, state, state_changed_at, created_by, created_at) "
            "VALUES ('x', ?, 'R1', '', 1, '{}', 1, 'awaiting survey', 'now', ?, 'now')",
            [site["id"], people["engineer"].id],
        )


OLDER = Path(__file__).parent / "data" / "demo-m010.sqlite.gz"


def test_an_older_database_gets_every_key_released_bearings_included_and_they_stay_locked(
    tmp_path,
):
    path = tmp_path / "older.db"
    path.write_bytes(gzip.decompress(OLDER.read_bytes()))
    db = store.open_db(path)
    try:
        rows = db.execute("SELECT id, reference, reference_key, state FROM bearings").fetchall()
        assert rows and any(state == "released" for *_, state in rows)
        for _id, reference, key, _state in rows:
            assert key == store.reference_order_key(reference)
        released = next(r for r in rows if r[3] == "released")
        with pytest.raises(sqlite3.IntegrityError, match="released and locked"):
            db.execute("UPDATE bearings SET reference_key = 'x' WHERE id = ?", [released[0]])
    finally:
        db.conn.close()
