"""Inputs of one bearing, in N, mm and N/mm².

Geometry convention (fixed here, used everywhere):

* x runs along the wall, y across it. The *support* is the padstone, or, where there is
  none, the masonry directly under the beam.
* The beam's footprint on the support is ``flange_width`` along × ``bearing_length``
  across for a beam spanning across the wall, and ``bearing_length`` along ×
  ``flange_width`` across for a beam in line with the wall.
* The beam arrives from the *near* side: the wall face it crosses (across), or the
  padstone end facing the span, i.e. the opening (in line). The near side is the low
  coordinate: x = 0 is the padstone end from which ``a1`` is measured; y = 0 is the near
  face of the wall.
* A padstone under a beam across the wall sits flush with the near face; one under a beam
  in line with the wall is centred on the wall's thickness. ``Padstone.position_across``
  says otherwise: flush with the near face, centred, flush with the far face, or offset
  (its centre ``offset_across`` from the wall's centre line, + towards the far face).
* Offsets are of the footprint's centre from the support's centre. Left out, they follow
  the construction: flush with the near edge in the span direction, centred in the other.
"""

from __future__ import annotations

from dataclasses import dataclass

ACROSS = "across"
IN_LINE = "in-line"
ORIENTATIONS = (ACROSS, IN_LINE)

MEMBERS = ("beam", "lintel")
REACTION_POSITIONS = ("centroid", "near-third")

MATERIALS = (
    "clay",
    "calcium silicate",
    "aggregate concrete",
    "autoclaved aerated concrete",
    "manufactured stone",
)
MORTARS = ("M2", "M4", "M6", "M12", "thin-layer")
CONDITIONING = ("air-dried", "water-soaked")
CONTROL_LEVELS = ("normal", "special")
PADSTONE_POSITIONS = ("near-face", "centred", "far-face", "offset")


@dataclass(frozen=True, slots=True)
class Load:
    """ULS loads at the bearing.

    reaction: N_Ed, the beam's end reaction, N.
    wall_load: other vertical load carried by the wall at that level, N/mm (= kN/m).
    """

    reaction: float
    wall_load: float = 0.0


@dataclass(frozen=True, slots=True)
class Beam:
    """The member that bears: a steel beam or a lintel, mm."""

    flange_width: float
    bearing_length: float
    orientation: str = ACROSS
    member: str = "beam"
    offset_along: float | None = None
    offset_across: float | None = None
    # "near-third": a flexible beam end rotates onto the near edge of its bearing; the
    # reaction is then taken over the near two thirds of the bearing length.
    reaction_at: str = "centroid"


@dataclass(frozen=True, slots=True)
class Padstone:
    """A concrete spreader under the beam, mm. ``f_ck`` (N/mm²) overrides the class.

    ``reinforced`` False (the default) is plain concrete, as site padstones usually are,
    precast or cast in place: EN 1992-1-1 section 12 then takes α_cc,pl for f_cd.

    ``position_across``: where a padstone narrower than the wall sits across it, one of
    :data:`PADSTONE_POSITIONS`; None is as built in (flush with the near face under a beam
    across the wall, centred under one in line with it). ``offset_across``: with "offset",
    the padstone's centre from the wall's centre line, mm, + towards the far face.
    """

    length: float
    width: float
    depth: float
    concrete: str = "C25/30"
    f_ck: float | None = None
    reinforced: bool = False
    position_across: str | None = None
    offset_across: float | None = None


@dataclass(frozen=True, slots=True)
class Wall:
    """The wall under the bearing, mm.

    height_to_bearing: h_c, from the wall's base to the padstone's underside (with no
    padstone, to the beam's underside): where the load enters the masonry, not the level
    the beam sits at on the padstone.
    clear_height: h (defaults to h_c); effective_height: h_ef (defaults to h);
    effective_thickness: t_ef (defaults to t).
    a1: along the wall from the support's x = 0 end to the wall's end or an opening edge.
    a2: from the other end; ``None`` for a wall that runs on.
    """

    thickness: float
    height_to_bearing: float
    a1: float | None = None
    a2: float | None = None
    clear_height: float | None = None
    effective_height: float | None = None
    effective_thickness: float | None = None


def wall_heights(wall: Wall) -> tuple[float, float, float]:
    """h, h_ef and t_ef, each defaulted as :class:`Wall` says: h to h_c, h_ef to h, t_ef to
    t. An empty value (None, or 0, which validation refuses) takes its default."""
    h = wall.clear_height or wall.height_to_bearing
    return h, wall.effective_height or h, wall.effective_thickness or wall.thickness


@dataclass(frozen=True, slots=True)
class Masonry:
    """Units, mortar and how well both are made.

    Give ``f_k`` (N/mm²) directly, or the unit strength: the declared mean ``f_u`` with the
    unit's height and least horizontal dimension (normalised here), or the normalised
    strength ``f_b`` with ``unit_strength_is_normalised``. ``gamma_M`` overrides the code
    basis's partial factor.

    ``collar_joint``: whether the wall has a mortar joint parallel to its face (a
    longitudinal or collar joint, as in a one-brick wall), which takes 0.8 × K in EC6 eqn
    3.1. None infers it from the wall's thickness and the unit's width.
    """

    material: str = "aggregate concrete"
    group: int = 1
    unit_strength: float | None = None
    unit_strength_is_normalised: bool = False
    unit_height: float | None = None
    unit_width: float | None = None
    conditioning: str = "air-dried"
    mortar: str = "M4"
    f_k: float | None = None
    shell_bedded: bool = False
    collar_joint: bool | None = None
    unit_category: str = "I"
    execution_class: int = 2
    manufacturing_control: str = "normal"
    construction_control: str = "normal"
    gamma_M: float | None = None


@dataclass(frozen=True, slots=True)
class BearingInput:
    """Everything one re-check needs, except the code basis.

    bearing_type: BS 5628-1 local bearing type 1, 2 or 3 (the engineer's choice).
    e_mk, phi_m: EC6 mid-height eccentricity (mm) and capacity reduction factor; left out,
    they are worked out and shown. beta_s: BS 5628-1 capacity reduction factor, likewise.
    """

    load: Load
    beam: Beam
    wall: Wall
    masonry: Masonry
    padstone: Padstone | None = None
    bearing_type: int = 1
    e_mk: float | None = None
    phi_m: float | None = None
    beta_s: float | None = None
