"""Inputs the core refuses, each with the field, the value and what was expected."""

from __future__ import annotations

from dataclasses import replace

import pytest

from kit.bearing_inputs import across_on_padstone, brick_in_line_end
from sitecheck.bearing import (
    Beam,
    InputError,
    Masonry,
    Padstone,
    Wall,
    bs5628,
    check_bearing,
    ec6_uk_na,
    input_errors,
)
from sitecheck.bearing.basis import SCALAR_BOUNDS


def _refusal(inp, basis=None):
    with pytest.raises(InputError) as e:
        check_bearing(inp, basis or ec6_uk_na())
    return e.value


def test_metres_for_millimetres_gets_a_hint():
    e = _refusal(across_on_padstone(wall=Wall(thickness=0.1, height_to_bearing=2400.0)))
    assert e.field == "wall.thickness" and e.code == "looks-like-metres"
    assert "100 mm" in e.expected


def test_bearing_longer_than_the_padstone():
    e = _refusal(across_on_padstone(beam=Beam(flange_width=133.0, bearing_length=250.0)))
    assert e.field == "beam.bearing_length" and e.code == "longer-than-padstone"
    assert "215" in e.expected


def test_padstone_wider_than_the_wall():
    e = _refusal(across_on_padstone(padstone=Padstone(length=440.0, width=300.0, depth=140.0)))
    assert e.field == "padstone.width" and e.code == "wider-than-wall"


def test_flange_off_the_padstone():
    e = _refusal(
        across_on_padstone(beam=Beam(flange_width=133.0, bearing_length=150.0, offset_along=200.0))
    )
    assert e.field == "beam.offset_along" and e.code == "off-padstone"
    assert "153.5" in e.expected


def test_flange_wider_than_the_padstone_across_the_wall():
    e = _refusal(across_on_padstone(padstone=Padstone(length=120.0, width=215.0, depth=140.0)))
    assert e.field == "beam.flange_width" and e.code == "off-padstone"


def test_in_line_flange_wider_than_the_wall_with_no_padstone():
    inp = brick_in_line_end(
        padstone=None, wall=Wall(thickness=102.5, height_to_bearing=2400.0, a1=0.0)
    )
    e = _refusal(inp, bs5628())
    assert e.field == "beam.flange_width" and e.code == "wider-than-wall"


def test_a1_beyond_the_wall():
    e = _refusal(across_on_padstone(wall=Wall(thickness=215.0, height_to_bearing=2400.0, a1=-20.0)))
    assert e.field == "wall.a1" and e.code == "beyond-wall"


def test_unit_strength_missing():
    e = _refusal(across_on_padstone(masonry=Masonry(unit_strength=None)))
    assert e.field == "masonry.unit_strength" and e.code == "missing"


def test_bs5628_blocks_need_a_declared_f_k():
    inp = across_on_padstone(
        masonry=Masonry(
            material="aggregate concrete", unit_strength=7.3, unit_height=215.0, unit_width=100.0
        )
    )
    e = _refusal(inp, bs5628())
    assert e.field == "masonry.unit_height" and e.code == "not-covered" and "f_k" in e.expected


def test_bs5628_thin_layer_mortar_is_not_in_table_2a():
    inp = brick_in_line_end(
        masonry=Masonry(
            material="clay",
            unit_strength=20.0,
            unit_height=65.0,
            unit_width=102.5,
            mortar="thin-layer",
        )
    )
    e = _refusal(inp, bs5628())
    assert e.field == "masonry.mortar" and e.code == "not-covered"


def test_no_k_value_for_the_combination():
    inp = across_on_padstone(
        masonry=Masonry(
            material="calcium silicate",
            group=4,
            unit_strength=10.0,
            unit_strength_is_normalised=True,
        )
    )
    e = _refusal(inp)
    assert e.field == "masonry.group" and e.code == "not-covered"


def test_bad_concrete_class():
    e = _refusal(
        across_on_padstone(
            padstone=Padstone(length=440.0, width=215.0, depth=140.0, concrete="C25")
        )
    )
    assert e.field == "padstone.concrete"


def test_absurd_load():
    inp = across_on_padstone()
    e = _refusal(replace(inp, load=replace(inp.load, reaction=9e6)))
    assert e.field == "load.reaction" and e.code == "out-of-range" and "5000 kN" in e.expected


def test_all_problems_are_listed_for_a_form():
    inp = across_on_padstone(wall=Wall(thickness=-1.0, height_to_bearing=0.0, a1=-5.0))
    fields = [p.field for p in input_errors(inp, ec6_uk_na())]
    assert fields[:3] == ["wall.thickness", "wall.height_to_bearing", "wall.a1"]


def test_error_carries_its_parts():
    e = _refusal(across_on_padstone(padstone=Padstone(length=440.0, width=215.0, depth=0.0)))
    assert e.as_dict() == {
        "field": "padstone.depth",
        "value": 0.0,
        "expected": e.expected,
        "code": "not-positive",
    }
    assert str(e).startswith("padstone.depth = 0.0:")


def test_an_offset_that_is_not_a_number_is_reported_not_raised():
    inp = across_on_padstone(
        beam=Beam(flange_width=133.0, bearing_length=150.0, offset_across="ten")
    )
    problems = list(input_errors(inp, ec6_uk_na()))
    assert [p.field for p in problems] == ["beam.offset_across"]


# --- the code basis, checked like the inputs ------------------------------------------------


def test_every_value_of_a_basis_is_checked():
    from dataclasses import fields

    from sitecheck.bearing.basis import FLAGS, TABLE_BOUNDS, CodeBasis

    covered = {"name", *FLAGS, *SCALAR_BOUNDS, *TABLE_BOUNDS}
    assert {f.name for f in fields(CodeBasis)} == covered


@pytest.mark.parametrize("name", sorted(SCALAR_BOUNDS))
@pytest.mark.parametrize(
    "value, code",
    [
        (float("nan"), "not-a-number"),
        (float("inf"), "not-a-number"),
        (True, "not-a-number"),
        ("1.5", "not-a-number"),
        (-1.0, "out-of-range"),
        (1e6, "out-of-range"),
    ],
    ids=["nan", "inf", "true", "text", "negative", "huge"],
)
def test_a_non_physical_basis_value_is_refused_by_name(name, value, code):
    with pytest.raises(InputError) as e:
        ec6_uk_na(**{name: value})
    assert e.value.field == f"basis.{name}" and e.value.code == code


def test_the_issues_examples_of_a_non_physical_basis():
    for changes, field in (
        ({"gamma_c": 0}, "basis.gamma_c"),
        ({"alpha_cc": float("nan")}, "basis.alpha_cc"),
        ({"gamma_M_ec6": {"2|I": 0.0}}, "basis.gamma_M_ec6.2|I"),
        ({"bearing_type_factors": [1.25, 1.5]}, "basis.bearing_type_factors"),
        ({"spreader_route_for_groups_2_to_4": "yes"}, "basis.spreader_route_for_groups_2_to_4"),
    ):
        with pytest.raises(InputError) as e:
            bs5628(**changes)
        assert e.value.field == field, changes


@pytest.mark.parametrize("group", [1.0, True, 2.5, 0, 5])
def test_a_group_that_is_not_a_whole_number_1_to_4_gets_the_plain_error(group):
    inp = across_on_padstone(masonry=replace(across_on_padstone().masonry, group=group))
    e = _refusal(inp)
    assert (e.field, e.expected) == ("masonry.group", "a whole number 1 to 4")


def test_whole_number_choices_refuse_true_and_floats():
    base = across_on_padstone()
    assert _refusal(replace(base, bearing_type=True)).field == "bearing_type"
    assert _refusal(replace(base, bearing_type=1.0)).field == "bearing_type"
    e = _refusal(replace(base, masonry=replace(base.masonry, execution_class=True)))
    assert e.field == "masonry.execution_class"


@pytest.mark.parametrize("e_mk", [float("inf"), float("nan"), 107.5, 200.0, -0.5])
def test_an_eccentricity_the_wall_cannot_carry_is_refused(e_mk):
    # At e_mk = t/2 the EC6 Annex G factor A1 = 1 − 2 e_mk/t is 0 (from memory): a 215 mm
    # wall has nothing left at 107.5 mm.
    e = _refusal(replace(across_on_padstone(), e_mk=e_mk))
    assert e.field == "e_mk" and e.code == "out-of-range"
    assert "107.5 mm" in e.expected


def test_an_eccentricity_just_inside_half_the_wall_is_taken():
    result = check_bearing(replace(across_on_padstone(), e_mk=107.0), ec6_uk_na())
    assert result.check("mid-height").capacity > 0
