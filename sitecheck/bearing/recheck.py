"""Run every check of one bearing on one code basis."""

from __future__ import annotations

from operator import attrgetter

from . import checks as C
from .basis import CodeBasis
from .format import number
from .geometry import Layout, footprint_layout, layout, pressure_under, readings
from .inputs import ACROSS, IN_LINE, BearingInput, wall_heights
from .strength import masonry_strengths_cached
from .trace import INFORMATIVE, STRENGTH, BearingResult, Check, Spread, Step, Strengths
from .validate import validate


# One piece: the order in which the checks run and feed one another, read top to bottom;
# recheck.js mirrors it line for line.
def check_bearing(inp: BearingInput, basis: CodeBasis) -> BearingResult:
    """Re-check one bearing. Raises :class:`~sitecheck.bearing.errors.InputError` for
    input that makes no physical sense or that no coded formula covers."""
    validate(inp, basis)
    # Validated above, so the remembered strengths of equal, same-typed input will do.
    strengths = masonry_strengths_cached(inp.masonry, inp.padstone, basis, inp.wall.thickness)
    lay = layout(inp)
    checks: list[Check] = [C.min_bearing(inp, basis)]
    if inp.beam.orientation == IN_LINE:
        checks.extend(C.inline_rules(inp, lay, basis))
    if inp.padstone is not None:
        checks.append(C.padstone_bearing(inp, lay, strengths, basis))

    steps: list[Step] = []
    pres = pressure_under(lay, inp.load.reaction, basis, steps)
    wall = inp.wall
    ec6 = basis.is_ec6
    # The spread the drawings show is the one the wall below is checked with: l_efm at
    # mid-height (EC6) or the dispersion at 0.4 h (BS 5628), on the reading that governs.
    if ec6:
        checks.append(C.ec6_masonry_bearing(inp, lay, pres, strengths, basis, steps))
        checks.append(C.ec6_eccentricity(inp, lay, basis))
        if inp.masonry.group != 1:
            checks.append(C.ec6_solid_material(inp, lay, basis))
        mid_height, spread_reading, spread_len = C.ec6_mid_height(inp, lay, pres, strengths, basis)
        checks.append(mid_height)
        spread_depth = wall.height_to_bearing / 2
    else:
        checks.append(C.bs_masonry_bearing(inp, pres, strengths, basis, steps))
        dispersion, spread_reading, spread_len = C.bs_dispersion(inp, lay, pres, strengths, basis)
        checks.append(dispersion)
        h, _h_ef, _t_ef = wall_heights(wall)
        spread_depth = basis.dispersion_depth_ratio * h
    checks.append(C.slenderness(inp, basis))
    notes = _assumption_notes(inp)
    if inp.padstone is not None:
        direct, note = _direct_bearing(inp, lay, strengths, basis)
        if direct is not None:
            checks.append(direct)
        if note:
            notes.append(note)

    governing, passed = _governing(checks)
    spread = Spread(
        lay.length,
        lay.width,
        lay.depth,
        lay.y0_in_wall,
        lay.x0,
        lay.x1,
        lay.y0,
        lay.y1,
        lay.reaction_x,
        lay.reaction_y,
        pres.window_x0,
        pres.window_x1,
        pres.window_y0,
        pres.window_y1,
        pres.rigid,
        pres.distribution,
        pres.eccentricity,
        pres.sigma_max,
        pres.sigma_min,
        pres.contact_x0,
        pres.contact_x1,
        spread_reading.e1,
        spread_reading.e2,
        lay.eccentricity_across,
        basis.masonry_spread_deg,
        spread_depth,
        spread_len,
        spread_reading.x0,
        spread_reading.x1,
        spread_reading.name,
    )
    return BearingResult(
        basis.name,
        tuple(checks),
        governing.code,
        governing.utilisation,
        passed,
        strengths,
        spread,
        tuple(notes),
    )


def _governing(checks: list[Check]) -> tuple[Check, bool]:
    """The check that decides, and whether the bearing passes (no check fails, leaving
    aside the informative ones). The check that decides is the worst failing one, else the
    most utilised strength check. A rule of the trade met with room to spare (say 150 mm
    of bearing where 100 is asked) is not a utilisation an engineer would quote."""
    failing = [c for c in checks if c.kind != INFORMATIVE and not c.passed]
    pool = failing or [c for c in checks if c.kind == STRENGTH]
    return max(pool, key=_utilisation), not failing


_utilisation = attrgetter("utilisation")


def _assumption_notes(inp: BearingInput) -> list[str]:
    wall = inp.wall
    under = "the padstone's underside" if inp.padstone is not None else "the beam's underside"
    # Said every time: the seating level typed by mistake moves the result by up to 15 %.
    notes = [
        f"h_c = {number(wall.height_to_bearing)} mm, from the wall's base to {under} (not "
        "to where the beam sits on the padstone)."
    ]
    if wall.clear_height is None:
        notes.append("Clear height h taken as the height to the bearing h_c.")
    if wall.effective_height is None:
        notes.append("Effective height h_ef taken as the clear height (ρ = 1.0, cautious).")
    if wall.a1 is None and wall.a2 is None:
        notes.append("The wall is taken to run on both ways from the bearing (no end near).")
    if inp.beam.reaction_at == "near-third":
        notes.append(
            "Flexible beam end: the reaction is taken over the near two thirds of the bearing."
        )
    return notes


def _direct_bearing(
    inp: BearingInput, lay: Layout, strengths: Strengths, basis: CodeBasis
) -> tuple[Check | None, str | None]:
    """The masonry check as if the beam sat on the masonry with no padstone: does the
    bearing need its padstone at all? Informative only; it never governs.

    ``lay`` is the bearing's own layout on its padstone."""
    beam, wall = inp.beam, inp.wall
    if beam.orientation == IN_LINE and beam.flange_width > wall.thickness:
        return None, "Without the padstone the flange would overhang the wall."
    # Where the flange sits, with the reaction at its centroid.
    if beam.reaction_at == "centroid":
        nominal = lay
    else:
        nominal = footprint_layout(
            beam, inp.padstone, wall.thickness, beam.offset_along, beam.offset_across, "centroid"
        )
    a1 = None if wall.a1 is None else wall.a1 + nominal.x0
    a2 = None if wall.a2 is None else wall.a2 + (nominal.length - nominal.x1)
    across_offset = nominal.y0_in_wall + (nominal.y0 + nominal.y1) / 2 - wall.thickness / 2
    # The same flange in the same place straight on the masonry, with the wall's ends
    # measured from that footprint.
    bare_lay = footprint_layout(beam, None, wall.thickness, None, across_offset, beam.reaction_at)
    steps: list[Step] = []
    pres = pressure_under(bare_lay, inp.load.reaction, basis, steps)
    title = "Masonry directly under the beam, without the padstone"
    if basis.is_ec6:
        check = C.ec6_bearing_on_readings(
            inp.masonry,
            wall,
            readings(bare_lay, pres, a1, a2),
            pres,
            strengths,
            basis,
            steps,
            spreader=None,
            on_padstone=False,
            code="direct-bearing",
            title=title,
            kind=INFORMATIVE,
        )
    else:
        # The local bearing check reads only the bearing type from the input.
        check = C.bs_masonry_bearing(
            inp, pres, strengths, basis, steps, "direct-bearing", title, INFORMATIVE
        )
    note = None
    if inp.masonry.group != 1:
        note = "On Group 2–4 units a padstone (solid material) is needed whatever the stress."
    return check, note


__all__ = ["check_bearing", "ACROSS", "IN_LINE"]
