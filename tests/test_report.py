"""The site record: the drawing, the data export and the PDF, and who may have them.

The bearings are the demo schedule's and tests/bearings.py's (invented loads on ordinary
sizes of the trade); the expected values are the model's own, read back from the result,
so these tests hold the drawing and the record to the numbers they show.
"""

from __future__ import annotations

import csv
import io
import json
import math
import uuid
import xml.etree.ElementTree as ET
import zipfile
from datetime import UTC, datetime

import pytest
from pypdf import PdfReader

from bearings import across_on_padstone, brick_in_line_end
from photo_samples import make_test_jpeg
from sitecheck import cli, services, store
from sitecheck.bearing import bs5628, check_bearing, ec6_uk_na
from sitecheck.bearing.serial import input_to_dict
from sitecheck.photos import ingest_photo
from sitecheck.report import export, pdf
from sitecheck.report.collect import collect
from sitecheck.report.drawing import FONT, PHONE_MIN_PX, bearing_svg, side_by_side_svg
from sitecheck.web import photo_store

SVG = "{http://www.w3.org/2000/svg}"


def _drawn(inp, basis=None, title="B1"):
    result = check_bearing(inp, basis or ec6_uk_na()).as_dict()
    return (
        input_to_dict(inp),
        result,
        ET.fromstring(bearing_svg(input_to_dict(inp), result, title=title)),
    )


def _view(root, name):
    return next(g for g in root.iter(f"{SVG}g") if g.get("data-view") == name)


def _role(view, role):
    return [e for e in view.iter() if e.get("data-role") == role]


# --- the drawing --------------------------------------------------------------------------------


def test_drawn_padstone_wall_and_beam_match_the_inputs_at_the_drawings_scale():
    inp, result, root = _drawn(across_on_padstone())
    elevation, section = _view(root, "elevation"), _view(root, "section")
    s_el, s_sec = float(elevation.get("data-scale")), float(section.get("data-scale"))

    pad = _role(elevation, "padstone")[0]
    assert float(pad.get("width")) / s_el == pytest.approx(440.0, abs=0.05)
    assert float(pad.get("height")) / s_el == pytest.approx(140.0, abs=0.05)
    assert float(pad.get("data-length-mm")) == 440.0
    foot = _role(elevation, "footprint")[0]
    assert float(foot.get("width")) / s_el == pytest.approx(133.0, abs=0.05)  # flange along

    wall = _role(section, "wall")[0]
    assert float(wall.get("width")) / s_sec == pytest.approx(215.0, abs=0.05)
    assert float(_role(section, "padstone")[0].get("width")) / s_sec == pytest.approx(
        215.0, abs=0.05
    )
    foot = _role(section, "footprint")[0]
    assert float(foot.get("width")) / s_sec == pytest.approx(150.0, abs=0.05)  # bearing length

    # The spread in the masonry is drawn as long as the result says it is.
    dim = _role(elevation, "spread-length")[0]
    drawn = (float(dim.get("x2")) - float(dim.get("x1"))) / s_el
    assert drawn == pytest.approx(result["spread"]["spread_length"], abs=0.1)
    # ... and the wall's end sits a1 from the padstone.
    end = _role(elevation, "wall-end-a1")[0]
    assert (float(pad.get("x")) - float(end.get("x1"))) / s_el == pytest.approx(300.0, abs=0.05)


def test_the_peak_pressure_label_is_the_results_sigma_max_as_rounded_on_it():
    _inp, result, root = _drawn(across_on_padstone())
    label = _role(root, "peak-pressure")[0]
    shown = f"{result['spread']['sigma_max']:.2f}"
    assert label.get("data-shown") == shown
    assert f"σ_max {shown} N/mm²" in label.text
    pressure = _role(root, "pressure")[0]
    assert pressure.get("data-distribution") == result["spread"]["distribution"]


@pytest.mark.parametrize(
    "inp, basis",
    [
        (across_on_padstone(), ec6_uk_na()),
        (brick_in_line_end(), bs5628()),
        (brick_in_line_end(), ec6_uk_na()),
        (across_on_padstone(padstone=None), ec6_uk_na()),
    ],
    ids=["across-ec6", "in-line-end-bs5628", "in-line-end-ec6", "no-padstone"],
)
def test_every_kind_of_bearing_is_drawn_readable_and_inline_safe(inp, basis):
    _inp, result, root = _drawn(inp, basis, title='GF <script>alert("x")</script> & B1')
    assert root.get("viewBox") and root.get("width") is None and root.get("height") is None
    width = float(root.get("viewBox").split()[2])
    texts = list(root.iter(f"{SVG}text"))
    assert texts
    for t in texts:
        size = float(t.get("font-size") or FONT)
        assert size * PHONE_MIN_PX / width >= 11.0
    for e in root.iter():
        assert "style" not in e.attrib  # the CSP forbids inline styles
        assert e.tag not in (f"{SVG}script", f"{SVG}foreignObject", f"{SVG}image")
        assert not any(k.startswith("on") for k in e.attrib)
    # The title is text, not markup.
    assert any("<script>" in (t.text or "") for t in texts)
    # A wall end at the padstone (a1 = 0) or 300 mm away is drawn; the spread reaches it.
    assert _role(root, "wall-end-a1")
    if inp.padstone is None:
        assert not _role(root, "padstone") and _role(root, "no-padstone")
    assert _role(root, "pressure")[0].get("data-distribution") == result["spread"]["distribution"]


def test_the_triangle_under_a_padstone_at_a_wall_end_peaks_at_that_end():
    _inp, result, root = _drawn(brick_in_line_end(), bs5628())
    assert result["spread"]["distribution"] == "triangle"
    poly = _role(root, "pressure")[0]
    pts = [tuple(map(float, p.split(","))) for p in poly.get("points").split()]
    (x0, _), (x1, _), (_, y_right), (_, y_left) = pts
    assert y_left > y_right  # deeper ordinate at the wall end (x = 0 side)


def test_side_by_side_marks_what_differs_and_nothing_else():
    design = across_on_padstone()
    built = across_on_padstone(padstone=design.padstone.__class__(330.0, 215.0, 140.0))
    a = (input_to_dict(design), check_bearing(design, ec6_uk_na()).as_dict())
    b = (input_to_dict(built), check_bearing(built, ec6_uk_na()).as_dict())
    root = ET.fromstring(side_by_side_svg(a, b, title="GF-B1"))
    fields = {e.get("data-field") for e in root.iter() if e.get("data-role") == "difference"}
    assert "padstone_length" in fields
    assert not fields & {"wall_thickness", "bearing_length", "flange_width", "a1"}
    changed = [e for e in root.iter() if e.get("data-changed") == "true"]
    assert any(
        e.get("data-role") == "padstone" and e.get("data-length-mm") == "330" for e in changed
    )
    # Both drawn at one scale, so sizes compare by eye.
    scales = {
        g.get("data-scale") for g in root.iter(f"{SVG}g") if g.get("data-view") == "elevation"
    }
    assert len(scales) == 1


# --- a site with something to record ------------------------------------------------------------


@pytest.fixture
def recorded(app, db, site, people):
    """One bearing measured as designed and released, one measured short and accepted."""
    now = datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
    out = {}
    for reference, pad_length in (("GF-B1-E", None), ("GF-B2-N", 300.0)):
        bearing = store.bearing_by_reference(db, site_id=site["id"], reference=reference)
        d = bearing["design_input"]
        pad = d["padstone"]
        measurements = {
            "bearing_length": d["beam"]["bearing_length"],
            "padstone_present": pad is not None,
            "wall_thickness": d["wall"]["thickness"],
            "masonry_group": d["masonry"]["group"],
        }
        if pad:
            measurements |= {
                "padstone_length": pad_length or pad["length"],
                "padstone_width": pad["width"],
                "padstone_depth": pad["depth"],
            }
        if d["wall"]["a1"] is not None:
            measurements["a1"] = d["wall"]["a1"]
        record_uuid = str(uuid.uuid4())
        stored, _ = services.record_as_built(
            db,
            site=site,
            bearing=bearing,
            uuid=record_uuid,
            measured_at=now,
            design_revision=1,
            measurements=measurements,
            checklist={"bedded": True, "cracks": False, "level": True},
            notes="Measured with a tape; invented test record.",
            inspector_id=people["inspector"].id,
        )
        with app.app_context():
            services.store_photo(
                db,
                site=site,
                record_uuid=record_uuid,
                photo=ingest_photo(make_test_jpeg(640, 480)),
                photos=photo_store(),
                user_id=people["inspector"].id,
            )
        bearing = store.get_bearing(db, site_id=site["id"], bearing_id=bearing["id"])
        if bearing["state"] == "engineer to decide":
            services.decide(
                db,
                site=site,
                bearing=bearing,
                kind="accept",
                reason="Shorter padstone checked as built; accept.",
                engineer_id=people["engineer"].id,
            )
            bearing = store.get_bearing(db, site_id=site["id"], bearing_id=bearing["id"])
        out[reference] = bearing
    b = out["GF-B1-E"]
    assert b["state"] == "within design", b["state"]
    services.release(
        db,
        site=site,
        bearing=b,
        contractor_id=people["contractor"].id,
        contractor_name="Cora Contractor for Invented Build Ltd",
        statement="Inspected and released for closing up.",
    )
    assert out["GF-B2-N"]["state"] == "accepted"
    return {
        k: store.get_bearing(db, site_id=site["id"], bearing_id=v["id"]) for k, v in out.items()
    }


# --- the data export ----------------------------------------------------------------------------


def test_the_exported_schedule_imports_into_a_new_site_with_the_same_design_inputs(
    db, site, people
):
    text = export.schedule_csv(collect(db, site["id"]))
    basis, review = services.default_site_settings()
    fresh = store.create_site(
        db,
        name="Copy of the schedule",
        address="",
        code_basis=basis,
        review_settings=review,
        created_by=people["engineer"].id,
    )
    report = services.import_schedule(db, site=fresh, text=text, user_id=people["engineer"].id)
    assert report.ok, report.errors
    before = {b["reference"]: b for b in store.list_bearings(db, site_id=site["id"])}
    after = {b["reference"]: b for b in store.list_bearings(db, site_id=fresh["id"])}
    assert set(before) == set(after) and before
    for ref, b in before.items():
        assert _same(b["design_input"], after[ref]["design_input"]), ref
        assert after[ref]["location"] == b["location"]
        assert after[ref]["design_utilisation"] == pytest.approx(b["design_utilisation"])
        assert export.schedule_gaps(b["design_input"]) == []


def _same(a, b) -> bool:
    """Numbers equal to 1e-9 relative (kN and N travel through text), the rest exactly."""
    if isinstance(a, dict) and isinstance(b, dict):
        return a.keys() == b.keys() and all(_same(a[k], b[k]) for k in a)
    if isinstance(a, float) or isinstance(b, float):
        return (
            isinstance(a, (int, float))
            and isinstance(b, (int, float))
            and math.isclose(a, b, rel_tol=1e-9)
        )
    return a == b


def test_the_schedule_says_which_inputs_it_cannot_carry():
    d = input_to_dict(across_on_padstone())  # normalised unit strength: no column for it
    assert export.schedule_gaps(d) == ["masonry.unit_strength_is_normalised"]


def test_the_zip_holds_every_kind_of_row_with_the_caution(db, site, recorded):
    data = export.csv_zip(collect(db, site["id"]))
    with zipfile.ZipFile(io.BytesIO(data)) as z:
        names = set(z.namelist())
        assert names == {"README.txt", *export.CSV_FILES}
        read = {
            n: list(csv.DictReader(io.StringIO(z.read(n).decode("utf-8-sig"))))
            for n in export.CSV_FILES
        }
        assert "competent engineer" in z.read("README.txt").decode()
    assert len(read["schedule.csv"]) == len(store.list_bearings(db, site_id=site["id"]))
    assert {r["reference"] for r in read["records.csv"]} == {"GF-B1-E", "GF-B2-N"}
    assert [r["kind"] for r in read["decisions.csv"]] == ["accept"]
    assert read["releases.csv"][0]["signed_as"] == "Cora Contractor for Invented Build Ltd"
    kinds = {r["kind"] for r in read["events.csv"]}
    assert {"site created", "bearing added", "record received", "decision", "release"} <= kinds
    released = next(r for r in read["bearings.csv"] if r["reference"] == "GF-B1-E")
    assert released["state"] == "released" and released["released_by"]


def test_free_text_that_a_spreadsheet_would_run_is_defused(db, site, people):
    bearing = store.list_bearings(db, site_id=site["id"])[0]
    services.record_as_built(
        db,
        site=site,
        bearing=bearing,
        uuid=str(uuid.uuid4()),
        measured_at=datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
        design_revision=1,
        measurements={},
        checklist={},
        notes='=HYPERLINK("http://example.test")',
        inspector_id=people["inspector"].id,
    )
    rows = list(csv.DictReader(io.StringIO(export.records_csv(collect(db, site["id"])))))
    assert rows[0]["notes"].startswith("'=")


def test_the_json_export_holds_everything_and_parses(db, site, recorded):
    data = json.loads(export.json_bytes(collect(db, site["id"])))
    assert data["caution"] == cli.CAUTION
    assert data["site"]["code_basis"]["name"] == "EC6 + UK NA"
    by_ref = {b["reference"]: b for b in data["bearings"]}
    b = by_ref["GF-B2-N"]
    assert b["records"][0]["photos"] and b["decisions"][0]["kind"] == "accept"
    assert b["design_result"]["spread"]["sigma_max"] > 0
    assert by_ref["GF-B1-E"]["releases"][0]["contractor_name"].startswith("Cora")


# --- the PDF ------------------------------------------------------------------------------------


def _text(data: bytes) -> str:
    """The words of the whole PDF, with table cells' line wrapping taken out."""
    reader = PdfReader(io.BytesIO(data))
    return " ".join(" ".join(page.extract_text().split()) for page in reader.pages)


def test_the_pdf_parses_back_with_each_bearings_reference_utilisation_decision_and_release(
    client_as, db, site, recorded
):
    r = client_as("viewer").get(f"/sites/{site['id']}/record.pdf")
    assert r.status_code == 200 and r.mimetype == "application/pdf"
    disposition = r.headers["Content-Disposition"]
    assert disposition.startswith('attachment; filename="tanner-s-yard')
    assert disposition.endswith('-site-record.pdf"')
    text = _text(r.data)
    assert "Site record" in text and "competent engineer" in text
    for b in store.list_bearings(db, site_id=site["id"]):
        assert f"Bearing {b['reference']}" in text
        assert f"{b['design_utilisation']:.2f}" in text
    for b in recorded.values():
        latest = store.get_record(db, site_id=site["id"], uuid=b["latest_record_uuid"])
        assert f"{latest['utilisation']:.2f}" in text
    assert "Decision: accept as built" in text
    assert "Shorter padstone checked as built; accept." in text
    assert "Cora Contractor for Invented Build Ltd" in text
    assert "Released for closing up" in text
    assert "σ_max" in text  # symbols survive with the Unicode font
    assert "Appendix: audit trail" in text


def test_the_pdf_is_made_without_a_unicode_font_by_spelling_symbols_out(
    app, db, site, recorded, monkeypatch
):
    monkeypatch.setattr(pdf, "find_font", lambda: None)
    with app.app_context():
        data = pdf.pdf_bytes(collect(db, site["id"]), photo_store=photo_store())
    text = _text(data)
    assert "GF-B2-N" in text and "sigma_max" in text and "σ" not in text


def test_progress_is_reported_to_the_end(app, db, site):
    seen = []
    buffer = io.BytesIO()
    pdf.write_pdf(collect(db, site["id"]), buffer, progress=lambda d, t, w: seen.append((d, t)))
    assert seen[-1][0] == seen[-1][1] == len(store.list_bearings(db, site_id=site["id"])) + 3
    assert buffer.getvalue().startswith(b"%PDF")


# --- the web and the command --------------------------------------------------------------------


@pytest.mark.parametrize(
    "path", ["record", "record.json", "record.pdf", "export.zip", "export.json"]
)
def test_a_site_the_user_is_not_on_is_refused_as_if_it_did_not_exist(client_as, site, path):
    r = client_as("outsider").get(f"/sites/{site['id']}/{path}")
    assert r.status_code == 404
    assert b"GF-B1" not in r.data


def test_the_record_page_links_every_download(client_as, site):
    r = client_as("contractor").get(f"/sites/{site['id']}/record")
    assert r.status_code == 200
    page = r.get_data(as_text=True)
    for path in ("record.pdf", "export.zip", "export.json"):
        assert f"/sites/{site['id']}/{path}" in page
    assert "competent engineer" in page
    r = client_as("viewer").get(f"/sites/{site['id']}/export.zip")
    assert r.status_code == 200 and r.headers["Content-Disposition"].startswith("attachment;")


def test_review_result_and_bearing_pages_show_the_drawing_inline(client_as, db, site, recorded):
    b = recorded["GF-B2-N"]
    engineer = client_as("engineer")
    pages = [
        f"/sites/{site['id']}/bearings/{b['id']}/review",
        f"/sites/{site['id']}/bearings/{b['id']}",
        f"/sites/{site['id']}/records/{b['latest_record_uuid']}",
    ]
    for url in pages:
        r = engineer.get(url)
        assert r.status_code == 200, url
        html = r.get_data(as_text=True)
        start = html.index("<svg")
        svg = html[start : html.index("</svg>", start) + len("</svg>")]
        root = ET.fromstring(svg)
        assert "style" not in svg.split(">", 1)[0] and " style=" not in svg
        assert {g.get("data-view") for g in root.iter(f"{SVG}g")} >= {"elevation", "section"}
        assert any(e.get("data-field") == "padstone_length" for e in root.iter()), url


def test_the_record_command_writes_the_pdf_with_a_progress_bar(app, db, site, tmp_path, capsys):
    out = tmp_path / "record.pdf"
    rc = cli.main(["record", site["name"], "--db", app.config["DB_PATH"], "--out", str(out)])
    captured = capsys.readouterr()
    assert rc == 0 and out.read_bytes().startswith(b"%PDF")
    assert "#" in captured.err and "audit trail" in captured.err
    assert "competent engineer" in captured.out
    assert (
        cli.main(["record", "No such site", "--db", app.config["DB_PATH"], "--out", str(out)]) == 2
    )
    assert (
        cli.main(["record", site["id"], "--db", str(tmp_path / "none.db"), "--out", str(out)]) == 2
    )
