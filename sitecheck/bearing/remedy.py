"""For a bearing that fails: the smallest standard padstone that passes, and the shortest
bearing length that passes. A hint for the engineer, never an instruction."""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, replace
from itertools import permutations
from typing import Any

from .basis import CodeBasis
from .errors import InputError
from .format import number, utilisation
from .geometry import layout, padstone_y0
from .inputs import ACROSS, Beam, BearingInput, Padstone
from .recheck import check_bearing

# Common precast padstone sizes, L × B × h in mm (merchant listings [P], [CP]).
STANDARD_PADSTONES: tuple[tuple[float, float, float], ...] = (
    (215.0, 140.0, 100.0),
    (440.0, 215.0, 100.0),
    (440.0, 215.0, 140.0),
    (440.0, 215.0, 215.0),
)
STANDARD_CLASSES: tuple[str, ...] = ("C20/25", "C25/30", "C30/37", "C40/50")


@dataclass(frozen=True, slots=True)
class Remedy:
    padstone: Padstone | None
    padstone_utilisation: float | None
    bearing_length: float | None
    bearing_utilisation: float | None

    def describe(self) -> str:
        """In words, as the CLI, the review page and the phone (static/js/verdict.js
        remedyText) show it: a hint from standard sizes, never an instruction."""
        parts = []
        if self.padstone is not None:
            p = self.padstone
            parts.append(
                f"a {number(p.length)} x {number(p.width)} x {number(p.depth)} mm {p.concrete} "
                f"padstone passes (util. {utilisation(self.padstone_utilisation)})"
            )
        if self.bearing_length is not None:
            parts.append(
                f"a bearing of {number(self.bearing_length)} mm passes "
                f"(util. {utilisation(self.bearing_utilisation)})"
            )
        return "; or ".join(parts) or "no standard padstone or longer bearing passes: redesign"

    def as_dict(self) -> dict[str, Any]:
        pad = self.padstone
        return {
            "padstone": None
            if pad is None
            else {
                "length": pad.length,
                "width": pad.width,
                "depth": pad.depth,
                "concrete": pad.concrete,
            },
            "padstone_utilisation": self.padstone_utilisation,
            "bearing_length": self.bearing_length,
            "bearing_utilisation": self.bearing_utilisation,
            "words": self.describe(),
        }


def remedy(
    inp: BearingInput,
    basis: CodeBasis,
    sizes: tuple[tuple[float, float, float], ...] = STANDARD_PADSTONES,
    classes: tuple[str, ...] = STANDARD_CLASSES,
    step: float = 5.0,
) -> Remedy:
    # An offset typed in that says what leaving it empty says is the same bearing, and must
    # get the same hint: both searches then move the beam with its support.
    inp = as_built_in(inp)
    pad, pad_u = smallest_padstone(inp, basis, sizes, classes)
    length, length_u = shortest_bearing(inp, basis, step)
    return Remedy(pad, pad_u, length, length_u)


def default_offsets(inp: BearingInput) -> tuple[float | None, float]:
    """The footprint's offsets from its support's centre (along, across) where none is
    given, as :func:`~.geometry.footprint_layout` places it: along, centred under a beam
    across the wall and flush with the span end under one in line (None with no padstone,
    where it is not read); across, flush with the near face under a beam across the wall,
    centred under one in line."""
    beam, pad, t = inp.beam, inp.padstone, inp.wall.thickness
    across = beam.orientation == ACROSS
    foot_along = beam.flange_width if across else beam.bearing_length
    foot_across = beam.bearing_length if across else beam.flange_width
    width = t if pad is None else min(pad.width, t)
    if pad is None:
        along = None
    else:
        along = 0.0 if across else (foot_along - pad.length) / 2
        foot_across = min(foot_across, width)
    return along, (foot_across - width) / 2 if across else 0.0


def as_built_in(inp: BearingInput) -> BearingInput:
    """``inp`` with each beam offset that equals where the beam sits by default left out."""
    beam = inp.beam
    if beam.offset_along is None and beam.offset_across is None:
        return inp
    d_along, d_across = default_offsets(inp)
    along, across = beam.offset_along, beam.offset_across
    if along is not None and (d_along is None or abs(along - d_along) <= 1e-9):
        along = None
    if across is not None and abs(across - d_across) <= 1e-9:
        across = None
    if (along, across) == (beam.offset_along, beam.offset_across):
        return inp
    return replace(inp, beam=replace(beam, offset_along=along, offset_across=across))


def _placements(
    inp: BearingInput, sizes: Iterable[tuple[float, float, float]]
) -> list[tuple[float, float, float]]:
    """Each standard size in every way it can be laid whose width fits the wall and that
    holds the beam's footprint; smallest volume first, then shallowest."""
    t = inp.wall.thickness
    beam = inp.beam
    across = beam.orientation == ACROSS
    foot_along = beam.flange_width if across else beam.bearing_length
    foot_across = beam.bearing_length if across else beam.flange_width
    seen: set[tuple[float, float, float]] = set()
    for size in sizes:
        for L, B, h in permutations(size):
            if B > t or L < foot_along or B < foot_across or (L, B, h) in seen:
                continue
            seen.add((L, B, h))
    return sorted(seen, key=lambda d: (d[0] * d[1] * d[2], d[2], d[0]))


def _with_padstone(
    inp: BearingInput, L: float, B: float, h: float, concrete: str
) -> BearingInput | None:
    """The bearing with a new padstone placed as the old one was: centred under a beam
    across the wall, against the span end for a beam in line with it. None if it will not
    fit between the wall's ends."""
    wall = inp.wall
    old = layout(inp)
    if inp.beam.orientation == ACROSS:
        grow = (L - old.length) / 2 + (old.length / 2 - (old.x0 + old.x1) / 2)
        shrink_far = (L - old.length) - grow
        a1 = None if wall.a1 is None else wall.a1 - grow
        a2 = None if wall.a2 is None else wall.a2 - shrink_far
        beam = replace(inp.beam, offset_along=None)
    else:
        a1 = (
            wall.a1 if inp.padstone is not None else (None if wall.a1 is None else wall.a1 + old.x0)
        )
        a2 = None if wall.a2 is None else wall.a2 - (L - old.length)
        beam = replace(inp.beam, offset_along=None)
    if (a1 is not None and a1 < 0) or (a2 is not None and a2 < 0):
        return None
    # Laid where the old one lay across the wall; a bare bearing's takes the default.
    old_pad = inp.padstone
    pad = Padstone(
        length=L,
        width=B,
        depth=h,
        concrete=concrete,
        position_across=None if old_pad is None else old_pad.position_across,
        offset_across=None if old_pad is None else old_pad.offset_across,
    )
    if beam.offset_across is not None:
        # A beam placed off its default stays where it is in the wall.
        t = wall.thickness
        y_abs = old.y0_in_wall + old.width / 2 + beam.offset_across
        width = min(B, t)
        y0 = padstone_y0(pad, width, t, inp.beam.orientation == ACROSS)
        beam = replace(beam, offset_across=y_abs - (y0 + width / 2))
    return replace(inp, padstone=pad, beam=beam, wall=replace(wall, a1=a1, a2=a2))


def smallest_padstone(
    inp: BearingInput,
    basis: CodeBasis,
    sizes: Iterable[tuple[float, float, float]] = STANDARD_PADSTONES,
    classes: Iterable[str] = STANDARD_CLASSES,
) -> tuple[Padstone | None, float | None]:
    for L, B, h in _placements(inp, sizes):
        for concrete in classes:
            candidate = _with_padstone(inp, L, B, h, concrete)
            if candidate is None:
                continue
            try:
                result = check_bearing(candidate, basis)
            except InputError:
                continue
            if result.passed:
                return candidate.padstone, result.utilisation
    return None, None


def _lengthened(beam: Beam, pad: Padstone | None, length: float) -> Beam:
    """The beam bearing ``length``, its near edge where it was: the end a beam across the
    wall comes in at the near face, the span end of one in line."""
    grow = length - beam.bearing_length
    if beam.orientation == ACROSS and beam.offset_across is not None:
        return replace(beam, bearing_length=length, offset_across=beam.offset_across + grow / 2)
    if beam.orientation != ACROSS and beam.offset_along is not None and pad is not None:
        return replace(beam, bearing_length=length, offset_along=beam.offset_along + grow / 2)
    return replace(beam, bearing_length=length)


def shortest_bearing(
    inp: BearingInput, basis: CodeBasis, step: float = 5.0
) -> tuple[float | None, float | None]:
    """The shortest bearing, from the present one up in ``step`` mm, that passes."""
    beam, pad = inp.beam, inp.padstone
    if pad is not None:
        room = pad.width if beam.orientation == ACROSS else pad.length
    else:
        room = inp.wall.thickness if beam.orientation == ACROSS else 1000.0
    # A remedy lengthens the bearing: start from what is there (or the trade's minimum).
    # Shorter bearings can pass only through a step in the rules (a padstone becoming a
    # spreader once it is over 3 × the bearing long), which is no advice to give on site.
    least = basis.min_bearing_lintel if beam.member == "lintel" else basis.min_bearing_beam
    length = max(least, beam.bearing_length)
    while length <= room + 1e-9:
        candidate = replace(inp, beam=_lengthened(beam, inp.padstone, length))
        try:
            result = check_bearing(candidate, basis)
        except InputError:
            result = None
        if result is not None and result.passed:
            return length, result.utilisation
        length += step
    return None, None
