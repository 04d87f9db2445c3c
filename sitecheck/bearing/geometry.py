"""Where the load sits and how it spreads through the padstone to the masonry.

All the geometry of one bearing, worked out once and shared by every check. Layouts and
pressures are named tuples, as steps are: a bearing makes several of each, and they never
leave the core (the result carries their values in its :class:`~.trace.Spread`).
"""

from __future__ import annotations

import math
from typing import NamedTuple

from .basis import CodeBasis
from .formulas import linear_pressure
from .inputs import ACROSS, Beam, BearingInput, Padstone
from .trace import Step, make_step

# Builds a Layout or Pressure from the tuple of its fields, as make_step builds a step:
# calling a named tuple class goes through its Python-level __new__.
_new_tuple = tuple.__new__


class Layout(NamedTuple):
    """The support and the footprint in the support's frame (x along from the a1 end,
    y across from the support's near edge), and the reaction's position."""

    has_padstone: bool
    length: float  # support length along the wall
    width: float  # support width across the wall
    depth: float  # padstone depth (0 with no padstone)
    y0_in_wall: float  # the support's near edge, from the wall's near face
    x0: float
    x1: float
    y0: float
    y1: float
    reaction_x: float
    reaction_y: float
    eccentricity_across: float  # reaction from the wall's centre line, signed


def layout(inp: BearingInput) -> Layout:
    beam = inp.beam
    return footprint_layout(
        beam,
        inp.padstone,
        inp.wall.thickness,
        beam.offset_along,
        beam.offset_across,
        beam.reaction_at,
    )


def footprint_layout(
    beam: Beam,
    pad: Padstone | None,
    t: float,
    offset_along: float | None,
    offset_across: float | None,
    reaction_at: str,
) -> Layout:
    """The layout of ``beam`` on ``pad`` (or on the bare wall of thickness ``t``) with the
    position and reaction given here rather than the beam's own, so a check can place the
    same beam another way (say, without its padstone) without building a new input."""
    across = beam.orientation == ACROSS
    foot_along = beam.flange_width if across else beam.bearing_length
    foot_across = beam.bearing_length if across else beam.flange_width
    if pad is not None:
        # Within the wall's tolerance a padstone may stand proud; only what is over the
        # wall bears on it.
        length, width, depth = pad.length, min(pad.width, t), pad.depth
        foot_across = min(
            foot_across, width
        )  # an in-line flange may overhang; it bears on the padstone
        y0_in_wall = padstone_y0(pad, width, t, across)
    else:
        length, width, depth = foot_along, t, 0.0
        y0_in_wall = 0.0
    if offset_along is not None and pad is not None:
        cx = length / 2 + offset_along
    elif across or pad is None:
        cx = length / 2
    else:
        cx = foot_along / 2  # in line: flush with the padstone's end facing the span
    if offset_across is not None:
        cy = width / 2 + offset_across
    elif across:
        cy = foot_across / 2  # across: flush with the near face
    else:
        cy = width / 2
    x0, x1 = cx - foot_along / 2, cx + foot_along / 2
    y0, y1 = cy - foot_across / 2, cy + foot_across / 2
    # Measurement rounding may put an edge a fraction outside; validation allowed 0.5 mm.
    x0, x1 = max(x0, 0.0), min(x1, length)
    y0, y1 = max(y0, 0.0), min(y1, width)
    if reaction_at == "near-third":
        # A flexible end bears hardest on its near edge: take the reaction uniform over the
        # near two thirds of the bearing length, i.e. at l_b/3 from that edge.
        if across:
            y1 = y0 + (y1 - y0) * 2 / 3
        else:
            x1 = x0 + (x1 - x0) * 2 / 3
    rx, ry = (x0 + x1) / 2, (y0 + y1) / 2
    return _new_tuple(
        Layout,
        (
            pad is not None,
            length,
            width,
            depth,
            y0_in_wall,
            x0,
            x1,
            y0,
            y1,
            rx,
            ry,
            y0_in_wall + ry - t / 2,
        ),
    )


def padstone_y0(pad: Padstone, width: float, t: float, across: bool) -> float:
    """The near edge of a padstone ``width`` wide (the part over the wall) from the wall's
    near face, where its position across the wall puts it."""
    room = t - width
    position = pad.position_across or ("near-face" if across else "centred")
    if position == "near-face":
        return 0.0
    if position == "far-face":
        return room
    if position == "offset":
        assert pad.offset_across is not None  # validation asks for it with "offset"
        # Validation allowed half a millimetre of measurement rounding past either face.
        return min(max(room / 2 + pad.offset_across, 0.0), room)
    return room / 2


class Pressure(NamedTuple):
    """Pressure under the support on the masonry, linear along the wall."""

    window_x0: float
    window_x1: float
    window_y0: float
    window_y1: float
    rigid: bool
    distribution: str
    eccentricity: float
    sigma_max: float
    sigma_min: float
    contact_x0: float
    contact_x1: float

    @property
    def width(self) -> float:
        return self.window_y1 - self.window_y0

    @property
    def contact_length(self) -> float:
        return self.contact_x1 - self.contact_x0

    @property
    def area(self) -> float:
        return self.width * self.contact_length


# One piece: the pressure under the padstone, rigid or spread, with its resultant, as one
# derivation; geometry.js mirrors it line for line.
def pressure_under(lay: Layout, reaction: float, basis: CodeBasis, steps: list[Step]) -> Pressure:
    """Dispersion through the padstone and the pressure it puts on the masonry.

    The load spreads at ``basis.padstone_spread_deg`` (45°) through the depth, cut by the
    padstone's ends; where the spread reaches both ends the padstone acts as rigid and
    loads its whole plan. Along the wall the pressure is linear about the window's centre
    with its resultant at the reaction [S: eccentric footing formulas]: uniform when the
    load is central, a trapezoid while e ≤ L/6, a triangle over c = 3(L/2 − e) beyond.
    Across the wall the pressure is taken uniform over the dispersed width; eccentricity
    across is checked on its own (EC6 t/4), not folded into this pressure [ours].
    """
    spread = lay.depth * math.tan(math.radians(basis.padstone_spread_deg))
    wx0 = max(0.0, lay.x0 - spread)
    wx1 = min(lay.length, lay.x1 + spread)
    wy0 = max(0.0, lay.y0 - spread)
    wy1 = min(lay.width, lay.y1 + spread)
    rigid = lay.has_padstone and wx0 <= 1e-9 and wx1 >= lay.length - 1e-9
    L = wx1 - wx0
    W = wy1 - wy0
    e = lay.reaction_x - (wx0 + wx1) / 2
    kind, smax, smin, contact = linear_pressure(reaction, W, L, e)
    ae = abs(e)
    if kind == "uniform":
        e = 0.0
    if kind == "triangle":
        cx0, cx1 = (wx0, wx0 + contact) if e < 0 else (wx1 - contact, wx1)
    else:
        cx0, cx1 = wx0, wx1
    if lay.has_padstone:
        steps.append(
            make_step(
                "Load spread through the padstone, each side",
                "s",
                "h_p · tan(45°)",
                (("h_p", lay.depth, "mm"),),
                spread,
                "mm",
                "45° dispersion",
                "CP",
            )
        )
    steps.append(
        make_step(
            "Loaded length on the masonry" + (" (padstone acts as rigid)" if rigid else ""),
            "L_w",
            "min(support end, footprint + s) − max(support end, footprint − s)",
            (("footprint", lay.x1 - lay.x0, "mm"), ("support length", lay.length, "mm")),
            L,
            "mm",
            "45° dispersion",
            "CP",
        )
    )
    steps.append(
        make_step(
            "Loaded width on the masonry",
            "W",
            "dispersed width, cut at the support's edges",
            (("support width", lay.width, "mm"),),
            W,
            "mm",
            "45° dispersion",
            "CP",
        )
    )
    steps.append(
        make_step(
            "Eccentricity of the reaction along the loaded length",
            "e",
            "x_reaction − centre of L_w",
            (("x_reaction", lay.reaction_x, "mm"),),
            e,
            "mm",
            "statics",
            "S",
        )
    )
    if kind == "triangle":
        steps.append(
            make_step(
                "Peak pressure, triangular (e > L_w/6)",
                "σ_max",
                "2 N / (W · 3 (L_w/2 − e))",
                (("N", reaction, "N"), ("W", W, "mm"), ("L_w", L, "mm"), ("e", ae, "mm")),
                smax,
                "N/mm²",
                "eccentric footing, no tension",
                "S",
            )
        )
    else:
        steps.append(
            make_step(
                "Peak pressure, " + ("uniform" if kind == "uniform" else "trapezoidal (e ≤ L_w/6)"),
                "σ_max",
                "N / (W · L_w) · (1 + 6 e / L_w)",
                (("N", reaction, "N"), ("W", W, "mm"), ("L_w", L, "mm"), ("e", ae, "mm")),
                smax,
                "N/mm²",
                "eccentric footing",
                "S",
            )
        )
    return _new_tuple(Pressure, (wx0, wx1, wy0, wy1, rigid, kind, e, smax, smin, cx0, cx1))


WHOLE_WINDOW = "whole-window reading"
CONTACT_LENGTH = "contact-length reading"


class Reading(NamedTuple):
    """One reading of the loaded length on the masonry: its name ("" where there is only
    one), its ends in the support's frame and the wall's end distances from them."""

    name: str
    x0: float
    x1: float
    e1: float | None
    e2: float | None

    @property
    def length(self) -> float:
        return self.x1 - self.x0


def readings(
    lay: Layout, pres: Pressure, a1: float | None, a2: float | None
) -> tuple[Reading, ...]:
    """The loaded length on the masonry, read each way the codes leave open.

    Under a uniform or trapezoidal pressure the whole window is in contact: one reading.
    Under a triangle the codes are silent on whether the loaded length is the whole window
    (the padstone's length when it acts as rigid, else the dispersed window) or the
    contact length c = 3 (L/2 − e) at the loaded end; each check is worked both ways and
    keeps the higher utilisation [ours, the methods note's rule].
    """

    def reading(name: str, x0: float, x1: float) -> Reading:
        e1 = None if a1 is None else a1 + x0
        e2 = None if a2 is None else a2 + (lay.length - x1)
        return _new_tuple(Reading, (name, x0, x1, e1, e2))

    if pres.distribution != "triangle":
        return (reading("", pres.window_x0, pres.window_x1),)
    return (
        reading(WHOLE_WINDOW, pres.window_x0, pres.window_x1),
        reading(CONTACT_LENGTH, pres.contact_x0, pres.contact_x1),
    )


def worse(candidates: list[tuple[float, Reading]]) -> tuple[float, Reading]:
    """The (utilisation, reading) with the higher utilisation; on a tie the first."""
    best = candidates[0]
    for candidate in candidates[1:]:
        if candidate[0] > best[0]:
            best = candidate
    return best


def spread_length(loaded: float, e1: float | None, e2: float | None, each_side: float) -> float:
    """A loaded length plus a spread on each side, each cut by the wall's end."""
    left = each_side if e1 is None else min(e1, each_side)
    right = each_side if e2 is None else min(e2, each_side)
    return loaded + left + right
