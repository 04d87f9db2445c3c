"""The site record: the drawing, the data export and the PDF, and who may have them.

The bearings are the demo schedule's and tests/kit/bearing_inputs.py's (invented loads on ordinary
sizes of the trade); the expected values are the model's own, read back from the result,
so these tests hold the drawing and the record to the numbers they show.
"""

from __future__ import annotations

import csv
import io
import json
import math
import threading
import uuid
import xml.etree.ElementTree as ET
import zipfile
from dataclasses import MISSING, fields, replace
from datetime import UTC, datetime, timedelta
from pathlib import Path

import pytest
from pypdf import PdfReader

from kit.bearing_inputs import across_on_padstone, brick_in_line_end
from kit.photo_samples import make_test_jpeg
from kit.web import new_site
from sitecheck import cli, services, store
from sitecheck.bearing import (
    IN_LINE,
    Beam,
    BearingInput,
    Load,
    Masonry,
    Padstone,
    Wall,
    bs5628,
    check_bearing,
    ec6_uk_na,
)
from sitecheck.bearing.serial import input_to_dict
from sitecheck.csvcells import FORMULA_STARTS
from sitecheck.demo import BRICK_WING_NAME, SITE_NAME, build_demo
from sitecheck.demo import schedule_csv as demo_schedule_csv
from sitecheck.photos import ingest_photo
from sitecheck.report import export, jobs, pdf
from sitecheck.report.collect import collect
from sitecheck.report.drawing import FONT, PHONE_MIN_PX, bearing_svg, side_by_side_svg
from sitecheck.schedule import parse_schedule, recheck_rows
from sitecheck.web import photo_store
from sitecheck.web import record as record_web

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
    shown = label.get("data-shown")
    # Four significant figures, the one formatter's rule: 0.6757, not 0.68 or 6.757e-01.
    assert len(shown.replace("0.", "", 1).lstrip("0")) == 4 and "e" not in shown
    assert float(shown) == pytest.approx(result["spread"]["sigma_max"], rel=5e-4)
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
    fresh = new_site(db, name="Copy of the schedule", created_by=people["engineer"].id)
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


def test_the_schedule_says_which_inputs_would_not_come_back(monkeypatch):
    d = input_to_dict(every_field())
    assert export.schedule_gaps(d) == []
    written = export.schedule_row
    # As if the schedule had no column for shell bedding: the gap is found by reading back.
    monkeypatch.setattr(
        export, "schedule_row", lambda *a: written(*a) | {"shell_bedded": "", "e_mk": ""}
    )
    assert export.schedule_gaps(d) == ["e_mk", "masonry.shell_bedded"]


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


def test_no_cell_of_any_exported_csv_starts_a_formula(db, site, people):
    """Text that a spreadsheet would run, typed in every free-text place the data export
    writes: in every CSV each such cell is guarded, and a negative measured offset stays a
    number."""
    hostile = {}
    for role, name in (("engineer", "=Eng"), ("inspector", "@Insp"), ("contractor", "+Con")):
        user = store.create_user(
            db, email=f"formula.{role}@example.test", name=name, password_hash="x"
        )
        store.add_membership(
            db, user_id=user["id"], site_id=site["id"], role=role, invited_by=people["engineer"].id
        )
        hostile[role] = user["id"]
    bearing = services.add_bearing(
        db,
        site=site,
        reference="=HYPERLINK(1)",
        location="-grid, invented",
        design=across_on_padstone(),
        user_id=hostile["engineer"],
    )
    record_uuid = str(uuid.uuid4())
    services.record_as_built(
        db,
        site=site,
        bearing=bearing,
        uuid=record_uuid,
        measured_at=datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
        design_revision=1,
        measurements={"padstone_length": 300.0, "offset_across": -20.0},
        checklist={"packing": 0.0},
        notes="-notes",
        inspector_id=hostile["inspector"],
    )
    bearing = store.get_bearing(db, site_id=site["id"], bearing_id=bearing["id"])
    assert bearing["state"] == "engineer to decide"
    services.decide(
        db,
        site=site,
        bearing=bearing,
        kind="accept",
        reason="+reason",
        engineer_id=hostile["engineer"],
    )
    bearing = store.get_bearing(db, site_id=site["id"], bearing_id=bearing["id"])
    services.release(
        db,
        site=site,
        bearing=bearing,
        contractor_id=hostile["contractor"],
        contractor_name="@signed",
        statement="\tstatement",
    )
    bearing = store.get_bearing(db, site_id=site["id"], bearing_id=bearing["id"])
    services.reopen(
        db,
        site=site,
        bearing=bearing,
        role="engineer",
        reason="\rreason",
        engineer_id=hostile["engineer"],
    )

    with zipfile.ZipFile(io.BytesIO(export.csv_zip(collect(db, site["id"])))) as z:
        read = {
            n: list(csv.reader(io.StringIO(z.read(n).decode("utf-8-sig"), newline="")))
            for n in export.CSV_FILES
        }
    for name, (header, *rows) in read.items():
        guarded = 0
        for row in rows:
            for column, value in zip(header, row, strict=True):
                if value.startswith(FORMULA_STARTS):
                    float(value)  # only a number may begin with a sign
                    assert column.startswith("measured_") or column in (
                        "offset_along",
                        "offset_across",
                    ), (name, column, value)
                guarded += value.startswith("'")
        assert guarded, f"{name} has no hostile text to guard: the test would prove nothing"
    (record,) = [r for r in read["records.csv"][1:] if r[2] == "'=HYPERLINK(1)"]
    by_column = dict(zip(read["records.csv"][0], record, strict=True))
    assert by_column["measured_offset_across"] == "-20"
    assert by_column["notes"] == "'-notes" and by_column["inspector"] == "'@Insp"


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
    app, client_as, db, site, recorded
):
    viewer = client_as("viewer")
    _start(viewer, site["id"])
    _finished(app, site["id"])
    r = viewer.get(f"/sites/{site['id']}/record.pdf")
    data, disposition = r.data, r.headers["Content-Disposition"]
    r.close()
    assert r.status_code == 200 and r.mimetype == "application/pdf"
    assert disposition.startswith("attachment; filename=tanner-s-yard")
    assert disposition.endswith("-site-record.pdf")
    text = _text(data)
    assert "Site record" in text and "competent engineer" in text
    for b in store.list_bearings(db, site_id=site["id"]):
        assert f"Bearing {b['reference']}" in text
        assert f"{b['design_utilisation']:.2f}" in text
    for b in recorded.values():
        latest = store.get_record(db, site_id=site["id"], uuid=b["latest_record_uuid"])
        assert f"{latest['utilisation']:.2f}" in text
    assert "Decision: Accept as built" in text
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


def test_the_record_page_offers_every_file_made_in_the_background(client_as, site):
    r = client_as("contractor").get(f"/sites/{site['id']}/record")
    assert r.status_code == 200
    page = r.get_data(as_text=True)
    for kind in ("pdf", "csv", "json"):
        assert f'action="/sites/{site["id"]}/record/{kind}"' in page, kind
    assert "Make the data export (CSV, zipped)" in page and "Make the data export (JSON)" in page
    assert "competent engineer" in page


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


# --- every design input through the schedule ----------------------------------------------------

# The columns added so that the schedule carries every design input; a schedule written
# before them leaves them out.
NEWER_COLUMNS = (
    "padstone_f_ck",
    "padstone_reinforced",
    "effective_thickness",
    "unit_strength_normalised",
    "unit_conditioning",
    "shell_bedded",
    "manufacturing_control",
    "construction_control",
    "e_mk",
    "phi_m",
    "beta_s",
)


def every_field(**changes) -> BearingInput:
    """Every optional design input away from its default, in numbers that come back the same
    only if every digit is written (invented values the core accepts on both bases)."""
    inp = BearingInput(
        load=Load(reaction=61_234.567890123, wall_load=0.1 + 0.2),
        beam=Beam(
            flange_width=146.1,
            bearing_length=152.4,
            offset_along=7.25,
            offset_across=-3.1,
            reaction_at="near-third",
        ),
        wall=Wall(
            thickness=215.0,
            height_to_bearing=2475.5,
            a1=420.5,
            a2=1333.3,
            clear_height=2600.0,
            effective_height=2210.0,
            effective_thickness=205.0,
        ),
        masonry=Masonry(
            material="calcium silicate",
            unit_strength=17.5,
            unit_strength_is_normalised=True,
            unit_height=215.0,
            unit_width=100.0,
            conditioning="water-soaked",
            mortar="M6",
            f_k=4.3,
            shell_bedded=True,
            collar_joint=True,
            unit_category="II",
            execution_class=1,
            manufacturing_control="special",
            construction_control="special",
            gamma_M=2.45,
        ),
        padstone=Padstone(
            length=440.0,
            width=200.0,
            depth=140.0,
            concrete="C30/37",
            f_ck=28.5,
            reinforced=True,
            position_across="offset",
            offset_across=3.25,
        ),
        bearing_type=2,
        e_mk=12.5,
        phi_m=0.77,
        beta_s=0.81,
    )
    return replace(inp, **changes) if changes else inp


def in_line_lintel(**changes) -> BearingInput:
    """The choices every_field leaves at their defaults: in line, a lintel, Group 2."""
    inp = BearingInput(
        load=Load(reaction=18_500.25),
        beam=Beam(flange_width=100.0, bearing_length=150.0, orientation=IN_LINE, member="lintel"),
        wall=Wall(thickness=100.0, height_to_bearing=2250.0, a1=0.0),
        masonry=Masonry(
            material="clay",
            group=2,
            unit_strength=25.0,
            unit_height=65.0,
            unit_width=102.5,
            mortar="M4",
        ),
        padstone=Padstone(length=440.0, width=100.0, depth=215.0),
    )
    return replace(inp, **changes) if changes else inp


ROUND_TRIP_BEARINGS = {
    "ALL-1": every_field(),
    "ALL-2": in_line_lintel(),
    "ALL-3": in_line_lintel(padstone=None, wall=Wall(100.0, 2250.0, a1=300.0)),
}


def test_the_round_trip_bearings_set_every_optional_input_somewhere():
    """Guards the round-trip test itself: a new input with a default fails here until one of
    the bearings sets it."""
    for part, cls in (
        (None, BearingInput),
        ("load", Load),
        ("beam", Beam),
        ("wall", Wall),
        ("masonry", Masonry),
        ("padstone", Padstone),
    ):
        for f in fields(cls):
            if f.default is MISSING:
                continue
            values = [
                getattr(getattr(inp, part) if part else inp, f.name)
                for inp in ROUND_TRIP_BEARINGS.values()
                if (getattr(inp, part) if part else inp) is not None
            ]
            assert any(v != f.default for v in values), f"{part}.{f.name} is never set"


def _exactly(a: dict, b: dict) -> bool:
    """Same keys, same values, same types: JSON writes 133 and 133.0 differently and
    every float with all its digits."""
    return json.dumps(a, sort_keys=True) == json.dumps(b, sort_keys=True)


def _copy_schedule(db, site: dict, engineer_id: int) -> dict:
    """Export the site's schedule, import it into a new site on the same basis, and return
    the new site."""
    text = export.schedule_csv(collect(db, site["id"]))
    fresh = store.create_site(
        db,
        name=f"Copy of {site['name']}",
        address="",
        code_basis=site["code_basis"],
        review_settings=site["review_settings"],
        created_by=engineer_id,
    )
    report = services.import_schedule(db, site=fresh, text=text, user_id=engineer_id)
    assert report.ok, report.errors
    return fresh


def _assert_same_schedule(db, site: dict, fresh: dict) -> None:
    before = {b["reference"]: b for b in store.list_bearings(db, site_id=site["id"])}
    after = {b["reference"]: b for b in store.list_bearings(db, site_id=fresh["id"])}
    assert set(before) == set(after) and before
    for ref, b in before.items():
        assert _exactly(b["design_input"], after[ref]["design_input"]), ref
        assert after[ref]["location"] == b["location"]
        assert after[ref]["design_utilisation"] == b["design_utilisation"], ref


@pytest.mark.parametrize("basis_name", ["EC6 + UK NA", "BS 5628-1"])
def test_every_design_input_comes_back_exactly_through_the_exported_schedule(
    db, people, basis_name
):
    basis, review = services.default_site_settings(basis_name)
    site = store.create_site(
        db,
        name=f"Every input ({basis_name})",
        address="",
        code_basis=basis,
        review_settings=review,
        created_by=people["engineer"].id,
    )
    for reference, inp in ROUND_TRIP_BEARINGS.items():
        services.add_bearing(
            db,
            site=site,
            reference=reference,
            location=f"{reference}, invented, with a comma",
            design=inp,
            user_id=people["engineer"].id,
        )
    for reference, location in FORMULA_TEXT.items():
        services.add_bearing(
            db,
            site=site,
            reference=reference,
            location=location,
            design=every_field(),
            user_id=people["engineer"].id,
        )
    written = list(csv.DictReader(io.StringIO(export.schedule_csv(collect(db, site["id"])))))
    for row in written:
        for column in ("reference", "location"):
            assert not row[column].startswith(FORMULA_STARTS), row[column]
        # A negative number is a number: written as it is, not guarded as text.
        if row["reference"].startswith("ALL-1"):
            assert row["offset_across"] == "-3.1"
    assert {r["reference"] for r in written} >= {"'=1+2", "'-B3", "''=B5"}
    fresh = _copy_schedule(db, store.get_site(db, site["id"]), people["engineer"].id)
    _assert_same_schedule(db, site, fresh)
    stored = {b["reference"]: b for b in store.list_bearings(db, site_id=fresh["id"])}
    assert stored["ALL-1"]["design_input"] == input_to_dict(every_field())
    assert {ref: stored[ref]["location"] for ref in FORMULA_TEXT} == FORMULA_TEXT


# References and locations that a spreadsheet would run as formulas (and text that looks
# already guarded), each kept exactly through the schedule's export and import. (A leading
# tab or carriage return is guarded too, tests/test_csvcells.py, but the store keeps no
# white space around a reference or location.)
FORMULA_TEXT = {
    "=1+2": '=HYPERLINK("http://example.test","open")',
    "+B2": "-20 mm off the grid, east",
    "-B3": "@SUM(A1:A9)",
    "@B4": "+44 20 7946 0000 for site access",
    "'=B5": "'=B5 as typed, with its apostrophe",
    "''-B6": "'@ guarded by hand",
}


def test_both_demo_sites_come_back_exactly_through_the_exported_schedule(tmp_path):
    build_demo(tmp_path / "demo.db")
    db = store.open_db(tmp_path / "demo.db")
    try:
        for name in (SITE_NAME, BRICK_WING_NAME):
            (site,) = store.sites_named(db, name)
            fresh = _copy_schedule(db, site, site["created_by"])
            _assert_same_schedule(db, site, fresh)
    finally:
        db.conn.close()


def _without(text: str, columns) -> str:
    rows = list(csv.DictReader(io.StringIO(text)))
    kept = [c for c in rows[0] if c not in columns]
    out = io.StringIO()
    w = csv.DictWriter(out, fieldnames=kept, extrasaction="ignore", lineterminator="\n")
    w.writeheader()
    w.writerows(rows)
    return out.getvalue()


def test_a_schedule_written_before_the_newer_columns_imports_as_before():
    full = demo_schedule_csv()
    old = _without(full, NEWER_COLUMNS)
    assert not set(NEWER_COLUMNS) & set(old.splitlines()[0].split(","))
    a, b = parse_schedule(full), parse_schedule(old)
    assert not a.errors and not b.errors and not b.unknown_columns
    assert [r.design for r in a.rows] == [r.design for r in b.rows]
    first = b.rows[0].design
    # The core's defaults (sitecheck/bearing/inputs.py), not values of the schedule's own.
    assert first.padstone.reinforced is False and first.padstone.f_ck is None
    assert first.masonry.conditioning == "air-dried" and first.masonry.shell_bedded is False
    assert first.masonry.manufacturing_control == "normal" and first.e_mk is None


def _one_row(**cells) -> str:
    base = {
        "reference": "X1",
        "reaction_kN": "40",
        "flange_width": "133",
        "bearing_length": "150",
        "wall_thickness": "215",
        "height_to_bearing": "2400",
        "f_k": "4",
    }
    row = base | cells
    return ",".join(row) + "\n" + ",".join(row.values()) + "\n"


@pytest.mark.parametrize(
    "cells, column, says",
    [
        ({"padstone_f_ck": "30"}, "padstone_f_ck", "the row has no padstone"),
        ({"padstone_reinforced": "no"}, "padstone_reinforced", "the row has no padstone"),
        (
            {
                "padstone_length": "440",
                "padstone_width": "215",
                "padstone_depth": "140",
                "padstone_reinforced": "steel",
            },
            "padstone_reinforced",
            "yes or no",
        ),
        ({"shell_bedded": "perhaps"}, "shell_bedded", "yes or no"),
        ({"unit_strength_normalised": "2"}, "unit_strength_normalised", "yes or no"),
        ({"e_mk": "twelve"}, "e_mk", "a number in mm"),
    ],
)
def test_a_bad_value_in_a_newer_column_is_refused_by_name(cells, column, says):
    parsed = parse_schedule(_one_row(**cells))
    assert not parsed.rows
    (error,) = parsed.errors
    assert (error.row, error.column) == (2, column) and says in error.message


@pytest.mark.parametrize(
    "cells, column",
    [
        (
            {
                "padstone_length": "440",
                "padstone_width": "215",
                "padstone_depth": "140",
                "padstone_f_ck": "200",
            },
            "padstone_f_ck",
        ),
        ({"unit_conditioning": "wet"}, "unit_conditioning"),
        ({"manufacturing_control": "tight"}, "manufacturing_control"),
        ({"effective_thickness": "0.2"}, "effective_thickness"),
        ({"phi_m": "1.5"}, "phi_m"),
    ],
)
def test_a_value_the_core_refuses_names_its_newer_column(cells, column):
    parsed = parse_schedule(_one_row(**cells))
    assert not parsed.errors
    outcomes, errors = recheck_rows(parsed, ec6_uk_na())
    assert not outcomes
    assert [(e.row, e.column) for e in errors] == [(2, column)]


def test_a_reaction_is_read_in_newtons_to_the_last_digit():
    (row,) = parse_schedule(_one_row(reaction_kN="61.234567890123")).rows
    assert row.design.load.reaction == 61234.567890123
    assert export.schedule_row("X1", "", "", input_to_dict(row.design))["reaction_kN"] == (
        "61.234567890123"
    )


# --- print copies in the PDF --------------------------------------------------------------------


def _photo_rows(db, site_id: str) -> list[dict]:
    return [
        p
        for r in store.records_for_site(db, site_id=site_id)
        for p in store.photos_for_record(db, site_id=site_id, record_uuid=r["uuid"])
    ]


def _embedded_jpegs(data: bytes) -> list[tuple[bytes, tuple[int, int]]]:
    """Each page's pictures: the stream as the PDF holds it, and its pixel size."""
    reader = PdfReader(io.BytesIO(data))
    found = []
    for page in reader.pages:
        xobjects = page["/Resources"].get("/XObject", {})
        for name in xobjects:
            stream = xobjects[name].get_object()
            if stream["/Subtype"] == "/Image":
                assert stream["/Filter"] == "/DCTDecode"
                found.append((stream._data, (stream["/Width"], stream["/Height"])))
    return found


def test_an_upload_keeps_a_print_copy_and_the_pdf_embeds_it_as_stored(app, db, site, recorded):
    rows = _photo_rows(db, site["id"])
    assert len(rows) == 2
    with app.app_context():
        ps = photo_store()
        kept = {ps.open_print(p["sha256"]) for p in rows}  # made when the photo came in
        data = pdf.pdf_bytes(collect(db, site["id"]), photo_store=ps)
    embedded = _embedded_jpegs(data)
    assert len(embedded) == len(rows)
    assert {d for d, _size in embedded} == kept  # byte for byte: nothing decoded or re-encoded
    # 640 x 480 uploads print at 448 px on the long edge (PhotoLimits.print_long_edge).
    assert {size for _d, size in embedded} == {(448, 336)}


def test_a_photo_stored_before_print_copies_is_printed_from_one_made_then_and_kept(
    app, db, site, recorded
):
    rows = _photo_rows(db, site["id"])
    with app.app_context():
        ps = photo_store()
        for sha in {p["sha256"] for p in rows}:  # both records have the same picture
            ps.print_path_for(sha).unlink()
        data = pdf.pdf_bytes(collect(db, site["id"]), photo_store=ps)
        kept = {ps.open_print(p["sha256"]) for p in rows}
    embedded = _embedded_jpegs(data)
    assert len(embedded) == len(rows) and {d for d, _s in embedded} == kept
    assert {size for _d, size in embedded} == {(448, 336)}


# --- the record made in the background, with its progress -----------------------------------------


def _token(client) -> str:
    return client.get("/api/csrf").get_json()["token"]


def _start(client, site_id: str):
    return client.post(f"/sites/{site_id}/record/pdf", data={"csrf_token": _token(client)})


def _finished(app, site_id: str) -> jobs.Job:
    record_jobs = app.extensions["record_jobs"]
    job = record_jobs.latest(site_id)
    assert record_jobs.wait(job.id, timeout=120), "the site record took over two minutes"
    return record_jobs.latest(site_id)


class HeldRecord:
    """Stands in for the PDF maker: reports 1 of 3 bearings, then waits to be let go, so a
    test can look at a job part way."""

    def __init__(self):
        self.reached, self.go = threading.Event(), threading.Event()
        self.failure: Exception | None = None

    def factory(self, db_path, site_id, *, photo_store=None, selection=None):
        def make(out, progress):
            progress(0, 3, "")
            progress(1, 3, "GF-B1-E")
            self.reached.set()
            self.go.wait(60)
            if self.failure is not None:
                raise self.failure
            progress(3, 3, "audit trail")
            out.write_bytes(b"%PDF-1.4\n% a stand-in for the site record\n%%EOF\n")

        return make


@pytest.fixture
def held(monkeypatch):
    monkeypatch.setattr(jobs, "_WRITE_EVERY_S", 0.0)  # every step written, for the test to see
    holder = HeldRecord()
    monkeypatch.setattr(record_web, "site_record", holder.factory)
    yield holder
    holder.go.set()  # never leave a thread waiting


def test_the_record_is_made_in_the_background_and_downloaded_when_ready(
    app, client_as, db, site, recorded
):
    viewer = client_as("viewer")
    r = _start(viewer, site["id"])
    assert r.status_code == 302
    assert r.headers["Location"].endswith(f"/sites/{site['id']}/record/pdf")
    job = _finished(app, site["id"])
    count = len(store.list_bearings(db, site_id=site["id"]))
    assert (job.state, job.bearings_done, job.bearings) == ("done", count, count)
    # The file is kept under the app's own folder, beside the database.
    path = app.extensions["record_jobs"].pdf_path(job)
    assert path.is_file()
    assert path.is_relative_to(Path(app.config["DB_PATH"]).parent / "records")

    page = viewer.get(f"/sites/{site['id']}/record/pdf").get_data(as_text=True)
    assert "Ready" in page and f"{count} bearings" in page
    assert f'href="/sites/{site["id"]}/record/pdf/file"' in page
    assert 'http-equiv="refresh"' not in page and "data-poll" not in page

    r = viewer.get(f"/sites/{site['id']}/record/pdf/file")
    assert r.status_code == 200 and r.mimetype == "application/pdf"
    assert r.headers["Content-Disposition"].startswith("attachment; filename=tanner-s-yard")
    text = _text(r.data)
    r.close()
    for b in store.list_bearings(db, site_id=site["id"]):
        assert f"Bearing {b['reference']}" in text
    assert "Cora Contractor for Invented Build Ltd" in text and "competent engineer" in text


def test_progress_shows_bearings_done_and_the_page_refreshes_itself_until_ready(
    app, client_as, site, held
):
    inspector = client_as("inspector")
    _start(inspector, site["id"])
    assert held.reached.wait(60)
    url = f"/sites/{site['id']}/record/pdf"
    html = inspector.get(url).get_data(as_text=True)
    assert "Making the site record: 1 of 3 bearings, last done GF-B1-E." in html
    assert '<progress max="3" value="1"' in html
    # Without JavaScript the page refreshes itself; with it, record.js polls the .json.
    assert '<noscript><meta http-equiv="refresh" content="2"></noscript>' in html
    assert f'data-poll="{url}.json"' in html and "/static/record.js" in html
    state = inspector.get(f"{url}.json").get_json()["job"]
    assert (state["state"], state["bearings_done"], state["bearings"]) == ("making", 1, 3)
    assert state["running"] is True and state["current"] == "GF-B1-E"
    assert state["status"] == "Making the site record: 1 of 3 bearings, last done GF-B1-E."

    # Asking again while it is being made joins it rather than making a second one.
    engineer = client_as("engineer")
    assert _start(engineer, site["id"]).status_code == 302
    assert "already being made" in engineer.get(url).get_data(as_text=True)
    assert len(app.extensions["record_jobs"].jobs(site["id"])) == 1
    assert inspector.get(f"{url}/file").status_code == 302  # nothing finished yet

    held.go.set()
    assert _finished(app, site["id"]).state == "done"
    html = inspector.get(url).get_data(as_text=True)
    assert 'http-equiv="refresh"' not in html and "Ready" in html
    r = inspector.get(f"{url}/file")
    assert r.status_code == 200 and r.data.startswith(b"%PDF-1.4\n% a stand-in")
    r.close()


def test_a_record_that_could_not_be_made_says_why_plainly_and_can_be_started_again(
    app, client_as, site, held
):
    held.failure = OSError(28, "No space left on device")
    engineer = client_as("engineer")
    _start(engineer, site["id"])
    assert held.reached.wait(60)
    held.go.set()
    job = _finished(app, site["id"])
    assert job.state == "failed"
    html = engineer.get(f"/sites/{site['id']}/record/pdf").get_data(as_text=True)
    assert 'role="alert"' in html
    assert "could not be made at bearing GF-B1-E (1 of 3 done)" in html
    assert "No space left on device" in html and "Nothing was kept" in html
    assert "Make it again" in html and "/record/pdf/file" not in html
    folder = app.extensions["record_jobs"].site_folder(site["id"])
    assert not list(folder.glob("*.pdf")) and not list(folder.glob("*.part"))
    assert engineer.get(f"/sites/{site['id']}/record/pdf.json").get_json()["job"]["error"]


def test_a_job_cut_off_by_a_restart_shows_as_stopped_and_does_not_block_a_new_one(
    app, client_as, db, site, held
):
    record_jobs = app.extensions["record_jobs"]
    an_hour_ago = datetime.now(UTC) - timedelta(hours=1)
    # A process began making the record an hour ago and was stopped part way.
    cut_off, how = store.start_record_job(
        db,
        job_id="ab" * 16,
        site_id=site["id"],
        user_id=None,
        version="an older site",
        file_kept=lambda _job: False,
        per_user=10,
        window_s=3600,
        stale_after_s=300,
        now=an_hour_ago,
    )
    assert how == "started"
    store.update_record_job(
        db, cut_off["id"], state="making", bearings_done=5, bearings=12, now=an_hour_ago
    )
    viewer = client_as("viewer")
    html = viewer.get(f"/sites/{site['id']}/record/pdf").get_data(as_text=True)
    assert "server was restarted" in html and 'http-equiv="refresh"' not in html
    _start(viewer, site["id"])
    assert held.reached.wait(60)
    assert record_jobs.latest(site["id"]).id != "ab" * 16
    assert store.get_record_job(db, "ab" * 16)["state"] == "stopped"


def test_the_record_in_the_making_is_refused_to_anyone_not_on_the_site(
    app, client_as, db, site, people
):
    engineer = client_as("engineer")
    _start(engineer, site["id"])
    _finished(app, site["id"])
    outsider = client_as("outsider")
    for path in ("record/pdf", "record/pdf.json", "record/pdf/file"):
        r = outsider.get(f"/sites/{site['id']}/{path}")
        assert r.status_code == 404, path
        assert b"%PDF" not in r.data and b"GF-B1" not in r.data
    assert _start(outsider, site["id"]).status_code == 404
    # Their own site gives them nothing of this one's.
    own = new_site(db, name="Outsider's own site", created_by=people["outsider"].id)
    assert outsider.get(f"/sites/{own['id']}/record/pdf/file").status_code == 302
    assert outsider.get(f"/sites/{own['id']}/record/pdf.json").get_json()["job"] is None
    # No token, no job.
    before = app.extensions["record_jobs"].jobs(site["id"])
    assert engineer.post(f"/sites/{site['id']}/record/pdf", data={}).status_code == 400
    assert app.extensions["record_jobs"].jobs(site["id"]) == before
    # Logged out: to the log-in page.
    anonymous = app.test_client()
    assert anonymous.get(f"/sites/{site['id']}/record/pdf/file").status_code == 302
    assert anonymous.get(f"/sites/{site['id']}/record/pdf.json").status_code == 401


def test_every_site_record_is_made_in_the_background_and_a_get_starts_nothing(
    app, client_as, db, site
):
    viewer = client_as("viewer")
    page = viewer.get(f"/sites/{site['id']}/record").get_data(as_text=True)
    assert f'action="/sites/{site["id"]}/record/pdf"' in page and "csrf_token" in page
    assert "Make the site record (PDF)" in page
    # The old address of the PDF made inside the request leads to the progress page.
    r = viewer.get(f"/sites/{site['id']}/record.pdf")
    assert r.status_code == 302 and r.headers["Location"].endswith(
        f"/sites/{site['id']}/record/pdf"
    )
    assert app.extensions["record_jobs"].jobs(site["id"]) == []


def test_a_site_keeps_its_newest_job_and_its_newest_finished_record(app, db, site, tmp_path):
    record_jobs = jobs.RecordJobs(tmp_path / "kept", app.config["DB_PATH"])
    site_id = site["id"]

    def made(out, progress):
        progress(1, 1, "B1")
        out.write_bytes(b"%PDF-1.4 stand-in")

    def broken(out, progress):
        progress(0, 1, "")
        raise ValueError("the drawing of B1 could not be made")

    started = []
    for n, make in enumerate((made, made, broken)):
        # Something changes on the site each time, so each asks for a new record.
        store.add_event(db, kind="site note", site_id=site_id, detail={"n": n})
        job, how = record_jobs.start(site_id, user_id=None, make=make)
        assert how == "started" and record_jobs.wait(job.id, timeout=30)
        started.append(job)
    first, second, third = started
    assert [j.id for j in record_jobs.jobs(site_id)] == [third.id, second.id, first.id]
    assert record_jobs.latest(site_id).state == jobs.FAILED
    assert "the drawing of B1 could not be made" in record_jobs.latest(site_id).error
    assert record_jobs.latest_done(site_id).id == second.id
    assert record_jobs.pdf_path(second).read_bytes() == b"%PDF-1.4 stand-in"
    # Only the newest job's files and the newest finished record are kept.
    assert not record_jobs.pdf_path(first).exists()
    assert record_jobs.jobs("site-2") == []  # each site's jobs are its own
    with pytest.raises(ValueError, match="site id"):
        record_jobs.site_folder("../site-1")
