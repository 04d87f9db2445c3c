"""Review reasons: each code is raised by what it names, and only by that.

Thresholds and tolerances are the project's own documented defaults (ours); the wall
thickness tolerance is ±5 mm or ±5 % (EN 1996-2, from memory).
"""

from __future__ import annotations

from dataclasses import replace

import pytest

from kit.bearing_inputs import across_on_padstone, brick_in_line_end
from sitecheck.bearing import Load, Masonry, Padstone, bs5628, check_bearing, ec6_uk_na
from sitecheck.bearing.errors import InputError
from sitecheck.bearing.remedy import remedy
from sitecheck.bearing.review import (
    ADVISORY,
    BLOCKS,
    UNMEASURABLE,
    Checklist,
    Measurements,
    ReviewSettings,
    as_built_input,
    could_not_measure,
    review,
    settings_from_dict,
)

FULL = dict(
    bearing_length=150.0,
    padstone_present=True,
    padstone_length=440.0,
    padstone_width=215.0,
    padstone_depth=140.0,
    wall_thickness=215.0,
    masonry_group=1,
    a1=300.0,
)
GOOD_CHECKLIST = Checklist(bedded=True, packing=0.0, cracks=False, cut_units=False, level=True)


def _review(
    design=None, basis=None, checklist=GOOD_CHECKLIST, settings=ReviewSettings(), **measured
):
    design = design or across_on_padstone()
    basis = basis or ec6_uk_na()
    m = Measurements(**(FULL | measured))
    built = as_built_input(design, m)
    reasons = review(
        design,
        check_bearing(design, basis),
        m,
        checklist,
        built,
        check_bearing(built, basis),
        basis,
        settings,
    )
    return {r.code: r for r in reasons}, reasons


def test_as_designed_has_no_reasons():
    codes, _ = _review()
    assert codes == {}


def test_within_tolerance_has_no_reasons():
    codes, _ = _review(bearing_length=142.0, padstone_length=432.0, wall_thickness=210.0, a1=320.0)
    assert codes == {}


def test_short_padstone_blocks_and_names_the_values():
    codes, _ = _review(padstone_length=330.0)
    r = codes["padstone-length-off"]
    assert r.severity == BLOCKS
    assert dict(r.values) == {"design": 440.0, "as_built": 330.0, "tolerance": 10.0}
    assert "330 mm as built against 440 mm designed" in r.sentence


def test_longer_padstone_is_only_advisory():
    codes, _ = _review(padstone_length=600.0, a1=220.0)
    assert codes["padstone-length-off"].severity == ADVISORY


def test_thin_wall_tolerance_is_five_percent_of_a_thick_wall():
    # ±5 mm or ±5 %, whichever is larger (EN 1996-2, from memory): 300 mm wall → 15 mm.
    design = across_on_padstone(wall=replace(across_on_padstone().wall, thickness=300.0))
    codes, _ = _review(design=design, wall_thickness=288.0)
    assert "wall-thickness-off" not in codes
    codes, _ = _review(design=design, wall_thickness=280.0)
    assert codes["wall-thickness-off"].severity == BLOCKS


def test_failing_check_above_threshold_and_rise():
    codes, reasons = _review(bearing_length=90.0)
    assert {"check-fails", "utilisation-rise", "bearing-length-off"} <= set(codes)
    assert reasons[0].severity == BLOCKS
    failing = [r for r in reasons if r.code == "check-fails"]
    assert {dict(r.values)["check"] for r in failing} == {"min-bearing", "eccentricity"}


def test_above_threshold_without_failing():
    codes, _ = _review(settings=ReviewSettings(threshold=0.5))
    assert "above-threshold" in codes and "check-fails" not in codes


def test_missing_padstone_and_added_padstone():
    codes, _ = _review(
        padstone_present=False, padstone_length=None, padstone_width=None, padstone_depth=None
    )
    assert codes["padstone-missing"].severity == BLOCKS
    design = across_on_padstone(padstone=None)
    codes, _ = _review(design=design, padstone_present=True)
    assert codes["padstone-added"].severity == ADVISORY


def test_hollow_units_where_solid_were_designed():
    codes, _ = _review(masonry_group=2)
    assert codes["hollow-units"].severity == BLOCKS
    assert dict(codes["hollow-units"].values) == {"design_group": 1, "as_built_group": 2}


def test_spreader_lost_when_the_padstone_is_shallower():
    design = across_on_padstone(padstone=Padstone(length=440.0, width=215.0, depth=215.0))
    codes, _ = _review(design=design, padstone_depth=140.0)
    assert codes["spreader-lost"].severity == BLOCKS
    assert codes["padstone-depth-off"].severity == BLOCKS


def test_not_measured():
    codes, _ = _review(wall_thickness=None, padstone_depth=None)
    r = codes["not-measured"]
    assert r.severity == BLOCKS and set(dict(r.values)["fields"]) == {
        "wall_thickness",
        "padstone_depth",
    }
    assert "wall thickness" in r.sentence


def test_checklist_reasons():
    codes, _ = _review(
        checklist=Checklist(bedded=False, packing=15.0, cracks=True, cut_units=True, level=False)
    )
    assert {"not-bedded", "packing-thick", "cracks", "cut-units", "not-level"} <= set(codes)
    codes, _ = _review(checklist=Checklist(packing=8.0))
    assert "packing-thick" not in codes


def test_a_bearing_that_could_not_be_measured_blocks_release_with_its_reason():
    for why, words in UNMEASURABLE:
        (reason,) = could_not_measure(why, Measurements(), Checklist())
        assert (reason.code, reason.severity) == ("could-not-measure", BLOCKS)
        assert words in reason.sentence and dict(reason.values) == {"why": why}
    # What the checklist did see still counts.
    reasons = could_not_measure("no-access", Measurements(), Checklist(cracks=True))
    assert [r.code for r in reasons] == ["could-not-measure", "cracks"]


def test_a_could_not_measure_record_with_a_measured_value_is_refused_naming_it():
    with pytest.raises(InputError) as refused:
        could_not_measure("covered", Measurements(wall_thickness=215.0), Checklist())
    assert refused.value.field == "measurements.wall_thickness"
    assert refused.value.code == "measured-but-not-measurable"
    with pytest.raises(InputError) as unknown:
        could_not_measure("too dark", Measurements(), Checklist())
    assert (unknown.value.field, unknown.value.code) == ("why_not_measured", "bad-choice")
    assert "covered, no-access, unsafe, other" in unknown.value.expected


def test_weaker_and_unverified_masonry():
    codes, _ = _review(masonry_group=1, mortar="M2")
    assert codes["masonry-weaker"].severity == BLOCKS
    declared = across_on_padstone(masonry=Masonry(f_k=4.0))
    codes, _ = _review(design=declared, masonry_material="clay")
    assert codes["masonry-unverified"].severity == BLOCKS


def test_position_moved_towards_an_edge():
    codes, _ = _review(offset_along=60.0)
    assert codes["position-along-off"].severity == BLOCKS


def test_bs5628_bearing_type_basis():
    design = brick_in_line_end()
    m = dict(FULL, a1=75.0, bearing_length=150.0, padstone_depth=215.0, padstone_width=215.0)
    codes, _ = _review(design=design, basis=bs5628(), **m)
    assert codes["bearing-type-basis"].severity == BLOCKS
    assert "end distance" in codes["bearing-type-basis"].sentence


def test_settings_round_trip_and_refuse_unknown_keys():
    s = ReviewSettings(threshold=0.8)
    assert settings_from_dict(s.as_dict()) == s
    with pytest.raises(ValueError):
        settings_from_dict({"thresold": 0.8})


def test_remedy_finds_the_smallest_passing_padstone():
    # A bare 100 mm flange bearing that fails: the smallest standard padstone that passes.
    inp = across_on_padstone(padstone=None)
    basis = ec6_uk_na()
    assert not check_bearing(inp, basis).passed
    hint = remedy(inp, basis)
    assert hint.padstone is not None and hint.padstone_utilisation <= 1.0
    fixed = replace(inp, padstone=hint.padstone)
    assert check_bearing(fixed, basis).passed
    # No smaller standard placement passes in any class (smallest volume first).
    volume = hint.padstone.length * hint.padstone.width * hint.padstone.depth
    assert volume <= 440 * 215 * 140


def test_remedy_finds_the_shortest_bearing():
    inp = across_on_padstone()
    short = replace(inp, beam=replace(inp.beam, bearing_length=90.0))
    hint = remedy(short, ec6_uk_na())
    # e ≤ t/4 needs the reaction within 53.75 of the centre: l_b/2 ≥ 107.5 − 53.75 → l_b ≥ 107.5,
    # so in 5 mm steps from 100 (the trade minimum): 110 mm.
    assert hint.bearing_length == 110.0


@pytest.mark.parametrize("basis", [ec6_uk_na(), bs5628()], ids=["ec6", "bs5628"])
def test_an_offset_typed_at_the_default_position_gives_the_same_hint(basis):
    """A user who types the position the beam would take anyway (flush with the span end
    of an in-line padstone, web on the centre line; flush with the near face across) means
    the same bearing: the hint must not change. Lengthening a typed bearing used to push it
    off its padstone, so the hint read "redesign"."""
    inline = brick_in_line_end(load=Load(reaction=120_000.0))
    typed = replace(
        inline,
        beam=replace(
            inline.beam,
            offset_along=(inline.beam.bearing_length - inline.padstone.length) / 2,
            offset_across=0.0,
        ),
    )
    assert remedy(typed, basis) == remedy(inline, basis)
    across = across_on_padstone(
        padstone=None, beam=replace(across_on_padstone().beam, bearing_length=100.0)
    )
    typed = replace(across, beam=replace(across.beam, offset_across=(100.0 - 215.0) / 2))
    assert remedy(typed, basis) == remedy(across, basis)


def test_a_beam_placed_off_its_default_stays_put_when_a_new_padstone_is_tried():
    # 100 mm bearing 10 mm nearer the face than flush would be, on a 140 mm padstone centred
    # in a 215 mm wall: the flange's centre is 37.5 + 70 − 10 = 97.5 mm from the near face.
    # The hint's padstones are laid centred as the old one was, and the beam keeps that place.
    inp = across_on_padstone(load=Load(reaction=120_000.0))
    inp = replace(
        inp,
        beam=replace(inp.beam, bearing_length=100.0, offset_across=-10.0),
        padstone=replace(inp.padstone, width=140.0, position_across="centred"),
    )
    hint = remedy(inp, ec6_uk_na())
    assert hint.padstone is not None
    from sitecheck.bearing.remedy import _with_padstone

    tried = _with_padstone(
        inp, hint.padstone.length, hint.padstone.width, hint.padstone.depth, "C25/30"
    )
    result = check_bearing(tried, ec6_uk_na())
    assert result.spread.support_y0 + result.spread.reaction_y == pytest.approx(97.5)
