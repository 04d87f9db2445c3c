"""A site record (PDF) of part of the site, for a quality file that wants one part: the
bearings of a level or area, in some states, or with something recorded between two days.

The store's choice is checked against the bearings' own references, states and times; the
PDF is made by a real server on 127.0.0.1 as people make it, and read back. The site is the
demo schedule's (invented): ground floor (GF) and first floor (FF) bearings.
"""

from __future__ import annotations

import io
import re
import time
import uuid
from datetime import UTC, date, datetime

import pytest
from pypdf import PdfReader

from kit.client import Client
from kit.servers import LiveServer
from kit.web import PASSWORD
from sitecheck import services, store
from sitecheck.store import Selection

EARLY, LATE = "2026-03-02T10:00:00Z", "2026-03-20T10:00:00Z"


@pytest.fixture
def visited(db, site, people):
    """The ground floor measured early in March, the first floor late in March; one of the
    late ones decided today (the accept is recorded when it is made)."""
    out = {}
    for bearing in store.list_bearings(db, site_id=site["id"]):
        d = bearing["design_input"]
        pad = d["padstone"]
        measurements = {
            "bearing_length": d["beam"]["bearing_length"] - 15,
            "padstone_present": pad is not None,
            "wall_thickness": d["wall"]["thickness"],
            "masonry_group": d["masonry"]["group"],
        }
        if pad:
            measurements |= {
                "padstone_length": pad["length"],
                "padstone_width": pad["width"],
                "padstone_depth": pad["depth"],
            }
        services.record_as_built(
            db,
            site=site,
            bearing=bearing,
            uuid=str(uuid.uuid4()),
            measured_at=EARLY if bearing["reference"].startswith("GF") else LATE,
            design_revision=1,
            measurements=measurements,
            checklist={"bedded": True},
            notes="Invented test record.",
            inspector_id=people["inspector"].id,
        )
        out[bearing["reference"]] = store.get_bearing(
            db, site_id=site["id"], bearing_id=bearing["id"]
        )
    assert {r[:2] for r in out} == {"GF", "FF"}
    return out


def _chosen(db, site, **criteria) -> list[str]:
    selection = Selection(**criteria)
    found = [
        b["bearing"]["reference"]
        for batch in store.bearing_batches(db, site_id=site["id"], selection=selection)
        for b in batch
    ]
    assert store.count_bearings(db, site_id=site["id"], selection=selection) == len(found)
    return found


def test_a_part_is_chosen_by_level_or_area_state_and_days(db, site, people, visited):
    every = sorted(visited, key=str.casefold)
    ground = [r for r in every if r.startswith("GF")]
    assert _chosen(db, site) == every
    # Words of the reference or the location, in any letter case.
    assert _chosen(db, site, words="gf") == ground
    assert _chosen(db, site, words="Ground floor") == ground
    assert _chosen(db, site, words="GF-B1") == [r for r in ground if r.startswith("GF-B1")]
    # Wildcards of SQL are plain characters here.
    assert _chosen(db, site, words="%") == [] and _chosen(db, site, words="G_") == []
    # States.
    for state in {b["state"] for b in visited.values()}:
        expected = [r for r in every if visited[r]["state"] == state]
        assert _chosen(db, site, states=(state,)) == expected
    # Days: the first and last days are both included (UTC).
    assert _chosen(db, site, since=date(2026, 3, 2), until=date(2026, 3, 2)) == ground
    assert _chosen(db, site, since=date(2026, 3, 3), until=date(2026, 3, 31)) == [
        r for r in every if r.startswith("FF")
    ]
    assert _chosen(db, site, until=date(2026, 3, 1)) == []
    # A decision made today brings its bearing into today's days.
    deciding = next(b for b in visited.values() if b["state"] == "engineer to decide")
    services.decide(
        db,
        site=site,
        bearing=deciding,
        kind="remedial",
        reason="Pack the padstone to the drawing (invented).",
        engineer_id=people["engineer"].id,
    )
    today = datetime.now(UTC).date()
    assert _chosen(db, site, since=today) == [deciding["reference"]]
    # All at once: every condition holds.
    assert _chosen(db, site, words="FF", since=date(2026, 3, 3), states=("remedial",)) == (
        [deciding["reference"]] if deciding["reference"].startswith("FF") else []
    )


def test_a_parts_audit_trail_is_its_bearings_entries_in_its_days(db, site, visited):
    ground = Selection(words="GF")
    ids = {b["id"] for b in visited.values() if b["reference"].startswith("GF")}
    events = list(store.site_events(db, site_id=site["id"], selection=ground))
    assert events and {e["bearing_id"] for e in events} == ids
    assert store.count_events(db, site_id=site["id"], selection=ground) == len(events)
    march = Selection(words="GF", since=date(2026, 3, 1), until=date(2026, 3, 31))
    # The records arrived today (their measured time is in March): nothing of theirs was
    # written to the history in March.
    assert list(store.site_events(db, site_id=site["id"], selection=march)) == []


@pytest.mark.parametrize(
    ("criteria", "says"),
    [
        ({"words": "  "}, "words is empty"),
        ({"states": ("closed",)}, "are not states"),
        ({"since": date(2026, 3, 2), "until": date(2026, 3, 1)}, "before since"),
    ],
)
def test_a_part_that_makes_no_sense_is_refused_by_name(criteria, says):
    with pytest.raises(ValueError, match=says):
        Selection(**criteria)


def test_a_part_is_named_the_same_however_it_is_asked():
    a = Selection(words="GF ", states=("released", "accepted"), since=date(2026, 3, 1))
    b = Selection(words="GF", states=("accepted", "released"), since=date(2026, 3, 1))
    assert a.key() == b.key() and Selection.from_key(a.key()).key() == a.key()
    assert Selection().key() == "" and Selection.from_key("").whole


# --- made by the server, as people make it --------------------------------------------------


@pytest.fixture
def server(app):
    live = LiveServer(app)
    yield live
    live.stop()


def _client(server, people, role: str) -> Client:
    client = Client(server.url)
    client.log_in(people[role].email, PASSWORD)
    return client


def _ready(client: Client, progress: str) -> dict:
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline:
        job = client.get(progress.replace("/record/pdf", "/record/pdf.json", 1)).json()["job"]
        if job and not job["running"]:
            return job
        time.sleep(0.1)
    raise AssertionError("the part's record took over two minutes")


def test_a_record_of_a_level_is_made_in_the_background_and_says_it_is_a_part(
    app, db, site, people, visited, server
):
    viewer = _client(server, people, "viewer")
    page = viewer.get(f"/sites/{site['id']}/record").text
    assert "A site record of part of the site" in page and 'name="words"' in page
    asked = viewer.post_form(
        f"/sites/{site['id']}/record/pdf", {"words": "GF", "since": "2026-03-01"}
    )
    assert asked.status == 302, asked.text[:500]
    progress = asked.headers["Location"]
    assert re.search(r"/record/pdf\?words=GF&since=2026-03-01$", progress), progress
    job = _ready(viewer, progress)
    ground = sorted(r for r in visited if r.startswith("GF"))
    assert job["state"] == "done" and job["bearings"] == len(ground)
    page = viewer.get(progress).text
    assert "Part of the site: bearings whose reference or location contains “GF”" in page
    got = viewer.get(job["download"])
    assert got.status == 200
    assert got.headers["Content-Disposition"].endswith("-site-record-part.pdf")
    reader = PdfReader(io.BytesIO(got.body))
    first = " ".join(reader.pages[0].extract_text().split())
    assert "This record holds part of the site" in first
    assert f"That is {len(ground)} of the site's {len(visited)} bearings" in first
    text = " ".join(" ".join(p.extract_text().split()) for p in reader.pages)
    for reference in visited:
        assert (f"Bearing {reference}" in text) == reference.startswith("GF"), reference
    assert "Site record (part)" in reader.pages[-1].extract_text()
    assert "competent engineer" in text

    # The same part asked for again, nothing changed: handed out, not made again.
    again = viewer.post_form(
        f"/sites/{site['id']}/record/pdf", {"words": "GF", "since": "2026-03-01"}
    )
    assert "Nothing on the site has changed" in viewer.get(again.headers["Location"]).text
    jobs = app.extensions["record_jobs"]
    assert len(jobs.jobs(site["id"], "pdf", None)) == 1
    # A part is not the whole site's record: that one is still to be made.
    assert jobs.current(site["id"], "pdf") is None
    assert viewer.get(f"/sites/{site['id']}/record.pdf").status == 302


def test_a_part_that_cannot_be_read_is_refused_with_its_field_keeping_what_was_typed(
    app, site, people, server
):
    engineer = _client(server, people, "engineer")
    refused = engineer.post_form(
        f"/sites/{site['id']}/record/pdf",
        {"words": "Block B", "since": "2026-03-31", "until": "2026-03-01"},
    )
    assert refused.status == 400
    assert 'data-error-for="until"' in refused.text
    assert "The last day, 2026-03-01, is before the first, 2026-03-31" in refused.text
    assert 'value="Block B"' in refused.text  # what was typed is kept
    badly = engineer.post_form(f"/sites/{site['id']}/record/pdf", {"since": "31/03/2026"})
    assert badly.status == 400
    assert "“31/03/2026” is not a day; write it as 2026-03-01." in badly.text
    assert app.extensions["record_jobs"].jobs(site["id"], "pdf", None) == []
    # A progress page asked for a part it cannot read says why.
    odd = engineer.get(f"/sites/{site['id']}/record/pdf?state=closed")
    assert odd.status == 400 and "cannot be read" in odd.text
