"""The one number formatter: kN for forces, thousands separated, never an exponent."""

from __future__ import annotations

import json
import math
import re

from hypothesis import given
from hypothesis import strategies as st

from kit.bearing_inputs import across_on_padstone
from sitecheck.bearing import check_bearing, ec6_uk_na
from sitecheck.bearing.format import NO_CAPACITY, number, quantity, utilisation
from sitecheck.bearing.serial import input_to_dict
from sitecheck.cli import main
from sitecheck.report.drawing import bearing_svg

EXPONENT = re.compile(r"\d[eE][+-]?\d")


def test_forces_are_in_kilonewtons_and_line_loads_in_kilonewtons_per_metre():
    assert quantity(30_000.0, "N") == "30 kN"
    assert quantity(10_392.304845, "N") == "10.39 kN"
    assert quantity(35.0, "N/mm") == "35 kN/m"
    assert quantity(0.6757, "N/mm²") == "0.6757 N/mm²"


def test_areas_keep_every_whole_digit_with_commas():
    assert quantity(10_200.0, "mm²") == "10,200 mm²"
    assert quantity(123_456.7, "mm²") == "123,457 mm²"
    assert number(1_000_000.0) == "1,000,000"


def test_small_values_are_written_out_not_as_exponents():
    assert number(0.00012345) == "0.0001234"
    assert number(1e-7) == "0.0000001"


def test_ties_round_to_even_as_python_does():
    # 2062.5 and 1234.5 are exact binary values halfway between two whole numbers.
    assert number(2062.5) == "2,062"
    assert number(1235.5) == "1,236"
    assert number(9.9996) == "10"


def test_signs_text_and_missing_values():
    assert number(-0.0) == "0"
    assert number(-12.5) == "-12.5"
    assert number(12.5, plus=True) == "+12.5"
    assert quantity("M4") == "M4"
    assert quantity(None, "mm") == "—"


def test_no_capacity_reads_as_a_failure():
    assert utilisation(math.inf) == NO_CAPACITY == "no capacity (fails)"
    assert utilisation(None) == NO_CAPACITY
    assert utilisation(0.854) == "0.85"


@given(st.floats(allow_nan=False, allow_infinity=False))
def test_any_finite_number_is_plain_and_close(x):
    text = number(x)
    assert not EXPONENT.search(text)
    # Four significant figures: within half a unit of the fourth figure.
    assert math.isclose(float(text.replace(",", "")), x, rel_tol=5e-4)


def test_the_cli_json_and_table_and_the_drawing_carry_no_exponent(capsys, tmp_path):
    """A heavy bearing on hollow blocks with no padstone: large forces, a check with no
    capacity. The table says the check fails; nothing is written as 3e+04."""
    schedule = tmp_path / "s.csv"
    schedule.write_text(
        "reference,reaction_kN,flange_width,bearing_length,wall_thickness,height_to_bearing,"
        "unit_group,unit_strength,unit_strength_normalised\n"
        "B1,30,133,100,215,2400,3,7.3,yes\n"
        "B2,300,133,100,215,2400,1,7.3,yes\n"
    )
    main(["check", str(schedule), "--no-hints"])
    out = capsys.readouterr().out
    assert "n/a" not in out and not EXPONENT.search(out)
    b1 = next(line for line in out.splitlines() if line.startswith("B1"))
    assert "no capacity (fails)" in b1 and "fails at design" in b1
    main(["check", "--json", str(schedule), "--no-hints"])
    data = json.loads(capsys.readouterr().out)
    assert data["bearings"][0]["design"]["utilisation"] is None
    result = check_bearing(across_on_padstone(), ec6_uk_na())
    svg = bearing_svg(input_to_dict(across_on_padstone()), result.as_dict(), title="B")
    labels = re.findall(r"<text[^>]*>([^<]*)</text>", svg)
    assert labels and not any(EXPONENT.search(label) for label in labels)


def test_the_bearing_page_shows_forces_in_kn_and_areas_with_commas(client_as, db, site):
    from sitecheck import store

    bearing = store.bearing_by_reference(db, site_id=site["id"], reference="GF-B1-E")
    html = client_as("viewer").get(f"/sites/{site['id']}/bearings/{bearing['id']}").data.decode()
    cells = re.findall(r'<td class="num"[^>]*>(.*?)</td>', html, flags=re.S)
    assert cells and not any(EXPONENT.search(c) for c in cells)
    # The padstone check's demand is the end reaction, 62 000 N in the stored input.
    row = re.search(r'<tr data-check="padstone-bearing".*?</tr>', html, flags=re.S).group(0)
    assert "62 kN" in row
    assert re.search(r"<strong>\d{1,3}(,\d{3})+(\.\d+)? mm²</strong>", html)
