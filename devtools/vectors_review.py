"""Review and remedy cases for the shared test vectors, made by the Python core.

The phone mirrors the as-built merge, the review and the remedy in JavaScript
(``static/js/bearing/review.js``, ``remedy.js``, ``record.js``); these cases hold the mirror
to the Python core. ``sitecheck.vectors`` puts them in ``tests/vectors/bearing-vectors.json.gz``
beside the calculation cases.

A review case is one as-built record taken through the server's own flow
(:func:`sitecheck.services.recheck`): measurements and checklist read from their dicts, the
measured values merged into the design, the design and the as-built re-checked, the review
reasons listed. Its ``expect`` is what :func:`record_expectation` returns; where the core
refuses the record, ``expect.error`` holds the refusal and the reasons stay empty.

Every bearing, load and measurement here is invented; the padstone sizes are the trade's
common precast ones (440 × 215 × 140 and the like, merchant listings, common practice).
Cases are fixed by hand where a reason needs a particular geometry, and the rest are drawn
from a seeded generator so the file is the same on every run.
"""

from __future__ import annotations

import random
from dataclasses import replace

from sitecheck.bearing import (
    IN_LINE,
    Beam,
    BearingInput,
    CodeBasis,
    InputError,
    Load,
    Masonry,
    Padstone,
    Wall,
    bs5628,
    check_bearing,
    ec6_uk_na,
)
from sitecheck.bearing.remedy import STANDARD_CLASSES, STANDARD_PADSTONES, remedy
from sitecheck.bearing.review import (
    ReviewSettings,
    as_built_input,
    blocking,
    could_not_measure,
    review,
    settings_from_dict,
)
from sitecheck.bearing.serial import (
    checklist_from_dict,
    input_from_dict,
    input_to_dict,
    measurements_from_dict,
)

# Any fixed number will do: it only has to give the same cases on every run.
SEED = 20_505
RANDOM_REVIEW_CASES = 40
RANDOM_REMEDY_CASES = 18

GOOD_CHECKLIST = {
    "bedded": True,
    "packing": 0.0,
    "cracks": False,
    "cut_units": False,
    "level": True,
}


# --- the designs the records are measured against ----------------------------------------


def _block(strength: float = 10.0, group: int = 1, **more) -> Masonry:
    """Aggregate concrete blocks given by their normalised strength f_b."""
    return Masonry(
        material="aggregate concrete",
        group=group,
        unit_strength=strength,
        unit_strength_is_normalised=True,
        mortar="M4",
        **more,
    )


def _brick(strength: float = 20.0, mortar: str = "M4", **more) -> Masonry:
    """Clay bricks given by their mean strength and size (both bases accept these)."""
    return Masonry(
        material="clay",
        group=1,
        unit_strength=strength,
        unit_height=65.0,
        unit_width=102.5,
        mortar=mortar,
        **more,
    )


PAD_440_215_140 = Padstone(length=440.0, width=215.0, depth=140.0, concrete="C25/30")
PAD_440_215_215 = Padstone(length=440.0, width=215.0, depth=215.0, concrete="C25/30")
PAD_215_140_100 = Padstone(length=215.0, width=140.0, depth=100.0, concrete="C25/30")


def designs() -> list[tuple[str, CodeBasis, BearingInput]]:
    """(name, basis, design) of each invented bearing the cases start from."""
    ec6, bs = ec6_uk_na(), bs5628()
    wall_215 = Wall(thickness=215.0, height_to_bearing=2400.0, a1=300.0)
    out = [
        (
            "ec6-across-pad",
            ec6,
            BearingInput(
                load=Load(reaction=60_000.0),
                beam=Beam(flange_width=133.0, bearing_length=150.0),
                wall=wall_215,
                masonry=_block(),
                padstone=PAD_440_215_140,
            ),
        ),
        (
            # Deep enough, wide enough and long enough to count as a spreader (1.5 f_d).
            "ec6-across-spreader",
            ec6,
            BearingInput(
                load=Load(reaction=110_000.0, wall_load=20.0),
                beam=Beam(flange_width=133.0, bearing_length=150.0),
                wall=Wall(thickness=215.0, height_to_bearing=2600.0, a1=500.0, a2=900.0),
                masonry=_block(7.3),
                padstone=PAD_440_215_215,
            ),
        ),
        (
            "ec6-across-bare",
            ec6,
            BearingInput(
                load=Load(reaction=12_000.0),
                beam=Beam(flange_width=102.0, bearing_length=150.0),
                wall=Wall(thickness=215.0, height_to_bearing=2250.0),
                masonry=_brick(mortar="M6"),
            ),
        ),
        (
            "ec6-across-hollow",
            ec6,
            BearingInput(
                load=Load(reaction=40_000.0),
                beam=Beam(flange_width=146.0, bearing_length=140.0),
                wall=Wall(thickness=215.0, height_to_bearing=2400.0, a1=700.0),
                masonry=_block(12.0, group=2),
                padstone=PAD_440_215_215,
            ),
        ),
        (
            "ec6-across-declared",
            ec6,
            BearingInput(
                load=Load(reaction=45_000.0),
                beam=Beam(flange_width=133.0, bearing_length=150.0, offset_along=20.0),
                wall=Wall(thickness=215.0, height_to_bearing=2700.0, a1=250.0, a2=1200.0),
                masonry=Masonry(f_k=4.5),
                padstone=replace(PAD_440_215_140, concrete="C30/37", reinforced=True),
            ),
        ),
        (
            "ec6-across-fck",
            ec6,
            BearingInput(
                load=Load(reaction=70_000.0),
                beam=Beam(flange_width=165.0, bearing_length=180.0, reaction_at="near-third"),
                wall=Wall(
                    thickness=215.0,
                    height_to_bearing=2550.0,
                    a1=400.0,
                    clear_height=2700.0,
                    effective_height=2300.0,
                    effective_thickness=215.0,
                ),
                masonry=_block(15.0),
                padstone=Padstone(length=440.0, width=215.0, depth=140.0, f_ck=32.0),
            ),
        ),
        (
            "ec6-inline-end",
            ec6,
            BearingInput(
                load=Load(reaction=18_000.0),
                beam=Beam(flange_width=102.0, bearing_length=150.0, orientation=IN_LINE),
                wall=Wall(thickness=100.0, height_to_bearing=2250.0, a1=0.0),
                masonry=_block(10.4),
                padstone=Padstone(length=440.0, width=100.0, depth=215.0),
            ),
        ),
        (
            "ec6-inline-brick",
            ec6,
            BearingInput(
                load=Load(reaction=30_000.0, wall_load=15.0),
                beam=Beam(flange_width=146.0, bearing_length=150.0, orientation=IN_LINE),
                wall=Wall(thickness=215.0, height_to_bearing=2700.0, a1=0.0, a2=2000.0),
                masonry=_brick(),
                padstone=PAD_440_215_215,
            ),
        ),
        (
            "ec6-inline-bare",
            ec6,
            BearingInput(
                load=Load(reaction=8_000.0),
                beam=Beam(
                    flange_width=89.0,
                    bearing_length=150.0,
                    orientation=IN_LINE,
                    member="lintel",
                    offset_across=20.0,
                ),
                wall=Wall(thickness=140.0, height_to_bearing=2100.0, a1=0.0),
                masonry=_block(7.3),
            ),
        ),
        (
            "ec6-across-thick",
            ec6,
            BearingInput(
                load=Load(reaction=90_000.0),
                beam=Beam(flange_width=171.0, bearing_length=200.0),
                wall=Wall(thickness=300.0, height_to_bearing=3000.0, a1=600.0),
                masonry=_block(17.5),
                padstone=Padstone(length=440.0, width=250.0, depth=140.0, reinforced=True),
            ),
        ),
        (
            "ec6-across-small-pad",
            ec6,
            BearingInput(
                load=Load(reaction=25_000.0),
                beam=Beam(flange_width=102.0, bearing_length=120.0),
                wall=Wall(thickness=215.0, height_to_bearing=2400.0, a1=150.0),
                masonry=_block(7.3),
                padstone=PAD_215_140_100,
            ),
        ),
        (
            "ec6-across-aac",
            ec6,
            BearingInput(
                load=Load(reaction=15_000.0),
                beam=Beam(flange_width=102.0, bearing_length=100.0),
                wall=Wall(thickness=100.0, height_to_bearing=2400.0, a1=450.0),
                masonry=Masonry(
                    material="autoclaved aerated concrete",
                    group=1,
                    unit_strength=3.6,
                    unit_strength_is_normalised=True,
                    mortar="thin-layer",
                ),
                padstone=Padstone(length=440.0, width=100.0, depth=140.0),
            ),
        ),
        (
            "bs-across-pad",
            bs,
            BearingInput(
                load=Load(reaction=55_000.0),
                beam=Beam(flange_width=133.0, bearing_length=150.0),
                wall=Wall(thickness=215.0, height_to_bearing=2600.0, a1=350.0),
                masonry=_brick(27.5),
                padstone=PAD_440_215_140,
            ),
        ),
        (
            "bs-inline-type3",
            bs,
            BearingInput(
                load=Load(reaction=35_000.0),
                beam=Beam(flange_width=146.0, bearing_length=150.0, orientation=IN_LINE),
                wall=Wall(thickness=215.0, height_to_bearing=2700.0, a1=0.0),
                masonry=_brick(),
                padstone=PAD_440_215_215,
                bearing_type=3,
            ),
        ),
        (
            "bs-across-bare-type2",
            bs,
            BearingInput(
                load=Load(reaction=15_000.0),
                beam=Beam(flange_width=102.0, bearing_length=150.0),
                wall=Wall(thickness=215.0, height_to_bearing=2400.0, a1=200.0, a2=800.0),
                masonry=_brick(35.0, mortar="M6"),
                bearing_type=2,
            ),
        ),
        (
            "bs-across-spreader-type2",
            bs,
            BearingInput(
                load=Load(reaction=80_000.0),
                beam=Beam(flange_width=133.0, bearing_length=140.0),
                wall=Wall(thickness=215.0, height_to_bearing=2500.0, a1=300.0),
                masonry=_brick(35.0),
                padstone=PAD_440_215_215,
                bearing_type=2,
            ),
        ),
        (
            "bs-across-declared",
            bs,
            BearingInput(
                load=Load(reaction=40_000.0),
                beam=Beam(flange_width=146.0, bearing_length=150.0),
                wall=Wall(thickness=215.0, height_to_bearing=2400.0, a1=900.0),
                masonry=Masonry(material="aggregate concrete", group=1, f_k=5.0),
                padstone=PAD_440_215_140,
            ),
        ),
    ]
    return out


def design_named(name: str) -> tuple[CodeBasis, BearingInput]:
    for n, basis, design in designs():
        if n == name:
            return basis, design
    raise KeyError(name)


# --- one record through the server's flow ---------------------------------------------------


def as_designed(design: BearingInput) -> dict:
    """The measurements of an inspector who found everything as designed, measuring what
    the default review settings ask for."""
    beam, pad, wall = design.beam, design.padstone, design.wall
    m: dict = {
        "bearing_length": beam.bearing_length,
        "padstone_present": pad is not None,
        "wall_thickness": wall.thickness,
        "masonry_group": design.masonry.group,
    }
    if pad is not None:
        m |= {
            "padstone_length": pad.length,
            "padstone_width": pad.width,
            "padstone_depth": pad.depth,
        }
    if wall.a1 is not None:
        m["a1"] = wall.a1
    return m


def record_expectation(
    design: BearingInput, measurements, checklist, basis: CodeBasis, settings, why=None
) -> dict:
    """What the server makes of one as-built record, in the order
    :func:`sitecheck.services.recheck` works: the measured values read and merged, the
    as-built re-checked, the design re-checked, the site's settings read, the reasons.

    ``as_built`` is the merged input (None when the measurements could not be read);
    ``error`` the core's refusal, if any, after which there is no result and no reason.
    ``why`` makes it a record of a bearing that could not be measured: the design stands as
    built and the could-not-measure review replaces the comparison.
    """
    out = {
        "as_built": None,
        "error": None,
        "design_result": check_bearing(design, basis).as_dict(),
        "result": None,
        "reasons": [],
        "blocking": 0,
    }
    try:
        m = measurements_from_dict(measurements)
        c = checklist_from_dict(checklist)
        if why is not None:
            s = settings_from_dict(settings) if settings else ReviewSettings()
            reasons = could_not_measure(why, m, c, s)
            out["as_built"] = input_to_dict(design)
            out["result"] = out["design_result"]
            out["reasons"] = [r.as_dict() for r in reasons]
            out["blocking"] = blocking(reasons)
            return out
        built = as_built_input(design, m)
        out["as_built"] = input_to_dict(built)
        result = check_bearing(built, basis)
        design_result = check_bearing(design, basis)
        s = settings_from_dict(settings) if settings else ReviewSettings()
    except InputError as error:
        out["error"] = error.as_dict()
        return out
    reasons = review(design, design_result, m, c, built, result, basis, s)
    out["result"] = result.as_dict()
    out["reasons"] = [r.as_dict() for r in reasons]
    out["blocking"] = blocking(reasons)
    return out


def review_case(
    case_id: str,
    basis: CodeBasis,
    design: BearingInput,
    measurements,
    checklist,
    settings=None,
    why=None,
) -> dict:
    # The design as the server holds it: stored as a dict and read back.
    design = input_from_dict(input_to_dict(design))
    settings = ReviewSettings().as_dict() if settings is None else settings
    case = {
        "id": case_id,
        "basis": basis.to_dict(),
        "settings": settings,
        "design": input_to_dict(design),
        "measurements": measurements,
        "checklist": checklist,
        "expect": record_expectation(design, measurements, checklist, basis, settings, why),
    }
    if why is not None:
        case["why"] = why
    return case


# --- review cases fixed by hand -----------------------------------------------------------

DROP = "drop"  # in a table of changes: leave this measurement out
_PAD_FIELDS = ("padstone_length", "padstone_width", "padstone_depth")
NO_PADSTONE = {"padstone_present": False} | dict.fromkeys(_PAD_FIELDS, DROP)
ALL_WRONG = {"bedded": False, "packing": 15.0, "cracks": True, "cut_units": True, "level": False}


def _settings(**changes) -> dict:
    return replace(ReviewSettings(), **changes).as_dict()


# (design, case, changes to the as-designed measurements, checklist, settings).
# Each line names what it is there to reach.
HAND_CASES: tuple[tuple[str, str, dict, dict, dict | None], ...] = (
    # Padstone dimensions, both ways.
    ("ec6-across-pad", "padstone-short", {"padstone_length": 330.0}, GOOD_CHECKLIST, None),
    ("ec6-across-pad", "padstone-long", {"padstone_length": 600.0, "a1": 220.0}, {}, None),
    ("ec6-across-pad", "padstone-within-tolerance", {"padstone_length": 432.0}, {}, None),
    ("ec6-across-small-pad", "padstone-narrow", {"padstone_width": 120.0}, {}, None),
    ("ec6-across-small-pad", "padstone-wide", {"padstone_width": 215.0}, {}, None),
    ("ec6-across-pad", "padstone-shallow", {"padstone_depth": 100.0}, {}, None),
    ("ec6-across-pad", "padstone-deep", {"padstone_depth": 215.0}, {}, None),
    ("ec6-across-aac", "padstone-shallow-thin-wall", {"padstone_depth": 100.0}, {}, None),
    # Padstone missing, added, present but not measured.
    ("ec6-across-pad", "padstone-missing", NO_PADSTONE, GOOD_CHECKLIST, None),
    ("ec6-across-pad", "padstone-missing-sizes-kept", {"padstone_present": False}, {}, None),
    ("ec6-across-hollow", "padstone-missing-hollow", NO_PADSTONE, {}, None),
    ("ec6-inline-end", "padstone-missing-flange-overhangs", NO_PADSTONE, {}, None),
    ("bs-across-pad", "padstone-missing", NO_PADSTONE, GOOD_CHECKLIST, None),
    (
        "ec6-across-bare",
        "padstone-added",
        {"padstone_present": True, "padstone_length": 440.0, "padstone_width": 215.0}
        | {"padstone_depth": 140.0},
        GOOD_CHECKLIST,
        None,
    ),
    (
        "bs-across-bare-type2",
        "type-padstone-added",
        {"padstone_present": True, "padstone_length": 440.0, "padstone_width": 215.0}
        | {"padstone_depth": 100.0, "padstone_concrete": "C20/25"},
        {},
        None,
    ),
    ("ec6-across-bare", "padstone-added-unmeasured", {"padstone_present": True}, {}, None),
    ("ec6-across-pad", "padstone-sizes-unmeasured", dict.fromkeys(_PAD_FIELDS, DROP), {}, None),
    # Bearing length and flange width.
    ("ec6-across-pad", "bearing-short", {"bearing_length": 90.0}, GOOD_CHECKLIST, None),
    ("ec6-across-pad", "bearing-long", {"bearing_length": 200.0}, {}, None),
    ("ec6-across-pad", "bearing-within-tolerance", {"bearing_length": 142.0}, {}, None),
    ("ec6-inline-end", "bearing-short-in-line", {"bearing_length": 95.0}, {}, None),
    ("ec6-across-pad", "flange-narrow", {"flange_width": 120.0}, {}, None),
    ("ec6-across-pad", "flange-wide", {"flange_width": 146.0}, {}, None),
    ("ec6-inline-end", "flange-too-wide-in-line", {"flange_width": 171.0}, {}, None),
    ("ec6-across-bare", "lintel-short", {"bearing_length": 110.0}, {}, None),
    # Wall thickness: ±5 mm or ±5 % (EN 1996-2, from memory).
    ("ec6-across-bare", "wall-thin", {"wall_thickness": 190.0}, {}, None),
    ("ec6-across-bare", "wall-thick", {"wall_thickness": 230.0}, {}, None),
    ("ec6-across-thick", "wall-within-five-percent", {"wall_thickness": 288.0}, {}, None),
    ("ec6-across-thick", "wall-beyond-five-percent", {"wall_thickness": 280.0}, {}, None),
    (
        "ec6-inline-bare",
        "wall-thin-in-line",
        {"wall_thickness": 120.0, "offset_across": 10.0},
        {},
        None,
    ),
    ("ec6-inline-bare", "wall-thin-beam-off-wall", {"wall_thickness": 125.0}, {}, None),
    ("ec6-across-fck", "wall-thin-effective-thickness", {"wall_thickness": 212.0}, {}, None),
    # End distances.
    ("ec6-across-pad", "end-near", {"a1": 200.0}, {}, None),
    ("ec6-across-pad", "end-far", {"a1": 360.0}, {}, None),
    ("ec6-across-spreader", "far-end-near", {"a2": 700.0}, {}, None),
    ("ec6-across-spreader", "far-end-far", {"a2": 1000.0}, {}, None),
    ("ec6-across-bare", "end-found", {"a1": 120.0, "a2": 900.0}, {}, None),
    ("ec6-inline-brick", "end-not-at-opening", {"a1": 60.0}, {}, None),
    # Where the beam sits (offsets of half a millimetre test the rounding of the sentence).
    ("ec6-across-pad", "position-along", {"offset_along": 60.0}, {}, None),
    ("ec6-across-pad", "position-along-half", {"offset_along": 22.5}, {}, None),
    ("ec6-across-pad", "position-along-negative-half", {"offset_along": -37.5}, {}, None),
    ("ec6-across-declared", "position-along-centred", {"offset_along": 0.0}, {}, None),
    ("ec6-across-declared", "position-along-minus-zero", {"offset_along": -0.0}, {}, None),
    ("ec6-inline-brick", "position-across", {"offset_across": 30.0}, {}, None),
    ("ec6-inline-bare", "position-across-centred", {"offset_across": 0.0}, {}, None),
    ("ec6-inline-bare", "position-across-half", {"offset_across": -12.5}, {}, None),
    ("ec6-across-pad", "position-across-at-tolerance", {"bearing_length": 180.0}, {}, None),
    # Units and mortar: hollow, weaker, stronger, declared, refused.
    ("ec6-across-pad", "hollow-units", {"masonry_group": 2}, GOOD_CHECKLIST, None),
    ("ec6-across-pad", "hollow-units-group-3", {"masonry_group": 3}, {}, None),
    ("ec6-across-bare", "hollow-bricks", {"masonry_group": 2}, {}, None),
    ("bs-across-pad", "hollow-bricks", {"masonry_group": 2}, {}, None),
    ("ec6-across-pad", "mortar-weaker", {"mortar": "M2"}, {}, None),
    ("ec6-across-pad", "units-weaker", {"unit_strength": 7.3}, {}, None),
    ("ec6-across-pad", "units-stronger", {"unit_strength": 15.0}, {}, None),
    ("ec6-across-pad", "material-changed", {"masonry_material": "calcium silicate"}, {}, None),
    ("ec6-across-hollow", "hollow-solid-found", {"masonry_group": 1}, {}, None),
    ("ec6-across-declared", "declared-other-units", {"masonry_material": "clay"}, {}, None),
    ("ec6-across-declared", "declared-other-mortar", {"mortar": "M6"}, {}, None),
    ("bs-across-declared", "declared-other-units", {"unit_strength": 7.3}, {}, None),
    ("bs-across-pad", "bricks-weaker", {"unit_strength": 20.0}, {}, None),
    ("bs-across-pad", "bricks-stronger", {"unit_strength": 50.0, "mortar": "M6"}, {}, None),
    ("bs-across-pad", "mortar-thin-layer", {"mortar": "thin-layer"}, {}, None),
    (
        "ec6-across-pad",
        "no-k-value",
        {"masonry_material": "calcium silicate", "masonry_group": 3},
        {},
        None,
    ),
    ("ec6-across-pad", "group-five", {"masonry_group": 5}, {}, None),
    ("ec6-across-bare", "mortar-unknown", {"mortar": "M3"}, {}, None),
    # Padstone concrete.
    ("ec6-across-pad", "concrete-weaker", {"padstone_concrete": "C20/25"}, {}, None),
    ("ec6-across-pad", "concrete-stronger", {"padstone_concrete": "C40/50"}, {}, None),
    ("ec6-across-fck", "concrete-class-replaces-fck", {"padstone_concrete": "C25/30"}, {}, None),
    ("ec6-across-declared", "concrete-lower-case", {"padstone_concrete": "c25/30"}, {}, None),
    ("ec6-across-pad", "concrete-blank", {"padstone_concrete": ""}, {}, None),
    ("ec6-across-pad", "concrete-unknown", {"padstone_concrete": "C99"}, {}, None),
    # Plain or reinforced (EN 1992-1-1 section 12 takes α_cc,pl for plain concrete).
    ("ec6-across-declared", "built-plain", {"padstone_reinforced": False}, {}, None),
    ("ec6-across-pad", "built-reinforced", {"padstone_reinforced": True}, {}, None),
    ("ec6-across-bare", "reinforced-but-no-padstone", {"padstone_reinforced": True}, {}, None),
    # A collar joint seen in the wall: EC6 takes 0.8 × K (from memory).
    ("ec6-across-pad", "collar-joint-found", {"collar_joint": True}, {}, None),
    ("ec6-across-pad", "no-collar-joint", {"collar_joint": False}, {}, None),
    # The padstone's position across the wall, as found.
    (
        "ec6-across-pad",
        "padstone-centred",
        {"padstone_position": "centred", "padstone_width": 140.0},
        {},
        None,
    ),
    (
        "ec6-across-pad",
        "padstone-offset",
        {"padstone_offset_across": 20.0, "padstone_width": 140.0},
        {},
        None,
    ),
    (
        "ec6-across-pad",
        "padstone-off-the-wall",
        {"padstone_offset_across": 60.0, "padstone_width": 140.0},
        {},
        None,
    ),
    ("ec6-across-pad", "padstone-position-unknown", {"padstone_position": "middle"}, {}, None),
    (
        "ec6-across-fck",
        "concrete-with-sizes",
        {"padstone_concrete": "C20/25", "padstone_length": 400.0},
        {},
        None,
    ),
    # The spreader (EN 1996-1-1 6.1.3, from memory: width t, depth > 200, length > 3 l).
    ("ec6-across-spreader", "spreader-shallow", {"padstone_depth": 140.0}, {}, None),
    ("ec6-across-spreader", "spreader-short", {"padstone_length": 390.0, "a1": 525.0}, {}, None),
    ("ec6-across-spreader", "spreader-narrow", {"padstone_width": 200.0}, {}, None),
    ("ec6-across-spreader", "spreader-kept", {"padstone_depth": 205.0}, {}, None),
    ("bs-across-spreader-type2", "spreader-shallow", {"padstone_depth": 140.0}, {}, None),
    # BS 5628-1 bearing types 2 and 3 and the geometry they rest on.
    ("bs-inline-type3", "type-end-moved", {"a1": 75.0}, {}, None),
    ("bs-inline-type3", "type-bearing-short", {"bearing_length": 120.0}, {}, None),
    ("bs-inline-type3", "type-padstone-missing", NO_PADSTONE, {}, None),
    ("bs-inline-type3", "type-padstone-size", {"padstone_length": 330.0}, {}, None),
    ("bs-inline-type3", "type-within-tolerance", {"a1": 20.0, "bearing_length": 145.0}, {}, None),
    (
        "bs-across-bare-type2",
        "padstone-added-narrower-than-bearing",
        {"padstone_present": True, "padstone_length": 215.0, "padstone_width": 140.0}
        | {"padstone_depth": 100.0},
        {},
        None,
    ),
    ("bs-across-spreader-type2", "type-padstone-depth", {"padstone_depth": 100.0}, {}, None),
    (
        "bs-across-spreader-type2",
        "type-everything",
        {"a1": 200.0, "bearing_length": 100.0},
        {},
        None,
    ),
    ("bs-across-pad", "type-1-end-moved", {"a1": 200.0}, {}, None),
    # The checklist, item by item.
    ("ec6-across-pad", "not-bedded", {}, GOOD_CHECKLIST | {"bedded": False}, None),
    ("ec6-across-pad", "packing-thick", {}, GOOD_CHECKLIST | {"packing": 12.5}, None),
    ("ec6-across-pad", "packing-at-limit", {}, GOOD_CHECKLIST | {"packing": 10.0}, None),
    ("ec6-across-pad", "cracks", {}, GOOD_CHECKLIST | {"cracks": True}, None),
    ("ec6-across-pad", "cut-units", {}, GOOD_CHECKLIST | {"cut_units": True}, None),
    ("ec6-across-pad", "not-level", {}, GOOD_CHECKLIST | {"level": False}, None),
    ("bs-across-pad", "everything-wrong-on-site", {}, ALL_WRONG, None),
    ("ec6-inline-end", "checklist-half-looked-at", {}, {"cracks": False, "packing": 3.0}, None),
    # Site settings.
    ("ec6-across-pad", "threshold-low", {}, GOOD_CHECKLIST, _settings(threshold=0.5)),
    ("bs-across-pad", "threshold-low", {}, {}, _settings(threshold=0.2)),
    (
        "ec6-across-pad",
        "rise-margin-none",
        {"bearing_length": 140.0},
        {},
        _settings(rise_margin=0.0),
    ),
    (
        "ec6-across-pad",
        "tolerances-tight",
        {"bearing_length": 146.0, "padstone_length": 436.0},
        {},
        _settings(tol_bearing_length=2.0, tol_padstone=2.5),
    ),
    ("ec6-across-pad", "packing-limit-low", {}, {"packing": 6.0}, _settings(max_packing=5.0)),
    (
        "ec6-across-pad",
        "position-tolerance-tight",
        {"offset_along": 7.5},
        {},
        _settings(tol_position=5.0),
    ),
    (
        "ec6-across-thick",
        "wall-tolerance-ratio",
        {"wall_thickness": 290.0},
        {},
        _settings(tol_wall_thickness_ratio=0.02),
    ),
    ("ec6-across-pad", "end-tolerance-wide", {"a1": 250.0}, {}, _settings(tol_end_distance=60.0)),
    (
        "ec6-across-pad",
        "more-required",
        {},
        {},
        _settings(required=("bearing_length", "flange_width", "offset_along", "mortar")),
    ),
    (
        "ec6-across-pad",
        "nothing-required",
        {},
        {},
        _settings(required=(), required_with_padstone=()),
    ),
    (
        "ec6-across-pad",
        "flange-tolerance-wide",
        {"flange_width": 146.0},
        {},
        _settings(tol_flange_width=15.0),
    ),
    # Measurements left out.
    (
        "ec6-across-pad",
        "wall-and-depth-unmeasured",
        {"wall_thickness": DROP, "padstone_depth": DROP},
        {},
        None,
    ),
    ("ec6-across-pad", "end-unmeasured", {"a1": DROP}, {}, None),
    ("ec6-across-bare", "presence-unmeasured", {"padstone_present": DROP}, {}, None),
    ("ec6-across-pad", "presence-unmeasured", {"padstone_present": DROP}, {}, None),
    # Refused as built: what the core cannot work with.
    ("ec6-across-pad", "wall-narrower-than-padstone", {"wall_thickness": 190.0}, {}, None),
    ("ec6-across-pad", "bearing-longer-than-padstone", {"bearing_length": 250.0}, {}, None),
    ("ec6-across-pad", "beam-off-padstone", {"offset_along": 200.0}, {}, None),
    ("ec6-across-bare", "bearing-longer-than-wall", {"bearing_length": 240.0}, {}, None),
    ("ec6-across-pad", "end-negative", {"a1": -10.0}, {}, None),
    ("ec6-across-pad", "wall-in-metres", {"wall_thickness": 0.215}, {}, None),
    ("ec6-across-pad", "padstone-in-metres", {"padstone_length": 0.44}, {}, None),
    ("ec6-inline-bare", "flange-wider-than-wall", {"flange_width": 150.0}, {}, None),
)

# Records whose measurements, checklist or settings cannot be read at all:
# (design, case, measurements, checklist, settings), each taken as it stands.
RAW_CASES: tuple[tuple[str, str, object, object, dict | None], ...] = (
    ("ec6-across-pad", "unknown-measurement", {"bearing_lenght": 150.0}, {}, None),
    ("ec6-across-pad", "measurement-as-text", {"wall_thickness": "215"}, {}, None),
    ("ec6-across-pad", "measurement-as-true", {"wall_thickness": True}, {}, None),
    ("ec6-across-pad", "group-not-whole", {"masonry_group": 1.5}, {}, None),
    ("ec6-across-pad", "group-as-text", {"masonry_group": "2"}, {}, None),
    ("ec6-across-pad", "group-whole-float", {"masonry_group": 2.0}, {}, None),
    ("ec6-across-pad", "presence-as-text", {"padstone_present": "yes"}, {}, None),
    ("ec6-across-pad", "concrete-as-number", {"padstone_concrete": 25}, {}, None),
    ("ec6-across-pad", "measurements-a-list", [150.0], {}, None),
    ("ec6-across-pad", "measurements-empty-list", [], {}, None),
    ("ec6-across-pad", "measurements-null", None, None, None),
    ("ec6-across-pad", "measurements-all-null", dict.fromkeys(("a1", "a2", "mortar")), {}, None),
    ("ec6-across-pad", "two-unknown-measurements", {"zeta": 1.0, "alpha": 2.0}, {}, None),
    ("ec6-across-pad", "checklist-unknown", {}, {"wet": True}, None),
    ("ec6-across-pad", "checklist-packing-text", {}, {"packing": "none"}, None),
    ("ec6-across-pad", "checklist-cracks-text", {}, {"cracks": "no"}, None),
    ("ec6-across-pad", "checklist-a-text", {}, "all good", None),
    ("ec6-across-pad", "both-unreadable", {"wall_thickness": "x"}, {"level": 1}, None),
    ("ec6-across-pad", "setting-unknown", {}, {}, {"thresold": 0.8}),
    ("ec6-across-pad", "settings-partial", {}, {}, {"threshold": 0.5, "max_packing": 2}),
    ("ec6-across-pad", "settings-empty", {}, {"packing": 12.0}, {}),
)


# Bearings that could not be measured: (design, case, why, measurements, checklist).
UNMEASURED_CASES: tuple[tuple[str, str, str, object, object], ...] = (
    ("ec6-across-pad", "not-measurable-covered", "covered", {}, {}),
    (
        "bs-across-pad",
        "not-measurable-cracks-seen",
        "no-access",
        {},
        {"cracks": True, "packing": 12.0},
    ),
    ("ec6-inline-end", "not-measurable-nothing-said", "unsafe", None, None),
    ("ec6-across-bare", "not-measurable-other", "other", {"padstone_present": None}, {}),
    ("ec6-across-pad", "not-measurable-but-measured", "no-access", {"bearing_length": 150.0}, {}),
    ("ec6-across-pad", "not-measurable-why-unknown", "too dark", {}, {}),
    ("ec6-across-pad", "not-measurable-unreadable", "covered", {"wall_thickness": "x"}, {}),
    ("ec6-across-pad", "not-measurable-bad-setting", "covered", {}, {}),
)


def _measure(design: BearingInput, changes: dict) -> dict:
    m = as_designed(design)
    for name, value in changes.items():
        if value == DROP:
            m.pop(name, None)
        else:
            m[name] = value
    return m


def _hand_cases() -> list[dict]:
    out = []
    for name, basis, design in designs():
        out.append(
            review_case(f"{name}/as-designed", basis, design, as_designed(design), GOOD_CHECKLIST)
        )
        out.append(review_case(f"{name}/nothing-measured", basis, design, {}, {}))
    for name, case, changes, checklist, settings in HAND_CASES:
        basis, design = design_named(name)
        out.append(
            review_case(
                f"{name}/{case}", basis, design, _measure(design, changes), checklist, settings
            )
        )
    for name, case, measurements, checklist, settings in RAW_CASES:
        basis, design = design_named(name)
        out.append(review_case(f"{name}/{case}", basis, design, measurements, checklist, settings))
    for name, case, why, measurements, checklist in UNMEASURED_CASES:
        basis, design = design_named(name)
        settings = {"thresold": 0.8} if case.endswith("bad-setting") else None
        out.append(
            review_case(f"{name}/{case}", basis, design, measurements, checklist, settings, why)
        )
    return out


# --- review cases drawn at random ---------------------------------------------------------

_MATERIAL_GROUPS = (
    ("clay", 1),
    ("clay", 2),
    ("calcium silicate", 1),
    ("aggregate concrete", 1),
    ("aggregate concrete", 2),
    ("aggregate concrete", 3),
)


def _half_mm(x: float) -> float:
    """What a tape gives: the nearest half millimetre."""
    return round(x * 2) / 2


def _random_measurements(rng: random.Random, design: BearingInput) -> dict:
    """The as-designed measurements with one to four things found otherwise on site: a
    dimension off by a little or a lot, the beam moved, other units or mortar, the padstone
    missing or added, a measurement left out."""
    beam, pad, wall = design.beam, design.padstone, design.wall

    def near(value: float, steps: tuple[float, ...]) -> float:
        return _half_mm(max(value + rng.choice((-1, 1)) * rng.choice(steps), 0.0))

    def new_padstone() -> dict:
        length, width, depth = rng.choice(STANDARD_PADSTONES)
        return {
            "padstone_present": True,
            "padstone_length": length,
            "padstone_width": min(width, wall.thickness),
            "padstone_depth": depth,
        }

    # Each draws its values only when chosen, so the cases depend on the choices alone.
    findings = [
        lambda: {"bearing_length": near(beam.bearing_length, (4, 9, 15, 30, 45))},
        lambda: {"flange_width": near(beam.flange_width, (3, 6, 13))},
        lambda: {"offset_along": rng.choice((-40.0, -22.5, -12.5, 0.0, 7.5, 17.5, 30.0))},
        lambda: {"offset_across": rng.choice((-25.0, -10.5, 0.0, 4.5, 20.0))},
        lambda: {"wall_thickness": near(wall.thickness, (2, 4, 8, 12, 20))},
        lambda: {"a1": near(400.0 if wall.a1 is None else wall.a1, (10, 30, 80, 150))},
        lambda: {"a2": near(800.0 if wall.a2 is None else wall.a2, (10, 30, 200))},
        lambda: {"mortar": rng.choice(("M2", "M4", "M6", "M12"))},
        lambda: {"unit_strength": rng.choice((3.6, 7.3, 10.0, 15.0, 20.0, 35.0))},
        lambda: dict(
            zip(("masonry_material", "masonry_group"), rng.choice(_MATERIAL_GROUPS), strict=True)
        ),
        lambda: {rng.choice(sorted(as_designed(design))): DROP},
    ]
    if pad is not None:
        findings += [
            lambda: {"padstone_length": near(pad.length, (5, 12, 40, 110))},
            lambda: {"padstone_width": near(pad.width, (4, 15, 75))},
            lambda: {"padstone_depth": near(pad.depth, (6, 12, 40))},
            lambda: {"padstone_concrete": rng.choice(STANDARD_CLASSES)},
            lambda: {"padstone_reinforced": rng.random() < 0.5},
            lambda: NO_PADSTONE,
        ]
    else:
        findings.append(new_padstone)
    changes: dict = {}
    for finding in rng.sample(findings, rng.choice((1, 1, 2, 2, 3, 4))):
        changes |= finding()
    return _measure(design, changes)


def _random_checklist(rng: random.Random) -> dict:
    c: dict = {}
    for name, good, bad in (
        ("bedded", True, False),
        ("cracks", False, True),
        ("cut_units", False, True),
        ("level", True, False),
    ):
        roll = rng.random()
        if roll < 0.45:
            c[name] = good
        elif roll < 0.55:
            c[name] = bad
        elif roll < 0.6:
            c[name] = None
    if rng.random() < 0.6:
        c["packing"] = rng.choice((0.0, 0.0, 3.0, 5.0, 10.0, 10.5, 12.0, 20.0))
    return c


def _random_settings(rng: random.Random) -> dict | None:
    if rng.random() < 0.7:
        return None
    return _settings(
        threshold=rng.choice((0.5, 0.6, 0.75, 0.8, 0.9)),
        rise_margin=rng.choice((0.0, 0.05, 0.1, 0.25)),
        tol_bearing_length=rng.choice((5.0, 10.0, 15.0)),
        tol_padstone=rng.choice((5.0, 10.0, 20.0)),
        tol_position=rng.choice((7.5, 15.0, 25.0)),
        tol_end_distance=rng.choice((10.0, 25.0, 50.0)),
        max_packing=rng.choice((5.0, 10.0, 12.5)),
    )


def _random_cases() -> list[dict]:
    rng = random.Random(SEED)
    all_designs = designs()
    out = []
    for i in range(RANDOM_REVIEW_CASES):
        name, basis, design = rng.choice(all_designs)
        measurements = _random_measurements(rng, design)
        checklist = _random_checklist(rng)
        settings = _random_settings(rng)
        out.append(
            review_case(f"random-{i:03d}/{name}", basis, design, measurements, checklist, settings)
        )
    return out


def review_vectors() -> list[dict]:
    """Every review case: the fixed ones first, then the drawn ones."""
    return _hand_cases() + _random_cases()


# --- remedy cases -------------------------------------------------------------------------


def remedy_case(case_id: str, basis: CodeBasis, inp: BearingInput, **options) -> dict:
    """One failing bearing and the remedy the core finds for it. ``options`` are the
    remedy's own arguments (sizes, classes, step) where a case changes them."""
    inp = input_from_dict(input_to_dict(inp))
    case = {"id": case_id, "basis": basis.to_dict(), "input": input_to_dict(inp)}
    if options:
        case["options"] = {
            k: [list(v) for v in val] if k == "sizes" else (list(val) if k == "classes" else val)
            for k, val in options.items()
        }
    case["expect"] = remedy(inp, basis, **options).as_dict()
    return case


def _loaded(inp: BearingInput, reaction: float) -> BearingInput:
    return replace(inp, load=replace(inp.load, reaction=reaction))


def _remedy_inputs() -> list[tuple[str, CodeBasis, BearingInput, dict]]:
    """(case, basis, failing bearing, options) fixed by hand."""
    out = []

    def add(case, name, inp_of, **options):
        basis, design = design_named(name)
        out.append((f"{name}/{case}", basis, inp_of(design), options))

    add("no-padstone", "ec6-across-pad", lambda d: replace(d, padstone=None))
    add(
        "no-padstone-heavier",
        "ec6-across-pad",
        lambda d: _loaded(replace(d, padstone=None), 90_000.0),
    )
    add("bare-overloaded", "ec6-across-bare", lambda d: _loaded(d, 60_000.0))
    add(
        "bare-lintel-short",
        "ec6-across-bare",
        lambda d: replace(d, beam=replace(d.beam, member="lintel", bearing_length=110.0)),
    )
    add(
        "short-bearing",
        "ec6-across-pad",
        lambda d: replace(d, beam=replace(d.beam, bearing_length=90.0)),
    )
    add(
        "short-bearing-coarse-step",
        "ec6-across-pad",
        lambda d: replace(d, beam=replace(d.beam, bearing_length=90.0)),
        step=25.0,
    )
    add("overloaded", "ec6-across-pad", lambda d: _loaded(d, 230_000.0))
    add("hollow-overloaded", "ec6-across-hollow", lambda d: _loaded(d, 180_000.0))
    add("hollow-no-padstone", "ec6-across-hollow", lambda d: replace(d, padstone=None))
    add("spreader-overloaded", "ec6-across-spreader", lambda d: _loaded(d, 200_000.0))
    add(
        "near-end",
        "ec6-across-pad",
        lambda d: _loaded(replace(d, wall=replace(d.wall, a1=0.0)), 170_000.0),
    )
    add(
        "in-line-no-padstone",
        "ec6-inline-brick",
        lambda d: _loaded(replace(d, padstone=None), 70_000.0),
    )
    add("in-line-overloaded", "ec6-inline-brick", lambda d: _loaded(d, 90_000.0))
    # An offset typed in at the default position gets the same hint as one left empty.
    add(
        "in-line-offset-at-default",
        "ec6-inline-brick",
        lambda d: _loaded(
            replace(
                d,
                beam=replace(
                    d.beam,
                    offset_along=(d.beam.bearing_length - d.padstone.length) / 2,
                    offset_across=0.0,
                ),
            ),
            90_000.0,
        ),
    )
    add(
        "across-offset-at-default",
        "ec6-across-pad",
        lambda d: _loaded(
            replace(
                d,
                beam=replace(
                    d.beam,
                    offset_along=0.0,
                    offset_across=(d.beam.bearing_length - d.padstone.width) / 2,
                ),
            ),
            230_000.0,
        ),
    )
    # A beam placed off its default, on a padstone placed off its default.
    add(
        "across-off-default-centred-padstone",
        "ec6-across-pad",
        lambda d: _loaded(
            replace(
                d,
                beam=replace(d.beam, bearing_length=100.0, offset_across=-10.0),
                padstone=replace(d.padstone, width=140.0, position_across="centred"),
            ),
            120_000.0,
        ),
    )
    add("in-line-bare-web-off", "ec6-inline-bare", lambda d: d)
    add("thin-wall", "ec6-across-aac", lambda d: _loaded(d, 45_000.0))
    add("small-pad-overloaded", "ec6-across-small-pad", lambda d: _loaded(d, 60_000.0))
    add(
        "thick-wall-no-padstone",
        "ec6-across-thick",
        lambda d: _loaded(replace(d, padstone=None), 130_000.0),
    )
    add(
        "declared-no-padstone",
        "ec6-across-declared",
        lambda d: replace(d, padstone=None, beam=replace(d.beam, offset_along=None)),
    )
    add(
        "only-small-sizes",
        "ec6-across-pad",
        lambda d: replace(d, padstone=None),
        sizes=((215.0, 140.0, 100.0),),
        classes=("C20/25",),
    )
    add("nothing-passes", "ec6-across-pad", lambda d: _loaded(d, 900_000.0))
    add("nothing-passes-bare", "ec6-across-bare", lambda d: _loaded(d, 700_000.0))
    add("bs-no-padstone", "bs-across-pad", lambda d: _loaded(replace(d, padstone=None), 60_000.0))
    add("bs-overloaded", "bs-across-pad", lambda d: _loaded(d, 250_000.0))
    add(
        "bs-short-bearing",
        "bs-across-pad",
        lambda d: replace(d, beam=replace(d.beam, bearing_length=80.0)),
    )
    add("bs-type3-overloaded", "bs-inline-type3", lambda d: _loaded(d, 150_000.0))
    add(
        "bs-type3-no-padstone",
        "bs-inline-type3",
        lambda d: _loaded(replace(d, padstone=None), 80_000.0),
    )
    add("bs-bare-type2-overloaded", "bs-across-bare-type2", lambda d: _loaded(d, 70_000.0))
    add("bs-declared-overloaded", "bs-across-declared", lambda d: _loaded(d, 200_000.0))
    add("bs-nothing-passes", "bs-across-pad", lambda d: _loaded(d, 1_500_000.0))
    add("bs-spreader-overloaded", "bs-across-spreader-type2", lambda d: _loaded(d, 300_000.0))
    return out


def _random_failing(rng: random.Random) -> tuple[str, CodeBasis, BearingInput]:
    """A design from the list made to fail: heavier, barer, shorter or nearer an end."""
    all_designs = designs()
    while True:
        name, basis, design = rng.choice(all_designs)
        inp = _loaded(design, _half_mm(design.load.reaction * rng.choice((1.5, 2.0, 3.0, 4.5))))
        if rng.random() < 0.4:
            inp = replace(inp, padstone=None, beam=replace(inp.beam, offset_along=None))
        if rng.random() < 0.3:
            inp = replace(
                inp, beam=replace(inp.beam, bearing_length=rng.choice((80.0, 90.0, 100.0)))
            )
        if rng.random() < 0.3 and inp.wall.a1 is not None:
            inp = replace(inp, wall=replace(inp.wall, a1=rng.choice((0.0, 50.0, 120.0))))
        try:
            if not check_bearing(inp, basis).passed:
                return name, basis, inp
        except InputError:
            continue


def remedy_vectors() -> list[dict]:
    """Failing bearings of both bases and what the remedy finds for each, including ones
    where no standard padstone passes."""
    out = [
        remedy_case(case, basis, inp, **options) for case, basis, inp, options in _remedy_inputs()
    ]
    rng = random.Random(SEED + 1)
    for i in range(RANDOM_REMEDY_CASES):
        name, basis, inp = _random_failing(rng)
        out.append(remedy_case(f"remedy-{i:03d}/{name}", basis, inp))
    return out
