"""Refuse inputs that make no physical sense before any formula sees them.

Each problem names the field, the value and what was expected. Ranges are generous
plausibility bounds of ours, wide enough for any real bearing and narrow enough to catch a
slip of units; they are not code limits.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from functools import lru_cache

from .basis import BS5628, MORTAR_DESIGNATION, CodeBasis
from .errors import InputError
from .format import number
from .inputs import (
    ACROSS,
    CONDITIONING,
    CONTROL_LEVELS,
    MATERIALS,
    MEMBERS,
    MORTARS,
    ORIENTATIONS,
    PADSTONE_POSITIONS,
    REACTION_POSITIONS,
    BearingInput,
)
from .typed import NumberRefused, read_number

# Lengths in mm: (least, greatest). A value below a tenth of the least, but positive, is
# probably metres.
_LENGTHS = {
    "beam.flange_width": (30.0, 1000.0),
    "beam.bearing_length": (20.0, 1000.0),
    "padstone.length": (50.0, 3000.0),
    "padstone.width": (50.0, 1000.0),
    "padstone.depth": (40.0, 1000.0),
    "wall.thickness": (50.0, 1000.0),
    "wall.height_to_bearing": (100.0, 30000.0),
    "wall.clear_height": (100.0, 30000.0),
    "wall.effective_height": (100.0, 60000.0),
    "wall.effective_thickness": (50.0, 1000.0),
}
_GEOMETRY_TOLERANCE = 0.5  # mm: measurement rounding at the edges of the support


def wall_tolerance(t: float) -> float:
    """How much a padstone may stand proud of a wall measured on site: ±5 mm or ±5 % of
    the thickness (EN 1996-2 tolerance, from memory). Only the part over the wall bears."""
    return max(5.0, 0.05 * t)


def validate(inp: BearingInput, basis: CodeBasis) -> None:
    """Raise the first :class:`InputError` found, or return."""
    # Nearly all input is plainly fine: say so cheaply, and leave the full walk through
    # the fields (and its messages) to input that may have something wrong with it.
    if _plainly_valid(inp, basis):
        return
    for problem in input_errors(inp, basis):
        raise problem


def _plainly_valid(inp: BearingInput, basis: CodeBasis) -> bool:
    """True only if :func:`input_errors` would find nothing. It may say False of good
    input (an int where a float is usual, say): the full check then runs. It must never
    say True of input that check refuses, so a rule added there is added here too.
    """
    try:
        return _plain_values(inp, basis) and next(_geometry_errors(inp), None) is None
    except Exception:  # anything odd is for the full check to describe
        return False


def _plain(value: object, least: float, greatest: float) -> bool:
    """A float (not a bool, int or NaN) from least to greatest."""
    return type(value) is float and least <= value <= greatest


# _LENGTHS unpacked once for the fast path, which checks them inline.
_FLANGE = _LENGTHS["beam.flange_width"]
_BEARING = _LENGTHS["beam.bearing_length"]
_THICKNESS = _LENGTHS["wall.thickness"]
_HEIGHT = _LENGTHS["wall.height_to_bearing"]
_CLEAR = _LENGTHS["wall.clear_height"]
_EFFECTIVE_HEIGHT = _LENGTHS["wall.effective_height"]
_EFFECTIVE_THICKNESS = _LENGTHS["wall.effective_thickness"]
_PAD_LENGTH = _LENGTHS["padstone.length"]
_PAD_WIDTH = _LENGTHS["padstone.width"]
_PAD_DEPTH = _LENGTHS["padstone.depth"]


def _plain_values(inp: BearingInput, basis: CodeBasis) -> bool:
    """Every value that :func:`input_errors` looks at before the geometry: each number a
    float in its range (optional ones may be None), each choice one of its options."""
    load, beam, pad, wall = inp.load, inp.beam, inp.padstone, inp.wall
    reaction, wall_load = load.reaction, load.wall_load
    flange, bearing = beam.flange_width, beam.bearing_length
    t, h_c = wall.thickness, wall.height_to_bearing
    if not (
        (type(reaction) is float and 0 < reaction <= 5e6)
        and (type(wall_load) is float and 0.0 <= wall_load <= 2000.0)
        and (type(flange) is float and _FLANGE[0] <= flange <= _FLANGE[1])
        and (type(bearing) is float and _BEARING[0] <= bearing <= _BEARING[1])
        and (type(t) is float and _THICKNESS[0] <= t <= _THICKNESS[1])
        and (type(h_c) is float and _HEIGHT[0] <= h_c <= _HEIGHT[1])
        and (wall.clear_height is None or _plain(wall.clear_height, *_CLEAR))
        and (wall.effective_height is None or _plain(wall.effective_height, *_EFFECTIVE_HEIGHT))
        and (
            wall.effective_thickness is None
            or _plain(wall.effective_thickness, *_EFFECTIVE_THICKNESS)
        )
        and (wall.a1 is None or _plain(wall.a1, 0.0, 100_000.0))
        and (wall.a2 is None or _plain(wall.a2, 0.0, 100_000.0))
        and (beam.offset_along is None or _plain(beam.offset_along, -2000.0, 2000.0))
        and (beam.offset_across is None or _plain(beam.offset_across, -2000.0, 2000.0))
    ):
        return False
    if pad is not None and not (
        (type(pad.length) is float and _PAD_LENGTH[0] <= pad.length <= _PAD_LENGTH[1])
        and (type(pad.width) is float and _PAD_WIDTH[0] <= pad.width <= _PAD_WIDTH[1])
        and (type(pad.depth) is float and _PAD_DEPTH[0] <= pad.depth <= _PAD_DEPTH[1])
        and (
            concrete_class_fck(pad.concrete) is not None
            if pad.f_ck is None
            else _plain(pad.f_ck, 8.0, 90.0)
        )
        and type(pad.reinforced) is bool
        and pad.position_across is None
        and pad.offset_across is None
    ):
        return False
    return (
        beam.orientation in ORIENTATIONS
        and beam.member in MEMBERS
        and beam.reaction_at in REACTION_POSITIONS
        and _plain_masonry(inp, basis)
        and _whole_in(inp.bearing_type, (1, 2, 3))
        and (inp.e_mk is None or (type(inp.e_mk) is float and 0 <= inp.e_mk < t / 2))
        and (inp.phi_m is None or (type(inp.phi_m) is float and 0 < inp.phi_m <= 1))
        and (inp.beta_s is None or (type(inp.beta_s) is float and 0 < inp.beta_s <= 1))
    )


def _plain_masonry(inp: BearingInput, basis: CodeBasis) -> bool:
    """Whether :func:`_masonry_errors` would find nothing (see :func:`_plainly_valid`)."""
    mas = inp.masonry
    if not (
        mas.material in MATERIALS
        and _whole_in(mas.group, (1, 2, 3, 4))
        and mas.mortar in MORTARS
        and mas.conditioning in CONDITIONING
        and mas.unit_category in ("I", "II")
        and _whole_in(mas.execution_class, (1, 2))
        and mas.manufacturing_control in CONTROL_LEVELS
        and mas.construction_control in CONTROL_LEVELS
    ):
        return False
    if mas.gamma_M is not None and not _plain(mas.gamma_M, 1.0, 5.0):
        return False
    if mas.collar_joint is not None and type(mas.collar_joint) is not bool:
        return False
    if mas.f_k is not None:
        return _plain(mas.f_k, 0.5, 40.0)
    f_u = mas.unit_strength
    if not (type(f_u) is float and 1.0 <= f_u <= 150.0):
        return False
    if basis.name == BS5628:
        return (
            mas.mortar in MORTAR_DESIGNATION
            and mas.unit_strength_is_normalised is False
            and (
                mas.unit_height is None
                or (type(mas.unit_height) is float and mas.unit_height <= 112.5)
            )
            and 5.0 <= f_u <= 100.0
        )
    if mas.unit_strength_is_normalised is True:
        return True
    height, width = mas.unit_height, mas.unit_width
    return (
        mas.unit_strength_is_normalised is False
        and (type(height) is float and 30.0 <= height <= 1000.0)
        and (type(width) is float and 30.0 <= width <= 1000.0)
    )


# One piece: one guard per input field, in the input's order, so a form lists its errors top to
# bottom; validate.js mirrors it line for line.
def input_errors(inp: BearingInput, basis: CodeBasis) -> Iterator[InputError]:
    """Every problem with an input, in the order the form shows the fields.

    :func:`validate` first asks :func:`_plainly_valid`, which must refuse whatever this
    refuses: a rule added here is added there too."""
    load, beam, pad, wall = inp.load, inp.beam, inp.padstone, inp.wall

    if not _is_number(load.reaction) or load.reaction <= 0:
        yield InputError("load.reaction", load.reaction, "a positive end reaction", "not-positive")
    elif load.reaction > 5e6:
        yield InputError(
            "load.reaction", load.reaction, "at most 5000 kN for one bearing", "out-of-range"
        )
    if not _is_number(load.wall_load) or not 0 <= load.wall_load <= 2000:
        yield InputError(
            "load.wall_load", load.wall_load, "0 to 2000 kN/m of other load", "out-of-range"
        )

    lengths = {
        "beam.flange_width": beam.flange_width,
        "beam.bearing_length": beam.bearing_length,
        "wall.thickness": wall.thickness,
        "wall.height_to_bearing": wall.height_to_bearing,
        "wall.clear_height": wall.clear_height,
        "wall.effective_height": wall.effective_height,
        "wall.effective_thickness": wall.effective_thickness,
    }
    if pad is not None:
        lengths["padstone.length"] = pad.length
        lengths["padstone.width"] = pad.width
        lengths["padstone.depth"] = pad.depth
    bad_lengths = False
    for name, value in lengths.items():
        if value is None and name in ("wall.clear_height", "wall.effective_height"):
            continue
        if value is None and name == "wall.effective_thickness":
            continue
        problem = _length_problem(name, value)
        if problem:
            bad_lengths = True
            yield problem

    if beam.orientation not in ORIENTATIONS:
        yield _choice("beam.orientation", beam.orientation, ORIENTATIONS)
    if beam.member not in MEMBERS:
        yield _choice("beam.member", beam.member, MEMBERS)
    if beam.reaction_at not in REACTION_POSITIONS:
        yield _choice("beam.reaction_at", beam.reaction_at, REACTION_POSITIONS)

    for name, value in (("wall.a1", wall.a1), ("wall.a2", wall.a2)):
        if value is None:
            continue
        if not _is_number(value):
            yield InputError(name, value, "a distance in mm", "not-a-number")
        elif value < 0:
            yield InputError(
                name,
                value,
                "0 or more: a negative distance puts the bearing beyond the wall's end",
                "beyond-wall",
            )
        elif value > 100_000:
            yield InputError(
                name, value, "at most 100 m; leave it empty for a wall that runs on", "out-of-range"
            )
    for name, value in (
        ("beam.offset_along", beam.offset_along),
        ("beam.offset_across", beam.offset_across),
    ):
        if value is not None and (not _is_number(value) or abs(value) > 2000):
            yield InputError(name, value, "an offset within ±2000 mm", "out-of-range")

    yield from _masonry_errors(inp, basis)

    if pad is not None:
        if pad.f_ck is not None:
            if not _is_number(pad.f_ck) or not 8 <= pad.f_ck <= 90:
                yield InputError("padstone.f_ck", pad.f_ck, "8 to 90 N/mm²", "out-of-range")
        elif concrete_class_fck(pad.concrete) is None:
            yield InputError(
                "padstone.concrete",
                pad.concrete,
                "a concrete class such as C25/30, or a declared f_ck",
                "bad-choice",
            )
        if not isinstance(pad.reinforced, bool):
            yield InputError(
                "padstone.reinforced",
                pad.reinforced,
                "true (reinforced) or false (plain concrete)",
                "not-a-choice",
            )
        if pad.position_across is not None and pad.position_across not in PADSTONE_POSITIONS:
            yield _choice("padstone.position_across", pad.position_across, PADSTONE_POSITIONS)
        elif pad.position_across == "offset" and pad.offset_across is None:
            yield InputError(
                "padstone.offset_across",
                None,
                "the padstone's centre from the wall's centre line, mm, for an offset position",
                "missing",
            )
        elif pad.offset_across is not None and pad.position_across != "offset":
            yield InputError(
                "padstone.offset_across",
                pad.offset_across,
                "empty unless the padstone's position across the wall is offset",
                "not-needed",
            )
        elif pad.offset_across is not None and (
            not _is_number(pad.offset_across) or abs(pad.offset_across) > 2000
        ):
            yield InputError(
                "padstone.offset_across",
                pad.offset_across,
                "an offset within ±2000 mm",
                "out-of-range",
            )

    if not _whole_in(inp.bearing_type, (1, 2, 3)):
        yield InputError(
            "bearing_type", inp.bearing_type, "BS 5628-1 bearing type 1, 2 or 3", "bad-choice"
        )
    if inp.e_mk is not None:
        t = wall.thickness
        half = t / 2 if _is_number(t) and 0 < t < math.inf else None
        if not _is_number(inp.e_mk) or not 0 <= inp.e_mk < (math.inf if half is None else half):
            # At e_mk = t/2 the factor 1 − 2 e_mk/t is 0: the wall has no capacity left.
            yield InputError(
                "e_mk",
                inp.e_mk,
                "a finite eccentricity of 0 mm or more"
                if half is None
                else f"0 mm or more and less than half the wall's thickness ({number(half)} mm)",
                "out-of-range",
            )
    for name, value in (("phi_m", inp.phi_m), ("beta_s", inp.beta_s)):
        if value is not None and (not _is_number(value) or not 0 < value <= 1):
            yield InputError(name, value, "a factor above 0 and at most 1", "out-of-range")

    # The geometry rules do arithmetic on the offsets: one that is not a number has been
    # reported above and would only raise here.
    bad_offsets = any(
        v is not None and not _is_number(v) for v in (beam.offset_along, beam.offset_across)
    )
    if bad_lengths or bad_offsets or beam.orientation not in ORIENTATIONS:
        return
    yield from _geometry_errors(inp)


# One piece: the geometric guards in the order the core relies on them; validate.js mirrors it
# line for line.
def _geometry_errors(inp: BearingInput) -> Iterator[InputError]:
    beam, pad, wall = inp.beam, inp.padstone, inp.wall
    across = beam.orientation == ACROSS
    foot_along = beam.flange_width if across else beam.bearing_length
    foot_across = beam.bearing_length if across else beam.flange_width
    t = wall.thickness
    tol = _GEOMETRY_TOLERANCE

    if pad is not None:
        if pad.width > t + wall_tolerance(t):
            yield InputError(
                "padstone.width",
                pad.width,
                f"no wider than the wall ({number(t)} mm, give or take {number(wall_tolerance(t))} mm); "
                "a padstone overhanging the wall is not covered",
                "wider-than-wall",
            )
            return
        span_room = pad.width if across else pad.length
        if beam.bearing_length > span_room + tol:
            yield InputError(
                "beam.bearing_length",
                beam.bearing_length,
                f"no longer than the padstone it sits on ({number(span_room)} mm)",
                "longer-than-padstone",
            )
            return
        # Across the wall the flange must sit wholly on the padstone. In line with the
        # wall it may overhang the padstone's sides (the trade allows a flange up to
        # t + 50 mm, checked as a rule); only the part over the padstone bears.
        if across and beam.flange_width > pad.length + tol:
            yield InputError(
                "beam.flange_width",
                beam.flange_width,
                f"no wider than the padstone under it ({number(pad.length)} mm)",
                "off-padstone",
            )
            return
        if not across:
            foot_across = min(foot_across, pad.width)
        sup_len, sup_wid = pad.length, pad.width
    else:
        if not across and beam.flange_width > t + tol:
            yield InputError(
                "beam.flange_width",
                beam.flange_width,
                f"no wider than the wall ({number(t)} mm) for a beam in line with it and no padstone",
                "wider-than-wall",
            )
            return
        if across and beam.bearing_length > t + tol:
            yield InputError(
                "beam.bearing_length",
                beam.bearing_length,
                f"no longer than the wall is thick ({number(t)} mm)",
                "longer-than-wall",
            )
            return
        sup_len, sup_wid = foot_along, t

    if pad is not None and pad.position_across == "offset" and _is_number(pad.offset_across):
        room = max(0.0, (t - min(pad.width, t)) / 2)
        if abs(pad.offset_across) > room + tol:
            yield InputError(
                "padstone.offset_across",
                pad.offset_across,
                f"within ±{number(room)} mm so the padstone stays on the wall",
                "off-wall",
            )
    if beam.offset_along is not None and pad is not None:
        room = (sup_len - foot_along) / 2
        if abs(beam.offset_along) > room + tol:
            yield InputError(
                "beam.offset_along",
                beam.offset_along,
                f"within ±{number(room)} mm so the flange stays wholly on the padstone",
                "off-padstone",
            )
    if beam.offset_across is not None:
        room = (sup_wid - foot_across) / 2
        if abs(beam.offset_across) > room + tol:
            what = "padstone" if pad is not None else "wall"
            yield InputError(
                "beam.offset_across",
                beam.offset_across,
                f"within ±{number(room)} mm so the flange stays wholly on the {what}",
                "off-padstone" if pad is not None else "off-wall",
            )


# One piece: one guard per masonry field, in the field order; validate.js mirrors it line for
# line.
def _masonry_errors(inp: BearingInput, basis: CodeBasis) -> Iterator[InputError]:
    mas = inp.masonry
    if mas.material not in MATERIALS:
        yield _choice("masonry.material", mas.material, MATERIALS)
    if not _whole_in(mas.group, (1, 2, 3, 4)):
        yield InputError("masonry.group", mas.group, "a whole number 1 to 4", "bad-choice")
    if mas.mortar not in MORTARS:
        yield _choice("masonry.mortar", mas.mortar, MORTARS)
    if mas.conditioning not in CONDITIONING:
        yield _choice("masonry.conditioning", mas.conditioning, CONDITIONING)
    if mas.unit_category not in ("I", "II"):
        yield InputError(
            "masonry.unit_category", mas.unit_category, "category I or II", "bad-choice"
        )
    if not _whole_in(mas.execution_class, (1, 2)):
        yield InputError(
            "masonry.execution_class", mas.execution_class, "execution class 1 or 2", "bad-choice"
        )
    for name, value in (
        ("masonry.manufacturing_control", mas.manufacturing_control),
        ("masonry.construction_control", mas.construction_control),
    ):
        if value not in CONTROL_LEVELS:
            yield _choice(name, value, CONTROL_LEVELS)
    if mas.collar_joint is not None and not isinstance(mas.collar_joint, bool):
        yield InputError(
            "masonry.collar_joint",
            mas.collar_joint,
            "true (a mortar joint parallel to the wall's face), false, or empty to infer it",
            "not-a-choice",
        )
    if mas.gamma_M is not None and (not _is_number(mas.gamma_M) or not 1.0 <= mas.gamma_M <= 5.0):
        yield InputError(
            "masonry.gamma_M", mas.gamma_M, "a partial factor from 1.0 to 5.0", "out-of-range"
        )

    if mas.f_k is not None:
        if not _is_number(mas.f_k) or not 0.5 <= mas.f_k <= 40:
            yield InputError("masonry.f_k", mas.f_k, "0.5 to 40 N/mm²", "out-of-range")
        return
    if mas.unit_strength is None:
        yield InputError(
            "masonry.unit_strength",
            None,
            "the unit's compressive strength, or f_k given directly",
            "missing",
        )
        return
    if not _is_number(mas.unit_strength) or not 1.0 <= mas.unit_strength <= 150:
        yield InputError(
            "masonry.unit_strength", mas.unit_strength, "1 to 150 N/mm²", "out-of-range"
        )
        return
    if basis.name == BS5628:
        if mas.mortar not in MORTAR_DESIGNATION:
            yield InputError(
                "masonry.mortar",
                mas.mortar,
                "M2, M4, M6 or M12 for BS 5628-1:1992 Table 2(a); give f_k for thin-layer mortar",
                "not-covered",
            )
        if mas.unit_strength_is_normalised:
            yield InputError(
                "masonry.unit_strength_is_normalised",
                True,
                "the unit's mean strength for BS 5628-1:1992 Table 2(a), not a normalised one",
                "not-covered",
            )
        if mas.unit_height is not None and mas.unit_height > 112.5:
            yield InputError(
                "masonry.unit_height",
                mas.unit_height,
                "a brick (at most 112.5 mm high) for BS 5628-1:1992 Table 2(a); for blocks give f_k",
                "not-covered",
            )
        if not 5.0 <= mas.unit_strength <= 100.0:
            yield InputError(
                "masonry.unit_strength",
                mas.unit_strength,
                "5 to 100 N/mm², the range of BS 5628-1:1992 Table 2(a)",
                "not-covered",
            )
        return
    if not mas.unit_strength_is_normalised:
        for name, value in (
            ("masonry.unit_height", mas.unit_height),
            ("masonry.unit_width", mas.unit_width),
        ):
            if value is None:
                yield InputError(
                    name,
                    None,
                    "the unit's size, to normalise its strength (or give f_b or f_k)",
                    "missing",
                )
            else:
                problem = _length_problem(name, value, (30.0, 1000.0))
                if problem:
                    yield problem


def concrete_class_fck(concrete: str) -> float | None:
    """f_ck of a class written as ``C25/30`` (EN 206 notation), else None."""
    if not isinstance(concrete, str):
        return None
    return _class_fck(concrete)


@lru_cache(maxsize=256)  # a site uses a handful of classes; parsing one is slow
def _class_fck(concrete: str) -> float | None:
    if not concrete.upper().startswith("C") or "/" not in concrete:
        return None
    head, _, tail = concrete[1:].partition("/")
    # The class's figures are typed numbers like any other: the one reader's rules.
    try:
        f_ck, f_cube = read_number(head), read_number(tail)
    except NumberRefused:
        return None
    if f_ck is None or f_cube is None or not 8 <= f_ck <= 90 or f_cube < f_ck:
        return None
    return f_ck


def _whole_in(value: object, choices: tuple[int, ...]) -> bool:
    """A whole number among ``choices``, as an int: 1.0 and True are not Group 1 (Python
    counts both equal to 1, and a table look-up or the trace would show them otherwise)."""
    return type(value) is int and value in choices


def _is_number(value: object) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool) and value == value


def _length_problem(
    name: str, value: object, bounds: tuple[float, float] | None = None
) -> InputError | None:
    least, greatest = bounds or _LENGTHS[name]
    if value is None:
        return InputError(
            name, None, f"a length of {number(least)} to {number(greatest)} mm", "missing"
        )
    if not _is_number(value):
        return InputError(
            name, value, f"a length in mm, {number(least)} to {number(greatest)}", "not-a-number"
        )
    if value <= 0:
        return InputError(
            name,
            value,
            f"a positive length, {number(least)} to {number(greatest)} mm",
            "not-positive",
        )
    if value < least / 10 or (value < least and value < 10):
        return InputError(
            name,
            value,
            f"millimetres ({number(least)} to {number(greatest)} mm); {number(value)} looks like metres: "
            f"did you mean {number(value * 1000)} mm?",
            "looks-like-metres",
        )
    if not least <= value <= greatest:
        return InputError(name, value, f"{number(least)} to {number(greatest)} mm", "out-of-range")
    return None


def _choice(name: str, value: object, choices: tuple) -> InputError:
    return InputError(name, value, "one of: " + ", ".join(map(str, choices)), "bad-choice")
