"""The bearing drawing (SVG): elevation and section at the drawing's scale, the pressure
under the padstone, what differs as built, and the drawing inline on the pages.

The bearings are the demo schedule's and kit/bearing_inputs.py's (invented loads on ordinary
sizes of the trade); the expected values are the model's own, read back from the result,
so these tests hold the drawing and the record to the numbers they show.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET

import pytest

from kit.bearing_inputs import across_on_padstone, brick_in_line_end
from sitecheck.bearing import (
    bs5628,
    check_bearing,
    ec6_uk_na,
)
from sitecheck.bearing.serial import input_to_dict
from sitecheck.report.drawing import FONT, PHONE_MIN_PX, bearing_svg, side_by_side_svg

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
