"""Small builders of bearing inputs for the tests.

The sizes are ordinary ones of the trade (a 440 × 215 × 140 precast padstone, a 215 mm
block wall); the loads are invented. No expected value lives here.
"""

from __future__ import annotations

from dataclasses import replace

from hypothesis import strategies as st

from sitecheck.bearing import ACROSS, IN_LINE, Beam, BearingInput, Load, Masonry, Padstone, Wall


def across_on_padstone(**changes) -> BearingInput:
    inp = BearingInput(
        load=Load(reaction=60_000.0),
        beam=Beam(flange_width=133.0, bearing_length=150.0),
        wall=Wall(thickness=215.0, height_to_bearing=2400.0, a1=300.0),
        masonry=Masonry(
            material="aggregate concrete",
            group=1,
            unit_strength=10.0,
            unit_strength_is_normalised=True,
            mortar="M4",
        ),
        padstone=Padstone(length=440.0, width=215.0, depth=140.0, concrete="C25/30"),
    )
    return replace(inp, **changes) if changes else inp


def brick_in_line_end(**changes) -> BearingInput:
    inp = BearingInput(
        load=Load(reaction=35_000.0),
        beam=Beam(flange_width=146.0, bearing_length=150.0, orientation=IN_LINE),
        wall=Wall(thickness=215.0, height_to_bearing=2700.0, a1=0.0),
        masonry=Masonry(
            material="clay",
            group=1,
            unit_strength=20.0,
            unit_height=65.0,
            unit_width=102.5,
            mortar="M4",
        ),
        padstone=Padstone(length=440.0, width=215.0, depth=215.0, concrete="C25/30"),
        bearing_type=3,
    )
    return replace(inp, **changes) if changes else inp


@st.composite
def bearings(draw, orientation=None, padstone=None, wall_load=None) -> BearingInput:
    """Valid, varied bearings: both orientations, with and without padstones, all unit
    groups and materials with a K value, off-centre beams, wall ends near and far."""
    orient = orientation or draw(st.sampled_from((ACROSS, IN_LINE)))
    t = draw(st.sampled_from((100.0, 140.0, 190.0, 215.0, 300.0)))
    has_pad = draw(st.booleans()) if padstone is None else padstone
    b_f = draw(st.floats(70.0, 200.0))
    if orient == IN_LINE and not has_pad:
        b_f = min(b_f, t)
    if has_pad:
        B = draw(st.floats(min(100.0, t), t))
        h = draw(st.floats(65.0, 300.0))
        if orient == ACROSS:
            L = draw(st.floats(b_f, 900.0))
            l_b = draw(st.floats(60.0, B))
            room = (L - b_f) / 2
            off_along = draw(st.one_of(st.none(), st.floats(-room, room)))
            off_across = None
        else:
            l_b = draw(st.floats(60.0, 300.0))
            L = draw(st.floats(max(l_b, 200.0), 900.0))
            off_along = None
            foot_across = min(b_f, B)
            room = (B - foot_across) / 2
            off_across = draw(st.one_of(st.none(), st.floats(-room, room)))
        pad = Padstone(
            length=L,
            width=B,
            depth=h,
            concrete=draw(st.sampled_from(("C20/25", "C25/30", "C30/37", "C40/50"))),
        )
    else:
        pad = None
        off_along = None
        if orient == ACROSS:
            l_b = draw(st.floats(60.0, t))
            off_across = None
        else:
            l_b = draw(st.floats(60.0, 300.0))
            room = (t - b_f) / 2
            off_across = draw(st.one_of(st.none(), st.floats(-room, room)))
    material, group = draw(
        st.sampled_from(
            (
                ("clay", 1),
                ("clay", 2),
                ("calcium silicate", 1),
                ("aggregate concrete", 1),
                ("aggregate concrete", 2),
                ("aggregate concrete", 3),
                ("autoclaved aerated concrete", 1),
            )
        )
    )
    masonry = Masonry(
        material=material,
        group=group,
        unit_strength=draw(st.floats(2.9, 40.0)),
        unit_strength_is_normalised=True,
        mortar=draw(st.sampled_from(("M2", "M4", "M6", "M12"))),
    )
    # Low bearings too (a padstone a few courses up): there a1/h_c is large soon.
    h_c = draw(st.floats(300.0, 4000.0))
    a1 = draw(st.one_of(st.none(), st.floats(0.0, 2000.0)))
    a2 = draw(st.one_of(st.none(), st.floats(0.0, 2000.0)))
    load = Load(
        reaction=draw(st.floats(1_000.0, 200_000.0)),
        wall_load=draw(st.floats(0.0, 60.0)) if wall_load is None else wall_load,
    )
    beam = Beam(
        flange_width=b_f,
        bearing_length=l_b,
        orientation=orient,
        member=draw(st.sampled_from(("beam", "lintel"))),
        offset_along=off_along,
        offset_across=off_across,
        reaction_at=draw(st.sampled_from(("centroid", "near-third"))),
    )
    return BearingInput(
        load=load,
        beam=beam,
        wall=Wall(thickness=t, height_to_bearing=h_c, a1=a1, a2=a2),
        masonry=masonry,
        padstone=pad,
        bearing_type=draw(st.sampled_from((1, 2, 3))),
    )
