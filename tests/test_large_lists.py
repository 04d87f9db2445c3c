"""Long lists a page at a time: the site's bearing schedule (by state and by search), the
inspector's survey list (in survey order, searched over the whole site) and the engineer's
queue. Real app, real SQLite file; the site has a few hundred bearings, imported as an
engineer imports a schedule."""

from __future__ import annotations

import csv
import io
import re
import uuid
from datetime import UTC, datetime

import pytest

from kit.schedule_rows import schedule_row
from sitecheck import services, store
from sitecheck.schedule import DESIGN_COLUMNS


def natural_key(text: str) -> tuple:
    """The survey list's order of references as it was first written (in Python, before the
    store kept it in SQL): GF-B2 before GF-B10, digits as numbers, the rest without case."""
    return tuple(
        (1, int(part), "") if part.isdigit() else (0, 0, part.lower())
        for part in re.split(r"(\d+)", text)
        if part
    )


def survey_order(rows: list[dict]) -> list[dict]:
    """The survey order as it was first written: to measure first (awaiting survey, then
    remedial), then the rest, then bearings whose design fails; by reference within each.
    ``rows`` by reference as the store lists them (ties keep that order)."""
    ranks = {"awaiting survey": 0, "remedial": 1}
    by_reference = sorted(rows, key=lambda b: natural_key(b["reference"]))
    for n, b in enumerate(by_reference):
        b["order"] = n
    return sorted(
        by_reference,
        key=lambda b: (3 if not b["design_passed"] else ranks.get(b["state"], 2), b["order"]),
    )


def matches(bearing: dict, query: str) -> bool:
    """The survey list's search as it was first written: every word in the reference or
    the location, lowered as Python lowers text."""
    text = f"{bearing['reference']} {bearing.get('location') or ''}".lower()
    return all(word in text for word in query.lower().split())


EXTRA = 230  # beside the demo schedule's 11: three pages of the schedule, five of the list


def _row(n: int) -> dict[str, str]:
    level = n // 20
    # A level in the local language on some, to search text Python lowers and SQLite's
    # own lower() would not.
    where = f"Étage {level}" if level % 5 == 4 else f"Level {level}"
    return schedule_row(
        f"L{level:02d}-B{n % 20:02d}",
        location=f"{where}, grid {n % 20}",
        reaction_kN=str(30 + n % 7),
    )


@pytest.fixture
def big_site(db, site, people):
    out = io.StringIO()
    writer = csv.DictWriter(out, fieldnames=list(DESIGN_COLUMNS), lineterminator="\n")
    writer.writeheader()
    writer.writerows(_row(n) for n in range(EXTRA))
    report = services.import_schedule(
        db, site=site, text=out.getvalue(), user_id=people["engineer"].id
    )
    assert report.ok and len(report.added) == EXTRA, report.errors
    return site


def _record(db, site, bearing, inspector_id, **measured) -> None:
    d = bearing["design_input"]
    services.record_as_built(
        db,
        site=site,
        bearing=bearing,
        uuid=str(uuid.uuid4()),
        measured_at=datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
        design_revision=bearing["revision"],
        measurements={
            "bearing_length": d["beam"]["bearing_length"],
            "padstone_present": True,
            "padstone_length": 440,
            "padstone_width": 215,
            "padstone_depth": 140,
            "wall_thickness": 215,
            "masonry_group": 1,
            **measured,
        },
        checklist={"bedded": True, "packing": 0, "cracks": False, "cut_units": False},
        notes="",
        inspector_id=inspector_id,
    )


def _references(answer: dict) -> list[str]:
    return [b["reference"] for b in answer["bearings"]]


def test_the_schedule_is_listed_a_page_at_a_time_counting_every_bearing(client_as, db, big_site):
    engineer = client_as("engineer")
    url = f"/sites/{big_site['id']}"
    total = EXTRA + 11
    every = [b["reference"] for b in store.list_bearings(db, site_id=big_site["id"])]
    pages = []
    for n in (1, 2, 3):
        answer = engineer.get(f"{url}.json?page={n}").get_json()
        assert answer["listing"] == {
            "page": n,
            "pages": 3,
            "size": 100,
            "total": total,
            "first": (n - 1) * 100 + 1,
            "last": min(n * 100, total),
        }
        assert sum(answer["counts"].values()) == total  # the counts are of the whole site
        pages += _references(answer)
    assert pages == every  # by reference, nothing twice, nothing left out
    # A page past the end shows the last; one that is not a number, the first.
    assert _references(engineer.get(f"{url}.json?page=99").get_json()) == every[200:]
    assert _references(engineer.get(f"{url}.json?page=x").get_json()) == every[:100]
    html = engineer.get(f"{url}?page=2").get_data(as_text=True)
    assert "101–200 of 241 · page 2 of 3" in html
    assert f'href="{url}?page=3"' in html and f'href="{url}?page=1"' in html


def test_the_schedule_lists_one_state_or_what_a_search_finds(client_as, db, big_site, people):
    for reference in ("L00-B01", "L00-B02", "L03-B07"):
        _record(
            db,
            big_site,
            store.bearing_by_reference(db, site_id=big_site["id"], reference=reference),
            people["inspector"].id,
        )
    engineer = client_as("engineer")
    url = f"/sites/{big_site['id']}.json"
    within = engineer.get(f"{url}?state=within+design").get_json()
    assert sorted(_references(within)) == ["L00-B01", "L00-B02", "L03-B07"]
    assert within["chosen"] == {"state": "within design", "q": ""}
    assert within["listing"]["total"] == 3 and within["counts"]["within design"] == 3
    assert within["bearings"][0]["latest"]["passed"] is True
    # A state that is not one is no filter at all.
    assert engineer.get(f"{url}?state=gone").get_json()["listing"]["total"] == EXTRA + 11
    # Every word, in the reference or the location, whatever the letters' case.
    found = engineer.get(f"{url}?q=LEVEL+3+grid+7").get_json()
    every = store.list_bearings(db, site_id=big_site["id"])
    assert _references(found) == [b["reference"] for b in every if matches(b, "level 3 grid 7")]
    assert "L03-B07" in _references(found) and "L07-B03" in _references(found)
    accented = engineer.get(f"{url}?q=%C3%89TAGE+4").get_json()  # "ÉTAGE 4"
    assert _references(accented) == [b["reference"] for b in every if matches(b, "ÉTAGE 4")]
    assert {f"L04-B{n:02d}" for n in range(20)} <= set(_references(accented))
    both = engineer.get(f"{url}?q=grid+7&state=within+design").get_json()
    assert _references(both) == ["L03-B07"]
    html = engineer.get(f"/sites/{big_site['id']}?q=nothing-like-this").get_data(as_text=True)
    assert "No bearing matches" in html and "Show every bearing" in html


def test_the_survey_list_is_a_page_of_the_whole_site_in_survey_order(client_as, db, big_site):
    inspector = client_as("inspector")
    url = f"/sites/{big_site['id']}/inspect"
    ordered = [b["id"] for b in survey_order(store.list_bearings(db, site_id=big_site["id"]))]
    seen = []
    for n in range(1, 6):
        answer = inspector.get(f"{url}.json?page={n}").get_json()
        assert answer["listing"]["pages"] == 5 and answer["total"] == EXTRA + 11
        seen += [b["id"] for b in answer["bearings"]]
    assert seen == ordered
    html = inspector.get(url).get_data(as_text=True)
    assert 'data-whole-list="no"' in html  # the phone sends searches to the server
    assert "241 bearings in survey order, 50 a page" in html
    found = inspector.get(f"{url}.json?q=grid+19").get_json()
    matching = [
        b["id"]
        for b in survey_order(store.list_bearings(db, site_id=big_site["id"]))
        if matches(b, "grid 19")
    ]
    assert len(matching) == 11  # every level's B19 but the last level's, which stops at B09
    assert found["shown"] == 11 and [b["id"] for b in found["bearings"]] == matching
    html = inspector.get(f"{url}?q=grid+19").get_data(as_text=True)
    assert "11 of 241 bearings match “grid 19”." in html


def test_a_small_site_is_one_page_the_phone_searches_itself(client_as, site):
    html = client_as("inspector").get(f"/sites/{site['id']}/inspect").get_data(as_text=True)
    assert 'data-whole-list="yes"' in html and "data-pager" not in html


def test_the_queue_is_shown_a_page_at_a_time_most_serious_first(client_as, db, big_site, people):
    for n in range(55):
        bearing = store.bearing_by_reference(
            db, site_id=big_site["id"], reference=_row(n)["reference"]
        )
        # Under the 100 mm minimum bearing: a blocking reason, for the engineer.
        _record(db, big_site, bearing, people["inspector"].id, bearing_length=60 + n % 30)
    engineer = client_as("engineer")
    first = engineer.get("/review.json").get_json()
    second = engineer.get("/review.json?page=2").get_json()
    assert first["listing"]["total"] == 55 and first["listing"]["pages"] == 2
    assert len(first["items"]) == 50 and len(second["items"]) == 5
    both = first["items"] + second["items"]
    assert len({i["bearing_id"] for i in both}) == 55
    utilisations = [i["utilisation"] for i in both]
    assert utilisations == sorted(utilisations, reverse=True)
    html = engineer.get("/review?page=2").get_data(as_text=True)
    assert (
        "55 bearings, most serious first" in html and '<ol class="cards queue" start="51">' in html
    )
    assert re.search(r'href="/review\?page=1"', html)
