"""The site record (PDF) as the quality file receives it: a summary first (counts by state,
open items, who must act), the engineer's sign-off made in the app and stamped into it, the
code basis and review settings in the settings page's words with units and source tags,
"accepted although it fails", and the audit trail in words. Read back with pypdf and
rendered with pdftoppm at print size.

Real app, real SQLite file, the PDF as downloaded.
"""

from __future__ import annotations

import dataclasses
import io
import re
import subprocess
from html import unescape

import pytest
from PIL import Image
from pypdf import PdfReader

from kit.review_steps import bearing_named, decide_form, decision_url, fails_unmeasured, record
from kit.site_record import record_made, start_record
from kit.web import csrf_token
from sitecheck import services, store, workflow
from sitecheck.bearing import SOURCES, CodeBasis
from sitecheck.bearing.review import ReviewSettings
from sitecheck.settings_words import (
    BASIS_FLAGS,
    BASIS_LABELS,
    CREEP_TABLES,
    REQUIRED_LABELS,
    REVIEW_LABELS,
    TABLE_TITLES,
)

SENTENCE = "The wall below is solid brick, checked by hand on site today."
STATEMENT = "I have reviewed every bearing of this site record and the decisions in it."
UUID = re.compile(r"[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}")


def pages_of(data: bytes) -> list[str]:
    return [" ".join((p.extract_text() or "").split()) for p in PdfReader(io.BytesIO(data)).pages]


def the_pdf(client, site) -> bytes:
    """The site record as a person gets it: made in the background, then downloaded."""
    app = client.application
    assert start_record(client, site["id"]).status_code == 302
    record_made(app, site["id"])
    r = client.get(f"/sites/{site['id']}/record.pdf")
    data = r.data
    r.close()
    assert r.status_code == 200 and r.mimetype == "application/pdf"
    return data


@pytest.fixture
def worked(db, people, site, client_as):
    """A site part-way: one bearing accepted although it fails, one released, one waiting
    for the engineer, one for remedial work; the rest awaiting survey."""
    ins = people["inspector"]
    fails_unmeasured(db, site, "GF-B1-E", ins)
    engineer = client_as("engineer")
    b = bearing_named(db, site, "GF-B1-E")
    form = decide_form(engineer, site, b, kind="accept", reason=SENTENCE)
    assert (
        engineer.post(decision_url(site, b), data=form | {"confirm_failing": "y"}).status_code
        == 302
    )
    record(db, site, "GF-B2-N", ins)
    services.release(
        db,
        site=site,
        bearing=bearing_named(db, site, "GF-B2-N"),
        contractor_id=people["contractor"].id,
        contractor_name="Cora Contractor",
        statement="Closed up after the check.",
    )
    record(db, site, "FF-B5", ins)
    record(db, site, "GF-B1-W", ins, bearing_length=120.0)
    services.decide(
        db,
        site=site,
        bearing=bearing_named(db, site, "GF-B1-W"),
        kind="remedial",
        reason="Extend the bearing to 150 mm.",
        engineer_id=people["engineer"].id,
    )
    return site


def test_the_first_page_is_the_summary_with_counts_open_items_and_who_must_act(
    db, worked, client_as
):
    first = pages_of(the_pdf(client_as("viewer"), worked))[0]
    assert first.startswith("Site record")
    assert "competent engineer" in first  # the caution, on the first page
    assert "Not signed off" in first
    counts = {s: 0 for s in workflow.STATES}
    for b in store.list_bearings(db, site_id=worked["id"]):
        counts[b["state"]] += 1
    for state, n in counts.items():
        assert f"{workflow.STATE_BADGES[state].symbol} {state} {n}" in first, state
    assert f"all {sum(counts.values())}" in first
    assert "Open items: who must act" in first
    assert "the engineer decide on 1. FF-B5" in first
    assert "the inspector measure " in first
    assert "do the remedial work on 1 (then the inspector measures again)" in first
    # Accepted although it fails: listed on the first page with the engineer's words.
    assert "Accepted although they fail as built" in first
    assert "GF-B1-E" in first and SENTENCE in first
    assert "data export (JSON)" in first and "-data.json" in first


def test_the_engineer_signs_off_in_the_app_and_the_pdf_carries_it_until_something_changes(
    db, people, worked, client_as
):
    engineer = client_as("engineer")
    page = engineer.get(f"/sites/{worked['id']}/record").data.decode()
    assert (
        "Not signed off yet" in page
        and "Signing now covers the site record as it stands now: " in page
    )
    url = f"/sites/{worked['id']}/record/sign-off"
    # A sign-off without a name is refused, keeping the statement, and nothing is kept.
    r = engineer.post(
        url, data={"csrf_token": csrf_token(engineer), "engineer_name": "", "statement": STATEMENT}
    )
    assert r.status_code == 400 and "Write your name" in r.data.decode()
    assert STATEMENT in unescape(r.data.decode())
    assert store.sign_offs_for(db, site_id=worked["id"]) == []
    r = engineer.post(
        url,
        data={
            "csrf_token": csrf_token(engineer),
            "engineer_name": "Esme Engineer CEng",
            "statement": STATEMENT,
        },
    )
    assert r.status_code == 302
    (signed,) = store.sign_offs_for(db, site_id=worked["id"])
    covers = signed["covers"]
    assert covers["bearings"] == len(store.list_bearings(db, site_id=worked["id"]))
    assert covers["records"] == 4 and covers["states"]["released"] == 1

    first = pages_of(the_pdf(client_as("viewer"), worked))[0]
    assert f"Signed off by Esme Engineer CEng on {signed['created_at'][:10]}" in first
    assert f"Statement: “{STATEMENT}”" in first
    assert "4 as-built records" in first and "1 released" in first
    assert "Nothing in the record has changed since it was signed." in first
    assert "Not signed off" not in first

    # A record arrives after the sign-off: the record says the sign-off does not cover it.
    record(db, worked, "FF-B4", people["inspector"])
    pages = pages_of(the_pdf(client_as("viewer"), worked))
    assert "Since then, 1 entry in the history changed the record" in pages[0]
    assert "this sign-off does not cover them" in pages[0]
    trail = " ".join(pages[pages.index(next(p for p in pages if "Appendix: audit trail" in p)) :])
    assert trail.count("After the sign-off:") == 1
    assert "Signed off the site record, signed as Esme Engineer CEng." in trail
    page = engineer.get(f"/sites/{worked['id']}/record").data.decode()
    assert 'data-changed-since="1"' in page


def test_code_basis_and_review_settings_read_as_the_settings_page_with_units_and_sources(
    db, worked, client_as
):
    text = " ".join(pages_of(the_pdf(client_as("viewer"), worked)))
    basis = worked["code_basis"]
    for name, (label, _unit) in BASIS_LABELS.items():
        assert label in text, name
    assert "Spread through the padstone 45° 45° dispersion through the padstone [CP]" in text
    assert "Spreader: least depth 200 mm > 200 mm, EN 1996-1-1 6.1.3 [M]" in text
    assert "Allow the spreader route for Groups 2 to 4 no" in text
    for title in TABLE_TITLES.values():
        assert title in text
    assert "Tolerance on bearing length 10 mm [ours]" in text
    assert "Values the inspector must measure bearing length" in text
    assert basis["name"] in text
    # No internal key of the code basis or the review settings reaches the record (those
    # that are plain words, such as "threshold", may of course appear as words).
    for f in (*dataclasses.fields(CodeBasis), *dataclasses.fields(ReviewSettings)):
        if "_" in f.name:
            assert f.name not in text, f.name
    assert "Source labels: S seen" in text


def test_every_value_of_the_code_basis_and_review_settings_has_the_screens_words(client_as, site):
    for f in dataclasses.fields(CodeBasis):
        if f.name == "name":
            continue
        worded = (BASIS_LABELS, BASIS_FLAGS, TABLE_TITLES, dict(CREEP_TABLES))
        assert any(f.name in words for words in worded), f.name
        assert f.name in SOURCES, f.name
    for f in dataclasses.fields(ReviewSettings):
        assert f.name in REVIEW_LABELS or f.name in REQUIRED_LABELS, f.name
    page = unescape(client_as("engineer").get(f"/sites/{site['id']}/settings").data.decode())
    page = re.sub(r"<sup>(.*?)</sup>", r"^\1", page)
    for label, _unit in BASIS_LABELS.values():
        assert label in page
    for label, _unit, _source in REVIEW_LABELS.values():
        assert label in page
    for title in TABLE_TITLES.values():
        assert title in page


def test_the_audit_trail_is_in_words_with_no_identifiers_hashes_or_raw_values(
    db, worked, client_as
):
    pages = pages_of(the_pdf(client_as("viewer"), worked))
    start = next(i for i, p in enumerate(pages) if p.startswith("Appendix: audit trail"))
    trail = " ".join(pages[start:])
    assert not UUID.search(trail)
    assert not re.search(r"\b[0-9a-f]{16,}\b", trail)  # no hashes
    assert not re.search(r"\b(True|False|None|null)\b", trail)
    events = store.events_for(db, site_id=worked["id"], limit=10_000)
    assert f"({len(events)} entries)" in trail
    assert "Sent the as-built record measured" in trail
    assert "Decided: Accepted although it fails: " in trail and SENTENCE in trail
    assert "Released for closing up, signed as Cora Contractor" in trail
    assert "State: engineer to decide → remedial." in trail
    assert "data export (JSON)" in trail


def test_accepted_although_it_fails_on_the_bearings_own_page(db, worked, client_as):
    pages = pages_of(the_pdf(client_as("viewer"), worked))
    start = next(i for i, p in enumerate(pages) if p.startswith("Bearing GF-B1-E"))
    end = next(i for i, p in enumerate(pages) if i > start and p.startswith("Bearing "))
    own = " ".join(pages[start:end])
    d = store.decisions_for(
        db, site_id=worked["id"], bearing_id=bearing_named(db, worked, "GF-B1-E")["id"]
    )[0]
    failing = d["accepted_failing"]
    said = f"Decision: Accepted although it fails: {failing['title']}, utilisation {failing['utilisation']:.2f}"
    assert said in own and "Esme Engineer" in own


def test_every_page_renders_at_print_size_with_nothing_past_the_margins(
    worked, client_as, tmp_path
):
    data = the_pdf(client_as("viewer"), worked)
    (tmp_path / "record.pdf").write_bytes(data)
    count = len(PdfReader(io.BytesIO(data)).pages)
    subprocess.run(
        ["pdftoppm", "-r", "150", "-png", str(tmp_path / "record.pdf"), str(tmp_path / "page")],
        check=True,
    )
    images = sorted(tmp_path.glob("page-*.png"))
    assert len(images) == count
    band = round(150 * 10 / 25.4)  # 10 mm: the margins are 15 mm, so this strip stays empty
    for path in images:
        with Image.open(path) as im:
            assert abs(im.width - 1240) <= 2 and abs(im.height - 1754) <= 2  # A4 at 150 dpi
            grey = im.convert("L")
            for box in (
                (0, 0, band, grey.height),
                (grey.width - band, 0, grey.width, grey.height),
                (0, 0, grey.width, band),
                (0, grey.height - band // 2, grey.width, grey.height),
            ):
                assert grey.crop(box).getextrema()[0] > 240, f"{path.name}: ink in margin {box}"
            assert grey.getextrema()[0] < 100, f"{path.name} is blank"


def test_no_number_in_the_record_is_written_with_an_exponent(worked, client_as):
    """Every figure goes through the core's one formatter: 11,000 mm², never 1.1e+04."""
    text = " ".join(pages_of(the_pdf(client_as("viewer"), worked)))
    assert not re.search(r"\d(\.\d+)?[eE][+-]?\d", text), re.search(
        r".{40}\d(\.\d+)?[eE][+-]?\d.{20}", text
    )
    assert re.search(r"\d,\d{3}", text)  # thousands are separated, as the trade writes them
