"""Compare what was built with what was designed, and say why the engineer must look.

An inspector measures some values; the rest stay as designed. :func:`as_built_input`
merges them, the re-check runs on the result, and :func:`review` lists the review
reasons. Each reason has a stable code of ours, a severity (``blocks``: the bearing may not
be closed up until the engineer decides; ``advisory``: shown, decides nothing), a plain
sentence and the values that tripped it.

Thresholds and tolerances are site settings with defaults of ours, not code values.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, fields
from operator import attrgetter
from typing import Any, TypeVar

from .basis import BS5628, CodeBasis
from .checks import is_spreader
from .errors import InputError
from .format import number, utilisation
from .inputs import Beam, BearingInput, Masonry, Padstone, Wall
from .trace import INFORMATIVE, BearingResult

BLOCKS = "blocks"
ADVISORY = "advisory"


@dataclass(frozen=True, slots=True)
class Measurements:
    """What the inspector measured on site; ``None`` means not measured (design kept).

    Lengths in mm, strengths in N/mm². ``padstone_present`` False records that there is
    no padstone at all.
    """

    bearing_length: float | None = None
    flange_width: float | None = None
    offset_along: float | None = None
    offset_across: float | None = None
    padstone_present: bool | None = None
    padstone_length: float | None = None
    padstone_width: float | None = None
    padstone_depth: float | None = None
    padstone_concrete: str | None = None
    padstone_reinforced: bool | None = None
    padstone_position: str | None = None
    padstone_offset_across: float | None = None
    wall_thickness: float | None = None
    a1: float | None = None
    a2: float | None = None
    masonry_material: str | None = None
    masonry_group: int | None = None
    unit_strength: float | None = None
    mortar: str | None = None
    collar_joint: bool | None = None


@dataclass(frozen=True, slots=True)
class Checklist:
    """How the bearing was built. ``None`` means not looked at."""

    bedded: bool | None = None  # padstone fully bedded on mortar
    packing: float | None = None  # thickness of packing under the beam, mm (0 = none)
    cracks: bool | None = None  # cracks in the masonry near the bearing
    cut_units: bool | None = None  # cut or hollow units under the padstone
    level: bool | None = None  # padstone level


# The field lists every form, API and page follows, in the dataclasses' order. The phone's
# copy is static/js/bearing/serial.js (tests/test_sync_api.py holds the two equal).
MEASUREMENT_FIELDS = tuple(f.name for f in fields(Measurements))
CHECKLIST_FIELDS = tuple(f.name for f in fields(Checklist))


@dataclass(frozen=True, slots=True)
class ReviewSettings:
    """A site's review thresholds and tolerances (defaults ours unless labelled)."""

    threshold: float = 0.90  # utilisation above which the engineer looks
    rise_margin: float = 0.10  # allowed rise of utilisation over the design's
    tol_bearing_length: float = 10.0
    tol_flange_width: float = 5.0
    tol_padstone: float = 10.0
    tol_wall_thickness: float = 5.0  # ±5 mm or ±5 %, EN 1996-2 [M]
    tol_wall_thickness_ratio: float = 0.05
    tol_end_distance: float = 25.0
    tol_position: float = 15.0
    max_packing: float = 10.0
    required: tuple[str, ...] = (
        "bearing_length",
        "padstone_present",
        "wall_thickness",
        "masonry_group",
    )
    required_with_padstone: tuple[str, ...] = (
        "padstone_length",
        "padstone_width",
        "padstone_depth",
    )

    def as_dict(self) -> dict[str, Any]:
        out = {f.name: getattr(self, f.name) for f in fields(self)}
        out["required"] = list(self.required)
        out["required_with_padstone"] = list(self.required_with_padstone)
        return out


def settings_from_dict(data: Mapping[str, Any]) -> ReviewSettings:
    known = {f.name for f in fields(ReviewSettings)}
    clean: dict[str, Any] = {}
    for key, value in data.items():
        if key not in known:
            raise InputError(f"review.{key}", value, "a known review setting", "unknown-field")
        clean[key] = tuple(value) if key.startswith("required") else float(value)
    return ReviewSettings(**clean)


@dataclass(frozen=True, slots=True)
class ReviewReason:
    code: str
    severity: str
    sentence: str
    values: tuple[tuple[str, object], ...] = ()

    def as_dict(self) -> dict[str, Any]:
        return {
            "code": self.code,
            "severity": self.severity,
            "sentence": self.sentence,
            "values": {k: v for k, v in self.values},
        }


def as_built_input(design: BearingInput, m: Measurements) -> BearingInput:
    """The design with every measured value put in its place."""
    beam = _measured(
        design.beam,
        (
            ("bearing_length", m.bearing_length),
            ("flange_width", m.flange_width),
            ("offset_along", m.offset_along),
            ("offset_across", m.offset_across),
        ),
    )

    pad = design.padstone
    if m.padstone_present is False:
        pad = None
    elif (
        m.padstone_present
        or m.padstone_length is not None
        or m.padstone_width is not None
        or m.padstone_depth is not None
    ):
        pad = _measured(
            pad or Padstone(length=0.0, width=0.0, depth=0.0),
            (
                ("length", m.padstone_length),
                ("width", m.padstone_width),
                ("depth", m.padstone_depth),
                ("concrete", m.padstone_concrete or None),
                ("reinforced", m.padstone_reinforced),
                *_position_measured(m),
            ),
        )
        if m.padstone_concrete and pad.f_ck is not None:
            # The class seen on site replaces a declared f_ck.
            pad = _rebuilt(pad, (("f_ck", None),))
    else:
        if m.padstone_concrete and pad is not None:
            pad = _rebuilt(pad, (("concrete", m.padstone_concrete), ("f_ck", None)))
        if pad is not None:
            pad = _measured(pad, (("reinforced", m.padstone_reinforced), *_position_measured(m)))

    wall = design.wall
    t_ef = wall.effective_thickness
    if m.wall_thickness is not None and t_ef is not None:
        # A measured leaf replaces the designed one; t_ef follows it in proportion.
        t_ef = t_ef * m.wall_thickness / wall.thickness
    wall = _measured(
        wall,
        (
            ("thickness", m.wall_thickness),
            ("effective_thickness", t_ef),
            ("a1", m.a1),
            ("a2", m.a2),
        ),
    )

    # A declared f_k stays: it cannot be worked out again from what is seen on site.
    # The review says so when the units differ (masonry-unverified).
    mas = _measured(
        design.masonry,
        (
            ("material", m.masonry_material),
            ("group", m.masonry_group),
            ("mortar", m.mortar),
            ("unit_strength", m.unit_strength),
            ("collar_joint", m.collar_joint),
        ),
    )
    if (
        beam is design.beam
        and pad is design.padstone
        and wall is design.wall
        and mas is design.masonry
    ):
        return design
    return _rebuilt(design, (("beam", beam), ("padstone", pad), ("wall", wall), ("masonry", mas)))


# The "offset" position clears nothing; any other clears a designed offset. Written as the
# (field, value) pairs _measured takes, with a marker for "clear it".
def _position_measured(m: Measurements) -> tuple[tuple[str, object], ...]:
    position, offset = m.padstone_position or None, m.padstone_offset_across
    if position is None and offset is None:
        return ()
    if position is None:
        position = "offset"  # an offset measured says where the padstone is
    return (
        ("position_across", position),
        ("offset_across", offset if position == "offset" else _CLEAR),
    )


_CLEAR = object()

# The input classes whose values a measurement may replace.
_Input = TypeVar("_Input", Beam, Padstone, Wall, Masonry, BearingInput)


def _measured(obj: _Input, measured: tuple[tuple[str, object], ...]) -> _Input:
    """``obj`` with each measured (name, value) in its place, None being not measured; or
    ``obj`` itself when every measured value is its own: most measurements confirm the
    design, and building an equal object for each costs more than the arithmetic."""
    changed: list[tuple[str, object]] = []
    for name, value in measured:
        if value is None:
            continue
        current = getattr(obj, name)
        if value is _CLEAR:
            if current is not None:
                changed.append((name, None))
            continue
        # Often the very value the design holds: say so without a call.
        if value is not current and _differs(value, current):
            changed.append((name, value))
    return _rebuilt(obj, changed) if changed else obj


def _rebuilt(obj: _Input, changes: Iterable[tuple[str, object]]) -> _Input:
    """``obj`` with the (name, value) changes, as :func:`dataclasses.replace` makes it but
    with the fields passed by position: replace looks through every field's options and
    passes them all by keyword, which costs as much again as building the object. The
    input classes have plain fields only, so nothing else of replace's is needed."""
    names, values_of = _FIELDS[type(obj)]
    values = list(values_of(obj))
    for name, value in changes:
        values[names.index(name)] = value
    return type(obj)(*values)


def _field_access(cls: type) -> tuple[tuple[str, ...], attrgetter[Any]]:
    names = tuple(f.name for f in fields(cls))
    return names, attrgetter(*names)


# Each input class's field names in order, and a getter of all their values at once.
_FIELDS = {cls: _field_access(cls) for cls in (Beam, Padstone, Wall, Masonry, BearingInput)}


def _differs(new: object, old: object) -> bool:
    """Whether ``new`` would show as anything but ``old``. Equality is not enough:
    20 == 20.0 and 0.0 == -0.0, yet each is written differently in the trace. Equal values
    of one type are written alike but for those zeros, so only they are written out."""
    if new is old:
        return False
    if type(new) is not type(old) or new != old:
        return True
    return new == 0 and repr(new) != repr(old)


def missing_measurements(design: BearingInput, m: Measurements, s: ReviewSettings) -> list[str]:
    names = list(s.required)
    has_pad = m.padstone_present if m.padstone_present is not None else design.padstone is not None
    if has_pad:
        names += list(s.required_with_padstone)
    if design.wall.a1 is not None:
        names.append("a1")
    return [n for n in names if getattr(m, n) is None]


# Measured field → (label, slug, +1 if a larger value is kinder to the bearing).
_DIMENSIONS = (
    ("bearing_length", "Bearing length", "bearing-length", 1),
    ("flange_width", "Flange width", "flange-width", 1),
    ("padstone_length", "Padstone length", "padstone-length", 1),
    ("padstone_width", "Padstone width", "padstone-width", 1),
    ("padstone_depth", "Padstone depth", "padstone-depth", 1),
    ("wall_thickness", "Wall thickness", "wall-thickness", 1),
    ("a1", "Distance to the wall's end (a1)", "end-distance", 1),
    ("a2", "Distance to the wall's other end (a2)", "far-end-distance", 1),
)

FIELD_LABELS = {name: label for name, label, _, _ in _DIMENSIONS} | {
    "padstone_present": "Padstone present",
    "padstone_reinforced": "Padstone reinforced",
    "padstone_position": "Padstone's position across the wall",
    "padstone_offset_across": "Padstone offset from the wall's centre line",
    "masonry_group": "Unit group",
    "masonry_material": "Unit material",
    "mortar": "Mortar class",
    "unit_strength": "Unit strength",
    "collar_joint": "Collar joint in the wall",
}


# One piece: each review reason in the order the engineer reads them, one comparison each;
# review.js mirrors it line for line.
def review(
    design: BearingInput,
    design_result: BearingResult,
    m: Measurements,
    checklist: Checklist,
    as_built: BearingInput,
    result: BearingResult,
    basis: CodeBasis,
    s: ReviewSettings = ReviewSettings(),
) -> tuple[ReviewReason, ...]:
    """Every reason the engineer should see this as-built record, most serious first."""
    out: list[ReviewReason] = []

    missing = missing_measurements(design, m, s)
    if missing:
        labels = ", ".join(FIELD_LABELS.get(n, n).lower() for n in missing)
        out.append(
            ReviewReason(
                "not-measured", BLOCKS, f"Not measured: {labels}.", (("fields", tuple(missing)),)
            )
        )

    for c in result.checks:
        if c.kind != INFORMATIVE and not c.passed:
            out.append(
                ReviewReason(
                    "check-fails",
                    BLOCKS,
                    f"{c.title} fails as built ({_utilisation_phrase(c.utilisation)}).",
                    (("check", c.code), ("utilisation", c.utilisation)),
                )
            )
    if result.passed and result.utilisation > s.threshold:
        out.append(
            ReviewReason(
                "above-threshold",
                BLOCKS,
                f"Utilisation {utilisation(result.utilisation)} is above the site's review threshold "
                f"{utilisation(s.threshold)}.",
                (("utilisation", result.utilisation), ("threshold", s.threshold)),
            )
        )
    rise = result.utilisation - design_result.utilisation
    if rise > s.rise_margin:
        out.append(
            ReviewReason(
                "utilisation-rise",
                BLOCKS,
                f"Utilisation rose from {utilisation(design_result.utilisation)} as designed to "
                f"{utilisation(result.utilisation)} as built, more than the allowed "
                f"{utilisation(s.rise_margin)}.",
                (
                    ("design", design_result.utilisation),
                    ("as_built", result.utilisation),
                    ("margin", s.rise_margin),
                ),
            )
        )

    if design.padstone is not None and as_built.padstone is None:
        out.append(
            ReviewReason(
                "padstone-missing",
                BLOCKS,
                "The designed padstone is not there: the beam bears directly on the masonry.",
                (),
            )
        )
    elif design.padstone is None and as_built.padstone is not None:
        out.append(
            ReviewReason(
                "padstone-added", ADVISORY, "A padstone was built where none was designed.", ()
            )
        )

    if design.masonry.group == 1 and as_built.masonry.group > 1:
        out.append(
            ReviewReason(
                "hollow-units",
                BLOCKS,
                f"Group {as_built.masonry.group} units were built where Group 1 was designed: "
                "the enhancement β no longer applies and the load needs solid material to bear on.",
                (("design_group", 1), ("as_built_group", as_built.masonry.group)),
            )
        )
    out.extend(_spreader_lost(design, as_built, basis))
    out.extend(_dimension_reasons(design, as_built, s))
    out.extend(_position_reasons(design_result, result, s))
    out.extend(_material_reasons(design, design_result, as_built, result))
    out.extend(_checklist_reasons(checklist, s))
    out.extend(_bearing_type_reasons(design, as_built, design_result, s))
    # Blocking reasons first, each kind in the order found.
    advisory = [r for r in out if r.severity != BLOCKS]
    if advisory:
        out = [r for r in out if r.severity == BLOCKS] + advisory
    return tuple(out)


def _utilisation_phrase(u: float) -> str:
    return "no capacity" if u == math.inf else f"utilisation {utilisation(u)}"


def _spreader_lost(
    design: BearingInput, as_built: BearingInput, basis: CodeBasis
) -> list[ReviewReason]:
    if is_spreader(design, basis) and not is_spreader(as_built, basis):
        return [
            ReviewReason(
                "spreader-lost",
                BLOCKS,
                "The design's padstone counted as a spreader (design strength raised to 1.5 f_d); "
                "as built it is too "
                "shallow, too short or narrower than the wall to count as one.",
                (),
            )
        ]
    return []


def _dimension_reasons(
    design: BearingInput, as_built: BearingInput, s: ReviewSettings
) -> list[ReviewReason]:
    out = []
    pairs = _dimension_pairs(design, as_built)
    for name, label, slug, kinder in _DIMENSIONS:
        d, a = pairs.get(name, _NOT_COMPARED)
        if d is None or a is None:
            continue
        if name == "wall_thickness":
            tol = max(s.tol_wall_thickness, s.tol_wall_thickness_ratio * d)
        else:
            tol = getattr(s, _TOLERANCE_SETTING[name])
        diff = a - d
        if abs(diff) <= tol + 1e-9:
            continue
        worse = diff * kinder < 0
        word = "shorter" if diff < 0 else "longer"
        if name in ("wall_thickness", "padstone_width", "flange_width"):
            word = "narrower" if diff < 0 else "wider"
        if name == "padstone_depth":
            word = "shallower" if diff < 0 else "deeper"
        out.append(
            ReviewReason(
                f"{slug}-off",
                BLOCKS if worse else ADVISORY,
                f"{label} is {number(a)} mm as built against {number(d)} mm designed "
                f"({number(abs(diff))} mm {word}; tolerance {number(tol)} mm).",
                (("design", d), ("as_built", a), ("tolerance", tol)),
            )
        )
    return out


def _dimension_pairs(
    design: BearingInput, as_built: BearingInput
) -> dict[str, tuple[float | None, float | None]]:
    dp, ap = design.padstone, as_built.padstone
    pairs = {
        "bearing_length": (design.beam.bearing_length, as_built.beam.bearing_length),
        "flange_width": (design.beam.flange_width, as_built.beam.flange_width),
        "wall_thickness": (design.wall.thickness, as_built.wall.thickness),
        "a1": (design.wall.a1, as_built.wall.a1),
        "a2": (design.wall.a2, as_built.wall.a2),
    }
    if dp is not None and ap is not None:
        pairs["padstone_length"] = (dp.length, ap.length)
        pairs["padstone_width"] = (dp.width, ap.width)
        pairs["padstone_depth"] = (dp.depth, ap.depth)
    return pairs


_NOT_COMPARED = (None, None)


# Measured dimension → the review setting that is its tolerance (the wall's tolerance
# is the greater of a length and a share of its thickness).
_TOLERANCE_SETTING = {
    "bearing_length": "tol_bearing_length",
    "flange_width": "tol_flange_width",
    "padstone_length": "tol_padstone",
    "padstone_width": "tol_padstone",
    "padstone_depth": "tol_padstone",
    "a1": "tol_end_distance",
    "a2": "tol_end_distance",
}


def _position_reasons(
    design_result: BearingResult, result: BearingResult, s: ReviewSettings
) -> list[ReviewReason]:
    """The reaction's position: along the support from its centre, across from the wall's
    centre line. Moving away from the centre beyond tolerance blocks; towards it advises."""
    out = []
    d, a = design_result.spread, result.spread
    along_d = d.reaction_x - d.support_length / 2
    along_a = a.reaction_x - a.support_length / 2
    for slug, label, dv, av in (
        ("position-along", "The beam's position along the padstone", along_d, along_a),
        (
            "position-across",
            "The beam's position across the wall",
            d.eccentricity_across,
            a.eccentricity_across,
        ),
    ):
        if abs(av - dv) <= s.tol_position + 1e-9:
            continue
        worse = abs(av) > abs(dv)
        out.append(
            ReviewReason(
                f"{slug}-off",
                BLOCKS if worse else ADVISORY,
                f"{label} is {number(av, plus=True)} mm from the centre as built against "
                f"{number(dv, plus=True)} mm designed (tolerance {number(s.tol_position)} mm).",
                (("design", dv), ("as_built", av), ("tolerance", s.tol_position)),
            )
        )
    return out


def _describe(m: Masonry) -> str:
    strength = f" {number(m.unit_strength)} N/mm²" if m.unit_strength is not None else ""
    joint = ", with a collar joint" if m.collar_joint else ""
    return f"{m.material} Group {m.group}{strength} units in {m.mortar} mortar{joint}"


def _material_reasons(
    design: BearingInput,
    design_result: BearingResult,
    as_built: BearingInput,
    result: BearingResult,
) -> list[ReviewReason]:
    out = []
    dm, am = design.masonry, as_built.masonry
    changed = (dm.material, dm.group, dm.unit_strength, dm.mortar) != (
        am.material,
        am.group,
        am.unit_strength,
        am.mortar,
    )
    dfk, afk = design_result.strengths.f_k, result.strengths.f_k
    dfd, afd = design_result.strengths.f_d, result.strengths.f_d
    if afd < dfd * (1 - 1e-9):
        out.append(
            ReviewReason(
                "masonry-weaker",
                BLOCKS,
                f"The masonry is weaker than designed: {_describe(am)} (characteristic strength "
                f"f_k {number(afk)} N/mm²) against {_describe(dm)} (f_k {number(dfk)} N/mm²).",
                (("design_f_k", dfk), ("as_built_f_k", afk)),
            )
        )
    elif changed and dm.f_k is not None:
        out.append(
            ReviewReason(
                "masonry-unverified",
                BLOCKS,
                f"The masonry differs from the design ({_describe(am)} against {_describe(dm)}), "
                f"whose characteristic strength f_k of {number(dfk)} N/mm² was declared: the "
                "re-check keeps it, so confirm it holds.",
                (("design_f_k", dfk),),
            )
        )
    elif changed:
        out.append(
            ReviewReason(
                "masonry-changed",
                ADVISORY,
                f"The masonry differs from the design but is no weaker: {_describe(am)} against {_describe(dm)}.",
                (("design_f_k", dfk), ("as_built_f_k", afk)),
            )
        )
    dc, ac = design_result.strengths.f_cd, result.strengths.f_cd
    if dc is not None and ac is not None and ac < dc * (1 - 1e-9):
        out.append(
            ReviewReason(
                "concrete-weaker",
                BLOCKS,
                f"The padstone concrete is weaker than designed (f_cd {number(ac)} against "
                f"{number(dc)} N/mm²).",
                (("design_f_cd", dc), ("as_built_f_cd", ac)),
            )
        )
    return out


def _checklist_reasons(c: Checklist, s: ReviewSettings) -> list[ReviewReason]:
    out = []
    if c.bedded is False:
        out.append(
            ReviewReason("not-bedded", BLOCKS, "The padstone is not fully bedded on mortar.", ())
        )
    if c.packing is not None and c.packing > s.max_packing:
        out.append(
            ReviewReason(
                "packing-thick",
                BLOCKS,
                f"Packing under the beam is {number(c.packing)} mm thick; more than "
                f"{number(s.max_packing)} mm needs the engineer.",
                (("packing", c.packing), ("limit", s.max_packing)),
            )
        )
    if c.cracks is True:
        out.append(
            ReviewReason("cracks", BLOCKS, "There are cracks in the masonry near the bearing.", ())
        )
    if c.cut_units is True:
        out.append(
            ReviewReason(
                "cut-units", BLOCKS, "There are cut or hollow units under the padstone.", ()
            )
        )
    if c.level is False:
        out.append(ReviewReason("not-level", BLOCKS, "The padstone is not level.", ()))
    return out


def _bearing_type_reasons(
    design: BearingInput, as_built: BearingInput, design_result: BearingResult, s: ReviewSettings
) -> list[ReviewReason]:
    """BS 5628-1 bearing types 2 and 3 rest on the geometry of the bearing (its end
    distance, length and spreader). When that geometry changes beyond tolerance the type
    chosen at design may no longer hold; the engineer must confirm it."""
    if design_result.basis != BS5628 or design.bearing_type == 1:
        return []
    changed = []
    if (design.padstone is None) != (as_built.padstone is None):
        changed.append("padstone")
    if abs(design.beam.bearing_length - as_built.beam.bearing_length) > s.tol_bearing_length:
        changed.append("bearing length")
    if (design.wall.a1 is None) != (as_built.wall.a1 is None) or (
        design.wall.a1 is not None
        and as_built.wall.a1 is not None
        and abs(design.wall.a1 - as_built.wall.a1) > s.tol_end_distance
    ):
        changed.append("end distance")
    if (
        design.padstone is not None
        and as_built.padstone is not None
        and (
            abs(design.padstone.length - as_built.padstone.length) > s.tol_padstone
            or abs(design.padstone.depth - as_built.padstone.depth) > s.tol_padstone
        )
    ):
        changed.append("padstone size")
    if not changed:
        return []
    return [
        ReviewReason(
            "bearing-type-basis",
            BLOCKS,
            f"Bearing type {design.bearing_type} was chosen for the designed geometry; the "
            f"{', '.join(changed)} changed, so confirm the type still applies.",
            (("bearing_type", design.bearing_type), ("changed", tuple(changed))),
        )
    ]


def blocking(reasons: tuple[ReviewReason, ...]) -> int:
    return sum(1 for r in reasons if r.severity == BLOCKS)


# Why a bearing could not be measured: a code of ours and the words the screens use.
UNMEASURABLE = (
    ("covered", "already covered up"),
    ("no-access", "no access to it"),
    ("unsafe", "not safe to reach"),
    ("other", "another reason, given in the notes"),
)


def could_not_measure(
    why: str, m: Measurements, checklist: Checklist, s: ReviewSettings = ReviewSettings()
) -> tuple[ReviewReason, ...]:
    """The review of a record saying the bearing could not be measured (``why`` a code of
    :data:`UNMEASURABLE`): nothing on site confirms the bearing, so it goes to the engineer
    and blocks release, with whatever the checklist did see.

    Such a record carries no measured value: one that did would be read as measured in part,
    so it is refused, naming the value, rather than kept under the wrong outcome."""
    words = dict(UNMEASURABLE).get(why)
    if words is None:
        codes = ", ".join(code for code, _ in UNMEASURABLE)
        raise InputError("why_not_measured", why, f"one of: {codes}", "bad-choice")
    for f in fields(Measurements):
        value = getattr(m, f.name)
        if value is not None:
            raise InputError(
                f"measurements.{f.name}",
                value,
                "nothing measured on a bearing that could not be measured: clear the value, "
                "or record the bearing as measured",
                "measured-but-not-measurable",
            )
    reason = ReviewReason(
        "could-not-measure",
        BLOCKS,
        f"Could not be measured ({words}): nothing on site confirms this bearing as built.",
        (("why", why),),
    )
    return (reason, *_checklist_reasons(checklist, s))
