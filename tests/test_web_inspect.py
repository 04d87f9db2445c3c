"""The inspector's pages through the real app: real SQLite files and real photo files under
tmp_path. Every value measured here is invented for these tests."""

from __future__ import annotations

import io
import json
import re
import uuid
from dataclasses import replace
from datetime import UTC, datetime
from pathlib import Path

import pytest
from PIL import Image

from kit.photo_samples import encode, flood_png, jpeg_markers, make_test_jpeg
from kit.web import csrf_token, new_site
from sitecheck import services, store

REFERENCE = "GF-B1-E"  # designed with a 440 × 215 × 140 padstone, utilisation 0.60


# --- helpers -------------------------------------------------------------------------------------


def bearing_named(db, site, reference=REFERENCE) -> dict:
    return store.bearing_by_reference(db, site_id=site["id"], reference=reference)


def form_url(site, bearing) -> str:
    return f"/sites/{site['id']}/bearings/{bearing['id']}/record"


def as_designed(bearing) -> dict:
    """Form values equal to the stored design, with a tidy checklist."""
    d = bearing["design_input"]
    pad, wall, mas, beam = d["padstone"], d["wall"], d["masonry"], d["beam"]
    data = {
        "bearing_length": f"{beam['bearing_length']:g}",
        "flange_width": f"{beam['flange_width']:g}",
        "padstone_present": "yes",
        "padstone_length": f"{pad['length']:g}",
        "padstone_width": f"{pad['width']:g}",
        "padstone_depth": f"{pad['depth']:g}",
        "padstone_concrete": pad["concrete"],
        "wall_thickness": f"{wall['thickness']:g}",
        "masonry_material": mas["material"],
        "masonry_group": str(mas["group"]),
        "unit_strength": f"{mas['unit_strength']:g}",
        "mortar": mas["mortar"],
        "bedded": "yes",
        "packing": "0",
        "cracks": "no",
        "cut_units": "no",
        "level": "yes",
        "notes": "Padstone bedded on a full mortar joint.",
    }
    if wall["a1"] is not None:
        data["a1"] = f"{wall['a1']:g}"
    return data


def open_form(client, site, bearing) -> dict:
    """GET the form and return its hidden and pre-filled fields, as a browser would send them."""
    page = client.get(form_url(site, bearing))
    assert page.status_code == 200, page.data[:300]
    html = page.get_data(as_text=True)

    def value(name):
        return re.search(rf'name="{name}"[^>]*value="([^"]*)"', html).group(1)

    return {
        "csrf_token": value("csrf_token"),
        "record_uuid": value("record_uuid"),
        "design_revision": value("design_revision"),
        "measured_at": value("measured_at"),
    }


def post_record(client, site, bearing, data, photos=(), *, hidden=None):
    hidden = hidden or open_form(client, site, bearing)
    files = [(io.BytesIO(b), name, "image/jpeg") for name, b in photos]
    body = {**hidden, **data}
    if files:
        body["photos"] = files
    r = client.post(form_url(site, bearing), data=body, content_type="multipart/form-data")
    # The test client spools a large body to a temporary file and leaves it open.
    r.request.input_stream.close()
    return r


def counts(db, app) -> tuple[int, int, int]:
    records = db.execute("SELECT count(*) FROM as_built_records").fetchone()[0]
    photos = db.execute("SELECT count(*) FROM photos").fetchone()[0]
    files = sum(1 for p in Path(app.config["PHOTO_DIR"]).rglob("*") if p.is_file())
    return records, photos, files


def field_errors(html: str, name: str) -> list[str]:
    return re.findall(rf'data-error-for="{name}">(.*?)</p>', html, flags=re.S)


def photo_a() -> bytes:
    return make_test_jpeg(
        640,
        480,
        gps=(51.501, -0.142),
        capture_time=datetime(2026, 3, 2, 10, 15),
        comment=b"invented test comment",
    )


def photo_b() -> bytes:
    return make_test_jpeg(480, 640, orientation=6)


def record_as_designed(client, site, bearing, photos=()):
    r = post_record(client, site, bearing, as_designed(bearing), photos)
    assert r.status_code == 302, r.get_data(as_text=True)[:2000]
    return r.headers["Location"]


# --- the list ------------------------------------------------------------------------------------


def test_the_list_puts_bearings_to_survey_first_with_a_button_each(client_as, db, site, people):
    inspector = client_as("inspector")
    measured = bearing_named(db, site)
    record_as_designed(inspector, site, measured)
    remedial = bearing_named(db, site, "GF-B1-W")
    short = as_designed(remedial) | {"padstone_length": "300"}
    assert post_record(inspector, site, remedial, short).status_code == 302
    remedial = bearing_named(db, site, "GF-B1-W")
    services.decide(
        db,
        site=site,
        bearing=remedial,
        kind="remedial",
        reason="Padstone too short; replace it.",
        engineer_id=people["engineer"].id,
    )

    page = inspector.get(f"/sites/{site['id']}/inspect")
    assert page.status_code == 200
    html = page.get_data(as_text=True)
    cards = re.findall(r'data-state="([^"]+)" data-order="\d+" data-design-passed="(yes|no)"', html)
    # A bearing whose design fails is not for survey: last, with no button, not counted.
    passing = [state for state, passed in cards if passed == "yes"]
    failing = [state for state, passed in cards if passed == "no"]
    assert failing and cards[-len(failing) :] == [(s, "no") for s in failing]
    states = passing
    first_other = states.index("within design")
    assert set(states[:first_other]) <= {"awaiting survey", "remedial"}
    assert states.index("remedial") > max(i for i, s in enumerate(states) if s == "awaiting survey")
    assert states[-1] == "within design"
    assert len(cards) == len(store.list_bearings(db, site_id=site["id"]))
    assert html.count('>Record as built<span class="visually-hidden">') == len(passing)
    awaiting = sum(1 for s in passing if s in ("awaiting survey", "remedial"))
    assert f"{awaiting} bearings to measure" in html
    assert "not for survey: the design fails and is being revised" in html
    assert "✓</span> within design" in html and "✗</span> remedial" in html

    data = inspector.get(f"/sites/{site['id']}/inspect.json").get_json()
    assert [(b["state"], "yes" if b["design_passed"] else "no") for b in data["bearings"]] == cards
    done = next(b for b in data["bearings"] if b["id"] == measured["id"])
    assert done["latest_record_url"].startswith(f"/sites/{site['id']}/records/")


def test_the_site_and_bearing_pages_offer_a_record_only_where_the_survey_list_does(
    client_as, db, site
):
    inspector = client_as("inspector")
    rows = store.list_bearings(db, site_id=site["id"])
    failing = [b for b in rows if not b["design_passed"]]
    passing = [b for b in rows if b["design_passed"] and b["state"] != "released"]
    assert failing and passing
    site_page = inspector.get(f"/sites/{site['id']}").get_data(as_text=True)
    for b in rows:
        link = f'href="{form_url(site, b)}"'
        assert (link in site_page) == (b in passing), b["reference"]
        page = inspector.get(f"/sites/{site['id']}/bearings/{b['id']}").get_data(as_text=True)
        assert (link in page) == (b in passing), b["reference"]
        if b in failing:
            assert "not for survey yet" in page
    assert site_page.count("data-not-for-survey") == len(failing)


def test_the_form_shows_design_values_and_phone_friendly_inputs(client_as, db, site):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    html = inspector.get(form_url(site, bearing)).get_data(as_text=True)
    assert "designed: 440 mm" in html  # the padstone length of the schedule
    assert "designed: 215 mm" in html
    assert re.search(r'<input[^>]*inputmode="decimal"[^>]*name="bearing_length"', html)
    assert re.search(
        r'<input type="file" id="photos" name="photos" accept="image/\*" capture="environment" multiple',
        html,
    )
    hidden = open_form(inspector, site, bearing)
    assert uuid.UUID(hidden["record_uuid"]).version == 4
    # The date-time picker's own format, in UTC (the page says so until its script runs).
    picked = datetime.fromisoformat(hidden["measured_at"]).replace(tzinfo=UTC)
    assert re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d", hidden["measured_at"])
    assert abs((datetime.now(UTC) - picked).total_seconds()) < 120
    assert 'type="datetime-local"' in html and "in UTC" in html
    assert hidden["design_revision"] == "1"
    assert "style=" not in html and "onclick" not in html
    # Scripts only from our own server (the CSP allows no inline script): the page script,
    # the phone's re-check module and its data, which is JSON and never executed.
    assert re.findall(r"<script[^>]*>", html) == [
        '<script src="/static/app.js" defer>',
        '<script type="application/json" id="verdict-context">',
        '<script type="application/json" id="capture-context">',
        '<script type="module" src="/static/js/capture.js">',
    ]
    context = json.loads(html.split('id="verdict-context">')[1].split("</script>")[0])
    assert set(context) == {"design", "basis", "settings"}
    assert context["design"]["padstone"]["length"] == 440.0


# --- recording -----------------------------------------------------------------------------------


def test_a_bearing_built_as_designed_with_two_photos(client_as, db, app, site):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    before = counts(db, app)

    location = record_as_designed(
        inspector, site, bearing, [("east.jpg", photo_a()), ("side.jpg", photo_b())]
    )

    # Each photo: display, thumbnail and the print copy the site record embeds.
    assert counts(db, app) == (before[0] + 1, before[1] + 2, before[2] + 6)
    assert bearing_named(db, site)["state"] == "within design"
    records = store.records_for_bearing(db, site_id=site["id"], bearing_id=bearing["id"])
    assert len(records) == 1 and location.endswith(f"/records/{records[0]['uuid']}")
    assert records[0]["measurements"]["padstone_length"] == 440.0
    assert records[0]["checklist"] == {
        "bedded": True,
        "packing": 0.0,
        "cracks": False,
        "cut_units": False,
        "level": True,
    }
    rows = store.photos_for_record(db, site_id=site["id"], record_uuid=records[0]["uuid"])
    assert len(rows) == 2
    assert rows[0]["gps_lat"] == pytest.approx(51.501, abs=1e-4)  # kept in the database only

    page = inspector.get(location)
    html = page.get_data(as_text=True)
    assert page.status_code == 200
    assert 'data-verdict="pass"' in html and "✓ Within design" in html
    assert "No review reasons." in html
    assert "Recorded by Ivo Inspector" in html
    thumbs = re.findall(r'<img src="([^"]+/thumb)"', html)
    displays = re.findall(r'<a href="([^"]+/display)"><img', html)
    assert len(thumbs) == len(displays) == 2
    for url in thumbs + displays:
        served = inspector.get(url)
        assert served.status_code == 200
        assert served.headers["Content-Type"] == "image/jpeg"
        assert served.headers["X-Content-Type-Options"] == "nosniff"
        assert served.headers["Cache-Control"] == "private, max-age=31536000, immutable"
        assert re.fullmatch(
            r'inline; filename="[0-9a-f-]{36}\.jpg"', served.headers["Content-Disposition"]
        )
        markers, trailing = jpeg_markers(served.data)
        assert not {0xE1, 0xED, 0xFE} & set(markers), "EXIF, IPTC or a comment survived"
        assert trailing == 0
        with Image.open(io.BytesIO(served.data)) as im:
            assert len(im.getexif()) == 0
    # The photo turned by its EXIF orientation is served upright (portrait 480 wide).
    with Image.open(io.BytesIO(inspector.get(displays[1]).data)) as im:
        assert im.size[0] != im.size[1]


def test_a_short_padstone_goes_to_the_engineer_with_its_reason(client_as, db, site):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    r = post_record(inspector, site, bearing, as_designed(bearing) | {"padstone_length": "300"})
    assert r.status_code == 302
    assert bearing_named(db, site)["state"] == "engineer to decide"
    html = inspector.get(r.headers["Location"]).get_data(as_text=True)
    assert 'data-verdict="review"' in html
    assert 'data-code="padstone-length-off"' in html
    assert "Padstone length is 300 mm as built against 440 mm designed" in html
    row = re.search(r'<tr data-field="padstone_length">(.*?)</tr>', html, flags=re.S).group(1)
    assert 'class="changed"' in row and "300 mm" in row
    unchanged = re.search(r'<tr data-field="wall_thickness">(.*?)</tr>', html, flags=re.S).group(1)
    assert "changed" not in unchanged


def test_the_same_uuid_sent_twice_is_stored_once(client_as, db, app, site):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    hidden = open_form(inspector, site, bearing)
    before = counts(db, app)
    first = post_record(
        inspector, site, bearing, as_designed(bearing), [("a.jpg", photo_a())], hidden=hidden
    )
    second = post_record(
        inspector, site, bearing, as_designed(bearing), [("a.jpg", photo_a())], hidden=hidden
    )
    assert first.status_code == second.status_code == 302
    assert first.headers["Location"] == second.headers["Location"]
    assert counts(db, app) == (before[0] + 1, before[1] + 1, before[2] + 3)
    page = inspector.get(second.headers["Location"]).get_data(as_text=True)
    assert "already stored; it was not stored twice" in page
    assert 'data-verdict="pass"' in page


BAD_NUMBERS = (
    ("-5", "a positive length"),
    ("abc", "is not a number"),
    # The one reader's rules (bearing/typed.py): the decimal comma, a unit, a space inside.
    ("212,5", "“212,5” has a comma; expected a number in mm with a decimal point: write 212.5"),
    ("215mm", "“215mm” has a unit; expected a number in mm, without the unit: write 215."),
    ("1 200", "“1 200” has a space inside it; expected a number in mm without spaces: write 1200"),
    ("99999", "is not accepted; expected"),
    ("0.215", "looks like metres"),
)


def test_a_record_uuid_used_for_another_bearing_is_refused_and_renewed(client_as, db, app, site):
    inspector = client_as("inspector")
    first, other = bearing_named(db, site), bearing_named(db, site, "GF-B1-W")
    hidden = open_form(inspector, site, first)
    assert post_record(inspector, site, first, as_designed(first), hidden=hidden).status_code == 302
    before = counts(db, app)
    hidden["design_revision"] = str(other["revision"])
    r = post_record(inspector, site, other, as_designed(other), hidden=hidden)
    assert r.status_code == 400
    html = r.get_data(as_text=True)
    assert "belongs to another record" in html
    renewed = re.search(r'name="record_uuid"[^>]*value="([^"]+)"', html).group(1)
    assert renewed != hidden["record_uuid"]
    assert counts(db, app) == before
    assert bearing_named(db, site, "GF-B1-W")["state"] == "awaiting survey"


@pytest.mark.parametrize(
    ("name", "label"),
    [
        ("bearing_length", "Bearing length"),
        ("padstone_length", "Padstone length"),
        ("wall_thickness", "Wall thickness"),
    ],
)
def test_bad_numbers_are_refused_on_their_field_and_nothing_is_stored(
    client_as, db, app, site, name, label
):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    hidden = open_form(inspector, site, bearing)
    before = counts(db, app)

    for typed, says in BAD_NUMBERS:
        r = post_record(
            inspector,
            site,
            bearing,
            as_designed(bearing) | {name: typed},
            [("a.jpg", photo_a())],
            hidden=hidden,
        )

        assert r.status_code == 400, typed
        html = r.get_data(as_text=True)
        errors = field_errors(html, name)
        assert len(errors) == 1, (typed, errors)
        assert errors[0].startswith(f"✗ {label}: ") and says in errors[0], (typed, errors)
        assert "Nothing was saved." in html
        assert counts(db, app) == before, typed
        # What was typed, and the record's UUID, come back unchanged.
        assert re.search(rf'name="{name}"[^>]*value="{re.escape(typed)}"', html), typed
        assert f'value="{hidden["record_uuid"]}"' in html
        assert "Choose the photos again" in html
    assert bearing_named(db, site)["state"] == "awaiting survey"


@pytest.mark.parametrize(
    ("name", "label"),
    [
        ("bearing_length", "bearing length"),
        ("padstone_length", "padstone length"),
        ("wall_thickness", "wall thickness"),
    ],
)
def test_a_needed_field_left_empty_is_recorded_as_not_measured(client_as, db, site, name, label):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    r = post_record(inspector, site, bearing, as_designed(bearing) | {name: ""})
    assert r.status_code == 302
    record = store.records_for_bearing(db, site_id=site["id"], bearing_id=bearing["id"])[0]
    assert name not in record["measurements"]
    (reason,) = [x for x in record["reasons"] if x["code"] == "not-measured"]
    assert reason["values"]["fields"] == [name]
    assert bearing_named(db, site)["state"] == "engineer to decide"
    html = inspector.get(r.headers["Location"]).get_data(as_text=True)
    assert f"Not measured: {label}." in html
    row = re.search(rf'<tr data-field="{name}">(.*?)</tr>', html, flags=re.S).group(1)
    assert "not measured" in row


def test_optional_fields_left_empty_raise_no_reason(client_as, db, site):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    data = as_designed(bearing)
    for optional in ("flange_width", "padstone_concrete", "unit_strength", "mortar", "notes"):
        data[optional] = ""
    assert post_record(inspector, site, bearing, data).status_code == 302
    record = store.records_for_bearing(db, site_id=site["id"], bearing_id=bearing["id"])[0]
    assert record["reasons"] == []
    assert bearing_named(db, site)["state"] == "within design"


def test_a_value_that_clashes_with_the_design_is_refused_on_its_field(client_as, db, app, site):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    before = counts(db, app)
    # A bearing longer than the 215 mm padstone it sits on makes no physical sense.
    r = post_record(inspector, site, bearing, as_designed(bearing) | {"bearing_length": "300"})
    assert r.status_code == 400
    (error,) = field_errors(r.get_data(as_text=True), "bearing_length")
    assert "Bearing length: 300 mm is not accepted" in error and "padstone" in error
    assert counts(db, app) == before


def test_every_bad_field_is_reported_in_one_answer(client_as, db, app, site):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    before = counts(db, app)
    data = as_designed(bearing) | {"bearing_length": "abc", "padstone_length": "0.3"}
    r = post_record(inspector, site, bearing, data)
    assert r.status_code == 400
    html = r.get_data(as_text=True)
    (bearing_error,) = field_errors(html, "bearing_length")
    (padstone_error,) = field_errors(html, "padstone_length")
    assert "is not a number" in bearing_error
    assert "Padstone length: 0.3 mm is not accepted" in padstone_error
    assert "did you mean 300 mm?" in padstone_error
    assert counts(db, app) == before


def test_other_bad_fields_name_what_was_expected(client_as, db, app, site):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    before = counts(db, app)
    data = as_designed(bearing) | {
        "packing": "-3",
        "masonry_group": "7",
        "bedded": "maybe",
        "measured_at": "02/03/2026 10:15",
        "padstone_concrete": "C99",
    }
    r = post_record(inspector, site, bearing, data)
    assert r.status_code == 400
    html = r.get_data(as_text=True)
    assert (
        "Packing under the beam: “-3” is out of range; expected a number from 0 to 200 mm."
        in field_errors(html, "packing")[0]
    )
    assert "Unit group: choose one of the listed values" in field_errors(html, "masonry_group")[0]
    assert "choose yes, no or not seen" in field_errors(html, "bedded")[0]
    assert "is not a date and time" in field_errors(html, "measured_at")[0]
    assert counts(db, app) == before


# --- uploads -------------------------------------------------------------------------------------


def _gif() -> bytes:
    return encode(Image.new("P", (40, 30)), "GIF")


@pytest.mark.parametrize(
    ("make", "says"),
    [
        (lambda: b"these are the site minutes, not a photo\n" * 20, "is not a JPEG, PNG or WebP"),
        (lambda: photo_a()[: len(photo_a()) // 2], "truncated or damaged"),
        (lambda: flood_png(12000, 12000), "megapixels"),
        (_gif, "GIF image"),
    ],
    ids=["not-an-image", "truncated-jpeg", "pixel-flood-png", "gif"],
)
def test_a_bad_photo_refuses_the_whole_record(client_as, db, app, site, make, says):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    before = counts(db, app)
    r = post_record(
        inspector,
        site,
        bearing,
        as_designed(bearing),
        [("good.jpg", photo_a()), ("bad.jpg", make())],
    )
    assert r.status_code == 400
    (error, again) = field_errors(r.get_data(as_text=True), "photos")
    assert error.startswith("✗ Photo 2 (bad.jpg): ") and says in error
    assert "Choose the photos again" in again
    assert counts(db, app) == before
    assert not list(Path(app.config["PHOTO_DIR"]).rglob("*.jpg"))


def test_more_than_eight_photos_are_refused(client_as, db, app, site):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    before = counts(db, app)
    tiny = make_test_jpeg(32, 24)
    r = post_record(
        inspector, site, bearing, as_designed(bearing), [(f"{i}.jpg", tiny) for i in range(9)]
    )
    assert r.status_code == 400
    assert (
        "at most 8 for one as-built record; you chose 9"
        in field_errors(r.get_data(as_text=True), "photos")[0]
    )
    assert counts(db, app) == before


def test_a_body_over_the_limit_gets_a_clear_413(client_as, db, app, site):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    hidden = open_form(inspector, site, bearing)
    before = counts(db, app)
    huge = b"\xff\xd8\xff" + bytes(app.config["MAX_CONTENT_LENGTH"])
    r = post_record(
        inspector, site, bearing, as_designed(bearing), [("huge.jpg", huge)], hidden=hidden
    )
    assert r.status_code == 413
    html = r.get_data(as_text=True)
    assert "larger than 40 MB" in html and "Nothing was saved" in html
    assert f'href="{form_url(site, bearing)}"' in html
    assert counts(db, app) == before


# --- released bearings and older designs --------------------------------------------------------


def test_a_released_bearing_still_takes_a_record_marked_late(client_as, db, site, people):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    record_as_designed(inspector, site, bearing)
    services.release(
        db,
        site=site,
        bearing=bearing_named(db, site),
        contractor_id=people["contractor"].id,
        contractor_name=people["contractor"].name,
        statement="Released for closing up.",
    )
    page = inspector.get(form_url(site, bearing)).get_data(as_text=True)
    assert "released for closing up and locked" in page and "marked late" in page

    r = post_record(inspector, site, bearing, as_designed(bearing) | {"padstone_length": "300"})
    assert r.status_code == 302
    assert bearing_named(db, site)["state"] == "released"
    html = inspector.get(r.headers["Location"]).get_data(as_text=True)
    assert 'data-flag="late"' in html and "the bearing stays released" in html


def test_a_record_against_an_older_design_revision_is_kept_and_flagged(client_as, db, site, people):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    hidden = open_form(inspector, site, bearing)
    design = services.design_of(bearing)
    services.revise_bearing(
        db,
        site=site,
        bearing=bearing,
        design=replace(design, load=replace(design.load, reaction=design.load.reaction * 1.05)),
        location=None,
        user_id=people["engineer"].id,
    )
    # The phone re-checked the design it had (revision 1): its verdict is not compared with
    # the server's re-check of revision 2, which differs for that reason alone.
    old_verdict = json.dumps({"passed": True, "governing": "x", "utilisation": 0.5, "reasons": []})
    r = post_record(
        inspector, site, bearing, as_designed(bearing) | {"provisional": old_verdict}, hidden=hidden
    )
    assert r.status_code == 302
    html = inspector.get(r.headers["Location"]).get_data(as_text=True)
    assert 'data-flag="older-revision"' in html
    assert 'data-code="older-design-revision"' in html
    assert bearing_named(db, site)["state"] == "engineer to decide"
    assert _events(db, site, services.PHONE_VERDICT_DIFFERED) == []


# --- who may do what ------------------------------------------------------------------------------


@pytest.mark.parametrize("role", ["contractor", "viewer"])
def test_contractor_and_viewer_may_not_record(client_as, db, app, site, role):
    client = client_as(role)
    bearing = bearing_named(db, site)
    before = counts(db, app)
    body = {
        **as_designed(bearing),
        "csrf_token": csrf_token(client),
        "record_uuid": str(uuid.uuid4()),
        "design_revision": "1",
        "measured_at": "2026-03-02T10:15:00Z",
        "photos": [(io.BytesIO(photo_a()), "a.jpg", "image/jpeg")],
    }
    r = client.post(form_url(site, bearing), data=body, content_type="multipart/form-data")
    assert r.status_code == 403
    assert "may not record as-built values" in r.get_data(as_text=True)
    assert client.get(form_url(site, bearing)).status_code == 403
    assert client.get(f"/sites/{site['id']}/inspect").status_code == 403
    assert counts(db, app) == before
    refused = [e for e in store.events_for(db, site_id=site["id"]) if e["kind"] == "refused"]
    assert refused and refused[-1]["detail"] == {"action": "record", "role": role}


def test_an_outsider_gets_404_everywhere(client_as, db, app, site):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    result = record_as_designed(inspector, site, bearing, [("a.jpg", photo_a())])
    photo_url = re.search(
        r'<img src="([^"]+)/thumb"', inspector.get(result).get_data(as_text=True)
    ).group(1)
    before = counts(db, app)

    outsider = client_as("outsider")
    for url in (
        f"/sites/{site['id']}/inspect",
        f"/sites/{site['id']}/inspect.json",
        form_url(site, bearing),
        result,
        result + ".json",
        photo_url + "/thumb",
        photo_url + "/display",
    ):
        assert outsider.get(url).status_code == 404, url
    body = {
        **as_designed(bearing),
        "csrf_token": csrf_token(outsider),
        "record_uuid": str(uuid.uuid4()),
        "design_revision": "1",
        "measured_at": "2026-03-02T10:15:00Z",
    }
    r = outsider.post(form_url(site, bearing), data=body, content_type="multipart/form-data")
    assert r.status_code == 404
    assert counts(db, app) == before


def test_another_sites_photo_and_record_are_not_found(client_as, db, site, people):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    result = record_as_designed(inspector, site, bearing, [("a.jpg", photo_a())])
    photo_path = re.search(
        r'<img src="/sites/[^/]+/(photos/[^"]+)"', inspector.get(result).get_data(as_text=True)
    ).group(1)
    other = new_site(
        db, name="Invented Mews", created_by=people["engineer"].id, address="1 Invented Mews"
    )
    store.add_membership(
        db,
        user_id=people["inspector"].id,
        site_id=other["id"],
        role="inspector",
        invited_by=people["engineer"].id,
    )
    assert inspector.get(f"/sites/{site['id']}/{photo_path}").status_code == 200
    assert inspector.get(f"/sites/{other['id']}/{photo_path}").status_code == 404
    record_uuid = result.rsplit("/", 1)[1]
    assert inspector.get(f"/sites/{other['id']}/records/{record_uuid}").status_code == 404
    assert inspector.get(f"/sites/{other['id']}/bearings/{bearing['id']}/record").status_code == 404
    assert inspector.get(f"/sites/{site['id']}/{photo_path[:-5]}original").status_code == 404


def test_a_post_without_csrf_is_refused_and_stores_nothing(client_as, app, db, site):
    client = client_as("inspector")
    bearing = bearing_named(db, site)
    before = counts(db, app)
    body = {
        **as_designed(bearing),
        "record_uuid": str(uuid.uuid4()),
        "design_revision": "1",
        "measured_at": "2026-03-02T10:15:00Z",
        "photos": [(io.BytesIO(photo_a()), "a.jpg", "image/jpeg")],
    }
    r = client.post(form_url(site, bearing), data=body, content_type="multipart/form-data")
    assert r.status_code == 400
    assert "nothing was saved" in r.get_data(as_text=True)
    assert counts(db, app) == before


# --- JSON ----------------------------------------------------------------------------------------


def test_the_result_as_json_has_the_result_reasons_and_photo_urls(client_as, db, site):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    result = record_as_designed(
        inspector, site, bearing, [("a.jpg", photo_a()), ("b.jpg", photo_b())]
    )
    r = inspector.get(result + ".json")
    assert r.status_code == 200 and r.headers["Content-Type"] == "application/json"
    data = r.get_json()
    assert data["result"]["passed"] is True
    assert data["result"]["governing"] in {c["code"] for c in data["result"]["checks"]}
    assert data["reasons"] == [] and data["blocking"] == 0
    assert data["bearing"]["reference"] == REFERENCE
    assert data["record"]["uuid"] == result.rsplit("/", 1)[1]
    assert data["flags"] == {"older_revision": False, "late": False, "sets_state": True}
    assert len(data["photos"]) == 2
    for p in data["photos"]:
        assert inspector.get(p["display_url"]).headers["Content-Type"] == "image/jpeg"
        assert inspector.get(p["thumb_url"]).status_code == 200
    padstone = next(c for c in data["comparison"] if c["field"] == "padstone_length")
    assert padstone == padstone | {"designed": 440.0, "measured": 440.0, "changed": False}
    assert "password" not in json.dumps(data)


# --- the phone's provisional verdict ------------------------------------------------------------


def _events(db, site, kind):
    return [e for e in store.events_for(db, site_id=site["id"]) if e["kind"] == kind]


def _server_verdict(site, bearing, values) -> dict:
    """The verdict the server reaches for these form values, as the phone would send it."""
    rc = services.recheck(
        site,
        bearing,
        {"padstone_length": float(values["padstone_length"])},
        {},
    )
    return {
        "engine": "phone mirror",
        "passed": rc.result.passed,
        "governing": rc.result.governing,
        "utilisation": rc.result.utilisation,
        "reasons": [r.code for r in rc.reasons],
    }


def test_a_phone_verdict_that_agrees_writes_no_event(client_as, db, site):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    values = {"padstone_length": "300"}
    phone = _server_verdict(site, bearing, values)
    # The figure as a phone's float arithmetic may leave it: the last digits differ.
    phone["utilisation"] *= 1 + 1e-12
    r = post_record(inspector, site, bearing, values | {"provisional": json.dumps(phone)})
    assert r.status_code == 302
    assert _events(db, site, services.PHONE_VERDICT_DIFFERED) == []


def test_a_phone_verdict_that_differs_is_reported_and_the_server_wins(client_as, db, site):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    values = {"padstone_length": "300"}
    phone = _server_verdict(site, bearing, values)
    phone.update(passed=not phone["passed"], utilisation=phone["utilisation"] + 0.05)
    phone["reasons"] = phone["reasons"][1:]
    r = post_record(inspector, site, bearing, values | {"provisional": json.dumps(phone)})
    assert r.status_code == 302
    # The state comes from the server's own re-check, whatever the phone showed.
    assert bearing_named(db, site)["state"] == "engineer to decide"
    (event,) = _events(db, site, services.PHONE_VERDICT_DIFFERED)
    detail = json.loads(event["detail"]) if isinstance(event["detail"], str) else event["detail"]
    assert detail["differs"] == ["passed", "reasons", "utilisation"]
    assert detail["phone"]["passed"] is phone["passed"]
    assert detail["server"]["passed"] is not phone["passed"]
    assert detail["record"] == r.headers["Location"].rsplit("/", 1)[1]
    assert event["bearing_id"] == bearing["id"]


def test_an_unreadable_phone_verdict_still_stores_the_record(client_as, db, site):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    r = post_record(inspector, site, bearing, {"provisional": "{not json"})
    assert r.status_code == 302
    (event,) = _events(db, site, services.PHONE_VERDICT_DIFFERED)
    detail = json.loads(event["detail"]) if isinstance(event["detail"], str) else event["detail"]
    assert detail["differs"] == ["unreadable"]


def test_a_form_sent_without_javascript_has_no_phone_verdict_to_compare(client_as, db, site):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    r = post_record(inspector, site, bearing, {"padstone_length": "300"})
    assert r.status_code == 302
    assert _events(db, site, services.PHONE_VERDICT_DIFFERED) == []


def test_the_new_as_built_fields_show_what_was_designed():
    from kit.bearing_inputs import across_on_padstone
    from sitecheck.bearing.serial import input_to_dict
    from sitecheck.web.record_form import SPECS, designed_text

    plain = input_to_dict(across_on_padstone())
    assert designed_text(plain, "padstone_reinforced") == "no"
    assert designed_text(plain, "padstone_position") == "flush with the near face"
    assert designed_text(plain, "collar_joint") == "inferred from the wall's thickness"
    built = input_to_dict(across_on_padstone())
    built["padstone"] |= {"reinforced": True, "position_across": "offset", "offset_across": 10.0}
    built["masonry"]["collar_joint"] = True
    assert designed_text(built, "padstone_reinforced") == "yes"
    assert designed_text(built, "padstone_position") == "offset, as measured below"
    assert designed_text(built, "padstone_offset_across") == "10 mm"
    assert designed_text(built, "collar_joint") == "yes"
    # Hints are words, and where the design value lives is a path into the input.
    for name in ("padstone_reinforced", "padstone_position", "collar_joint"):
        assert SPECS[name].unit == "" and isinstance(SPECS[name].hint, str)
        assert SPECS[name].design is not None


# --- could not measure ----------------------------------------------------------------------------


def test_without_javascript_a_bearing_that_could_not_be_measured_goes_to_the_engineer(
    client_as, db, app, site
):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    r = post_record(
        inspector, site, bearing, {"why_not_measured": "unsafe", "notes": "Scaffold down."}
    )
    assert r.status_code == 302
    html = inspector.get(r.headers["Location"]).get_data(as_text=True)
    assert "Could not measure: not safe to reach" in html
    assert "Could not be measured (not safe to reach)" in html
    row = db.execute(
        "SELECT kind, why_not_measured FROM as_built_records ORDER BY received_at DESC LIMIT 1"
    ).fetchone()
    assert tuple(row) == ("could not measure", "unsafe")
    assert bearing_named(db, site)["state"] == "engineer to decide"


def test_could_not_measure_with_a_measured_value_is_refused_on_that_field(client_as, db, app, site):
    inspector = client_as("inspector")
    bearing = bearing_named(db, site)
    before = counts(db, app)
    r = post_record(
        inspector, site, bearing, {"why_not_measured": "covered", "wall_thickness": "215"}
    )
    assert r.status_code == 400
    (error,) = field_errors(r.get_data(as_text=True), "wall_thickness")
    assert "Wall thickness: 215 mm is not accepted; expected nothing measured" in error
    other = post_record(inspector, site, bearing, {"why_not_measured": "other"})
    assert other.status_code == 400
    assert "say what it is in the notes" in other.get_data(as_text=True)
    assert counts(db, app) == before
