"""The engineer's forms: a site, its code basis and review settings, a bearing's design,
the schedule import and the site's members.

This is the edge where typed text and kN meet the core's numbers in N and mm. Parsing
turns text into numbers and says which field was wrong; whether the numbers make physical
sense is the core's judgement (:func:`sitecheck.bearing.input_errors`), and its answer is
shown against the field it names. Nothing here computes engineering.
"""

from __future__ import annotations

import math
from dataclasses import fields
from datetime import UTC, datetime

from flask_wtf import FlaskForm
from flask_wtf.file import FileField
from wtforms import (
    BooleanField,
    EmailField,
    HiddenField,
    SelectField,
    StringField,
    TextAreaField,
)
from wtforms.fields.choices import SelectChoice
from wtforms.validators import DataRequired, Length, Optional, Regexp

from sitecheck import workflow
from sitecheck.bearing import (
    BASES,
    SOURCES,
    Beam,
    BearingInput,
    CodeBasis,
    InputError,
    Load,
    Masonry,
    Padstone,
    Wall,
    basis_named,
    input_errors,
)
from sitecheck.bearing.basis import SCALAR_BOUNDS, TABLE_BOUNDS
from sitecheck.bearing.inputs import (
    CONDITIONING,
    CONTROL_LEVELS,
    MATERIALS,
    MORTARS,
)
from sitecheck.bearing.review import ReviewSettings
from sitecheck.schedule import FIELD_TO_COLUMN
from sitecheck.settings_words import (  # noqa: F401  (the settings page's words, re-exported)
    BASIS_FLAGS,
    BASIS_GROUPS,
    BASIS_LABELS,
    CREEP_TABLES,
    GAMMA_M_BS_ROWS,
    GAMMA_M_EC6_ROWS,
    K_MORTARS,
    REVIEW_LABELS,
    source_tag,
)

# --- small parts -------------------------------------------------------------------------------


def number_field(label: str, hint: str = "") -> StringField:
    # Text with a decimal keypad rather than type=number: browsers silently drop what
    # type=number cannot parse, and the engineer must see what they typed next to the
    # reason it was refused.
    return StringField(
        label,
        description=hint,
        render_kw={"inputmode": "decimal", "autocomplete": "off", "spellcheck": "false"},
    )


def options(pairs) -> list[SelectChoice]:
    return [SelectChoice(value, label) for value, label in pairs]


def add_error(field, message: str) -> None:
    # WTForms leaves .errors a tuple until validate() has run on the field.
    if not isinstance(field.errors, list):
        field.errors = list(field.errors)
    if message not in field.errors:
        field.errors.append(message)


def error_count(form) -> int:
    return len(form.form_errors) + sum(len(f.errors) for f in form if f.type != "CSRFTokenField")


def _sentence(text: str) -> str:
    text = text.strip()
    if not text:
        return text
    text = text[0].upper() + text[1:]
    return text if text[-1] in ".?!)" else text + "."


def core_message(e: InputError) -> str:
    return _sentence(f"expected {e.expected}")


def plain_number(value: float | None) -> str:
    """A stored number as an engineer would type it back (no trailing .0, no exponent)."""
    if value is None:
        return ""
    text = format(value, ".10g")
    if "e" in text:
        text = format(value, "f").rstrip("0").rstrip(".")
    return text


_EXAMPLES = {"mm": "215", "kN": "62", "kN/m": "20", "N/mm²": "7.3", "°": "45"}


def parse_number(field, unit: str = "", *, required: bool = False, what: str = "") -> float | None:
    """The number typed into ``field``, or None (empty, or refused with a field error)."""
    text = (field.data or "").strip()
    if not text:
        if required:
            add_error(
                field, f"Required: enter {what or 'a value'}" + (f" in {unit}." if unit else ".")
            )
        return None
    try:
        value = float(text)
    except ValueError:
        unit_words = f" in {unit}" if unit else ""
        example = _EXAMPLES.get(unit, "0.85")
        extra = " Use a point for decimals and no thousands separators." if "," in text else ""
        add_error(
            field, f"Expected a number{unit_words}, e.g. {example}; “{text}” is not one.{extra}"
        )
        return None
    if not math.isfinite(value):
        add_error(field, "Expected a finite number.")
        return None
    return value


def utc_text(value: str | None) -> str:
    """A stored UTC time as the screens show it: 2026-03-02 08:00 UTC."""
    if not value:
        return "—"
    try:
        moment = datetime.fromisoformat(str(value).replace("Z", "+00:00"))
    except ValueError:
        return str(value)
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=UTC)
    return moment.astimezone(UTC).strftime("%Y-%m-%d %H:%M UTC")


# --- a new site --------------------------------------------------------------------------------


class SiteForm(FlaskForm):
    name = StringField(
        "Site name",
        validators=[DataRequired("Give the site a name."), Length(max=120)],
        description="As the engineer and the site know it, e.g. the job name and block.",
    )
    address = StringField("Address", validators=[Optional(), Length(max=300)])
    basis = SelectField(
        "Code basis",
        choices=options((b, b) for b in BASES),
        default=BASES[0],
        description="EC6 + UK NA for new work; BS 5628-1 for checking existing buildings.",
    )


# --- a bearing's design ------------------------------------------------------------------------

ORIENTATION_CHOICES = [("across", "Across the wall"), ("in-line", "In line with the wall")]
MEMBER_CHOICES = [("beam", "Steel beam"), ("lintel", "Lintel")]
REACTION_AT_CHOICES = [
    ("centroid", "At the centre of the bearing"),
    ("near-third", "Near third (flexible beam end)"),
]
PADSTONE_CHOICES = [("yes", "Concrete padstone"), ("none", "No padstone")]
PADSTONE_ACROSS_CHOICES = [
    ("", "The usual place (see below)"),
    ("near-face", "Flush with the near face"),
    ("centred", "Centred on the wall"),
    ("far-face", "Flush with the far face"),
    ("offset", "Offset from the wall's centre line, as given below"),
]
REINFORCED_CHOICES = [("plain", "Plain concrete (unreinforced)"), ("reinforced", "Reinforced")]
GROUP_CHOICES = [(str(g), f"Group {g}") for g in (1, 2, 3, 4)]
CATEGORY_CHOICES = [("I", "Category I"), ("II", "Category II")]
EXECUTION_CHOICES = [("2", "Execution class 2"), ("1", "Execution class 1")]
BEARING_TYPE_CHOICES = [(str(t), f"Type {t}") for t in (1, 2, 3)]
COLLAR_JOINT_CHOICES = [
    ("", "Inferred (see below)"),
    ("yes", "Yes: a mortar joint parallel to the face"),
    ("no", "No"),
]


def _choice_field(label: str, choices, default: str, hint: str = "") -> SelectField:
    # validate_choice off: a value outside the list reaches the core, whose message names
    # what it accepts; WTForms' own would only say "Not a valid choice".
    return SelectField(
        label, choices=options(choices), default=default, description=hint, validate_choice=False
    )


class BearingForm(FlaskForm):
    reference = StringField(
        "Bearing reference",
        validators=[DataRequired("Give the bearing a reference."), Length(max=80)],
        description="Unique on this site, e.g. L1 / grid C-4 / beam B3 east end.",
        render_kw={"autocomplete": "off"},
    )
    location = StringField("Location", validators=[Optional(), Length(max=200)])

    # Loads (ULS)
    reaction_kN = number_field("End reaction N_Ed, ULS (kN)")
    wall_load_kN_per_m = number_field(
        "Other ULS load on the wall at that level (kN/m)", "Empty: none."
    )

    # The beam or lintel
    member = _choice_field("Member", MEMBER_CHOICES, "beam")
    orientation = _choice_field("Beam spans", ORIENTATION_CHOICES, "across")
    flange_width = number_field("Flange width b_f (mm)")
    bearing_length = number_field("Bearing length l_b (mm)")
    reaction_at = _choice_field(
        "Where the reaction acts",
        REACTION_AT_CHOICES,
        "centroid",
        "Near third: a flexible end rotates onto the near edge of its bearing.",
    )
    offset_along = number_field(
        "Offset along the wall (mm)",
        "Flange centre from padstone centre. Empty: as built in.",
    )
    offset_across = number_field(
        "Offset across the wall (mm)",
        "Flange centre from padstone centre. Empty: as built in.",
    )

    # The padstone
    padstone = _choice_field("Padstone", PADSTONE_CHOICES, "yes")
    padstone_length = number_field("Padstone length, along the wall (mm)")
    padstone_width = number_field("Padstone width, across the wall (mm)")
    padstone_depth = number_field("Padstone depth (mm)")
    padstone_concrete = StringField(
        "Concrete strength class",
        default="C25/30",
        description="e.g. C25/30",
        render_kw={"autocomplete": "off", "spellcheck": "false"},
    )
    padstone_f_ck = number_field(
        "Declared f_ck (N/mm²)", "Empty: from the strength class. Overrides the class if given."
    )
    padstone_across = _choice_field(
        "Where the padstone sits across the wall",
        PADSTONE_ACROSS_CHOICES,
        "",
        "For a padstone narrower than the wall. Usual: flush with the near face under a beam "
        "across the wall, centred under one in line. It moves the load across the wall (t/4).",
    )
    padstone_offset_across = number_field(
        "Padstone offset from the wall's centre line (mm)",
        "Its centre, + towards the far face. Only for an offset position.",
    )
    padstone_reinforced = _choice_field(
        "Padstone concrete",
        REINFORCED_CHOICES,
        "plain",
        "Site padstones, precast or cast in place, are usually plain: plain is taken unless "
        "you choose reinforced, and its strength uses α_cc,pl (EN 1992-1-1 section 12).",
    )

    # The wall
    wall_thickness = number_field("Wall (leaf) thickness t (mm)")
    height_to_bearing = number_field(
        "Height from the wall's base to the padstone's underside h_c (mm)",
        "With no padstone, to the beam's underside. Not the level the beam sits at on the padstone: that is higher by the padstone's depth and overstates h_c.",
    )
    clear_height = number_field("Clear height h (mm)", "Empty: h_c.")
    effective_height = number_field("Effective height h_ef (mm)", "Empty: h.")
    effective_thickness = number_field("Effective thickness t_ef (mm)", "Empty: t.")
    a1 = number_field("a1: padstone end to wall end or opening (mm)", "Empty: the wall runs on.")
    a2 = number_field("a2: from the other end (mm)", "Empty: the wall runs on.")

    # The masonry
    unit_material = _choice_field(
        "Masonry unit", [(m, m[0].upper() + m[1:]) for m in MATERIALS], "aggregate concrete"
    )
    unit_group = _choice_field("Unit group", GROUP_CHOICES, "1")
    unit_strength = number_field(
        "Unit compressive strength (N/mm²)", "The declared mean strength, unless ticked below."
    )
    unit_strength_is_normalised = BooleanField("The strength given is the normalised f_b")
    unit_height = number_field("Unit height (mm)")
    unit_width = number_field("Unit least horizontal dimension (mm)")
    conditioning = _choice_field(
        "Unit strength declared", [(c, c) for c in CONDITIONING], "air-dried"
    )
    mortar = _choice_field("Mortar class", [(m, m) for m in MORTARS], "M4")
    f_k = number_field(
        "Characteristic strength f_k (N/mm²)", "Only if declared; overrides the unit route."
    )
    shell_bedded = BooleanField("Units shell bedded")
    collar_joint = _choice_field(
        "Collar (longitudinal) joint in the wall",
        COLLAR_JOINT_CHOICES,
        "",
        "A wall two units wide, such as a one-brick wall, has one: EC6 then takes 0.8 × K. "
        "Inferred: yes when the wall is at least twice the unit's width.",
    )
    unit_category = _choice_field("Unit category (EC6)", CATEGORY_CHOICES, "I")
    execution_class = _choice_field("Execution class (EC6)", EXECUTION_CHOICES, "2")
    manufacturing_control = _choice_field(
        "Manufacturing control (BS 5628-1)", [(c, c) for c in CONTROL_LEVELS], "normal"
    )
    construction_control = _choice_field(
        "Construction control (BS 5628-1)", [(c, c) for c in CONTROL_LEVELS], "normal"
    )
    gamma_M = number_field("Partial factor γ_M", "Only to override the code basis's value.")

    # Less often needed
    bearing_type = _choice_field(
        "Bearing type (BS 5628-1)", BEARING_TYPE_CHOICES, "1", "The engineer's choice, clause 34."
    )
    e_mk = number_field("Mid-height eccentricity e_mk (mm)", "Empty: worked out and shown.")
    phi_m = number_field("Capacity reduction factor Φ_m", "Empty: worked out and shown.")
    beta_s = number_field("Capacity reduction factor β (BS 5628-1)", "Empty: worked out.")


class ReviseForm(BearingForm):
    reference = None  # a bearing keeps its reference; records and releases point at it
    # The revision the engineer started from: a form left open while someone else revised
    # the bearing must not overwrite their change unseen.
    revision = HiddenField()


SECTIONS = (
    ("Loads (ULS)", ("reaction_kN", "wall_load_kN_per_m")),
    (
        "Beam or lintel",
        (
            "member",
            "orientation",
            "flange_width",
            "bearing_length",
            "reaction_at",
            "offset_along",
            "offset_across",
        ),
    ),
    (
        "Padstone",
        (
            "padstone",
            "padstone_length",
            "padstone_width",
            "padstone_depth",
            "padstone_concrete",
            "padstone_f_ck",
            "padstone_reinforced",
            "padstone_across",
            "padstone_offset_across",
        ),
    ),
    (
        "Wall",
        (
            "wall_thickness",
            "height_to_bearing",
            "a1",
            "a2",
            "clear_height",
            "effective_height",
            "effective_thickness",
        ),
    ),
    (
        "Masonry",
        (
            "unit_material",
            "unit_group",
            "unit_strength",
            "unit_strength_is_normalised",
            "unit_height",
            "unit_width",
            "conditioning",
            "mortar",
            "f_k",
            "shell_bedded",
            "collar_joint",
            "unit_category",
            "execution_class",
            "manufacturing_control",
            "construction_control",
            "gamma_M",
        ),
    ),
    ("Less often needed", ("bearing_type", "e_mk", "phi_m", "beta_s")),
)

# Core field path → the form field that shows its error: the schedule's CSV columns (the
# form uses the same names), plus the fields only the form offers.
FIELD_FOR = FIELD_TO_COLUMN | {
    "padstone.f_ck": "padstone_f_ck",
    "padstone.reinforced": "padstone_reinforced",
    "padstone.position_across": "padstone_across",
    "padstone.offset_across": "padstone_offset_across",
    "wall.effective_thickness": "effective_thickness",
    "masonry.unit_strength_is_normalised": "unit_strength_is_normalised",
    "masonry.conditioning": "conditioning",
    "masonry.shell_bedded": "shell_bedded",
    "masonry.collar_joint": "collar_joint",
    "masonry.manufacturing_control": "manufacturing_control",
    "masonry.construction_control": "construction_control",
    "e_mk": "e_mk",
    "phi_m": "phi_m",
    "beta_s": "beta_s",
}

_PADSTONE_SIZES = ("padstone_length", "padstone_width", "padstone_depth")


def _whole(text: str) -> int | str:
    # A choice that is not a whole number goes on as typed, for the core to refuse by name.
    try:
        return int(text)
    except (TypeError, ValueError):
        return text


def design_from_form(form: BearingForm, basis: CodeBasis) -> BearingInput | None:
    """The design input the form describes (kN → N), or None with every problem put on
    its field. Refusals from the core go against the field they name."""
    before = error_count(form)

    def num(name: str, unit: str = "mm", required: bool = False, what: str = ""):
        return parse_number(form[name], unit, required=required, what=what)

    reaction_kN = num("reaction_kN", "kN", required=True, what="the ULS end reaction")
    wall_load = num("wall_load_kN_per_m", "kN/m")
    flange_width = num("flange_width", required=True, what="the flange width")
    bearing_length = num("bearing_length", required=True, what="the bearing length")
    thickness = num("wall_thickness", required=True, what="the wall thickness")
    height = num(
        "height_to_bearing",
        required=True,
        what="the height from the wall's base to the padstone's underside",
    )

    padstone = None
    if form.padstone.data == "none":
        typed = [n for n in _PADSTONE_SIZES if (form[n].data or "").strip()]
        if typed:
            add_error(
                form.padstone,
                "You chose no padstone but gave padstone sizes: choose “Concrete padstone”, "
                "or clear the sizes.",
            )
    else:
        padstone = Padstone(
            length=num("padstone_length", required=True, what="the padstone length"),
            width=num("padstone_width", required=True, what="the padstone width"),
            depth=num("padstone_depth", required=True, what="the padstone depth"),
            concrete=(form.padstone_concrete.data or "").strip().upper() or "C25/30",
            f_ck=num("padstone_f_ck", "N/mm²"),
            # Anything but "reinforced" is plain: the cautious reading of an odd value.
            reinforced=form.padstone_reinforced.data == "reinforced",
            position_across=form.padstone_across.data or None,
            offset_across=num("padstone_offset_across"),
        )

    inp = BearingInput(
        load=Load(
            reaction=None if reaction_kN is None else reaction_kN * 1000.0,
            wall_load=0.0 if wall_load is None else wall_load,  # kN/m is N/mm
        ),
        beam=Beam(
            flange_width=flange_width,
            bearing_length=bearing_length,
            orientation=form.orientation.data,
            member=form.member.data,
            offset_along=num("offset_along"),
            offset_across=num("offset_across"),
            reaction_at=form.reaction_at.data,
        ),
        wall=Wall(
            thickness=thickness,
            height_to_bearing=height,
            a1=num("a1"),
            a2=num("a2"),
            clear_height=num("clear_height"),
            effective_height=num("effective_height"),
            effective_thickness=num("effective_thickness"),
        ),
        masonry=Masonry(
            material=form.unit_material.data,
            group=_whole(form.unit_group.data),
            unit_strength=num("unit_strength", "N/mm²"),
            unit_strength_is_normalised=bool(form.unit_strength_is_normalised.data),
            unit_height=num("unit_height"),
            unit_width=num("unit_width"),
            conditioning=form.conditioning.data,
            mortar=form.mortar.data,
            f_k=num("f_k", "N/mm²"),
            shell_bedded=bool(form.shell_bedded.data),
            collar_joint={"yes": True, "no": False}.get(form.collar_joint.data),
            unit_category=form.unit_category.data,
            execution_class=_whole(form.execution_class.data),
            manufacturing_control=form.manufacturing_control.data,
            construction_control=form.construction_control.data,
            gamma_M=num("gamma_M", ""),
        ),
        padstone=padstone,
        bearing_type=_whole(form.bearing_type.data),
        e_mk=num("e_mk"),
        phi_m=num("phi_m", ""),
        beta_s=num("beta_s", ""),
    )
    refused_at_edge = {f.name for f in form if f.errors}
    for problem in input_errors(inp, basis):
        put_core_error(form, problem, skip=refused_at_edge)
    return inp if error_count(form) == before else None


def put_core_error(form, problem: InputError, skip: set[str] = frozenset()) -> None:
    """Show the core's refusal against its field. A field whose text was already refused
    here is skipped: the core saw an empty value there, not what was typed."""
    name = FIELD_FOR.get(problem.field)
    if name in skip:
        return
    field = form[name] if name and name in form else None
    if field is None:
        form.form_errors.append(f"{problem.field}: {core_message(problem)}")
        return
    add_error(field, core_message(problem))


def form_data_from_design(design: dict, location: str = "", revision: int | None = None) -> dict:
    """A stored design input (N, mm) as the form's text (kN, mm), for revising it."""
    load, beam, wall, mas = design["load"], design["beam"], design["wall"], design["masonry"]
    pad = design.get("padstone")
    data = {
        "location": location,
        "revision": "" if revision is None else str(revision),
        "reaction_kN": plain_number(load["reaction"] / 1000.0),
        "wall_load_kN_per_m": plain_number(load.get("wall_load") or None),
        "member": beam.get("member", "beam"),
        "orientation": beam.get("orientation", "across"),
        "flange_width": plain_number(beam["flange_width"]),
        "bearing_length": plain_number(beam["bearing_length"]),
        "reaction_at": beam.get("reaction_at", "centroid"),
        "offset_along": plain_number(beam.get("offset_along")),
        "offset_across": plain_number(beam.get("offset_across")),
        "padstone": "yes" if pad else "none",
        "padstone_length": plain_number(pad["length"]) if pad else "",
        "padstone_width": plain_number(pad["width"]) if pad else "",
        "padstone_depth": plain_number(pad["depth"]) if pad else "",
        "padstone_concrete": pad.get("concrete", "C25/30") if pad else "C25/30",
        "padstone_f_ck": plain_number(pad.get("f_ck")) if pad else "",
        "padstone_reinforced": "reinforced" if pad and pad.get("reinforced") else "plain",
        "padstone_across": (pad.get("position_across") or "") if pad else "",
        "padstone_offset_across": plain_number(pad.get("offset_across")) if pad else "",
        "wall_thickness": plain_number(wall["thickness"]),
        "height_to_bearing": plain_number(wall["height_to_bearing"]),
        "clear_height": plain_number(wall.get("clear_height")),
        "effective_height": plain_number(wall.get("effective_height")),
        "effective_thickness": plain_number(wall.get("effective_thickness")),
        "a1": plain_number(wall.get("a1")),
        "a2": plain_number(wall.get("a2")),
        "unit_material": mas.get("material", "aggregate concrete"),
        "unit_group": str(mas.get("group", 1)),
        "unit_strength": plain_number(mas.get("unit_strength")),
        "unit_strength_is_normalised": bool(mas.get("unit_strength_is_normalised")),
        "unit_height": plain_number(mas.get("unit_height")),
        "unit_width": plain_number(mas.get("unit_width")),
        "conditioning": mas.get("conditioning", "air-dried"),
        "mortar": mas.get("mortar", "M4"),
        "f_k": plain_number(mas.get("f_k")),
        "shell_bedded": bool(mas.get("shell_bedded")),
        "collar_joint": {True: "yes", False: "no"}.get(mas.get("collar_joint"), ""),
        "unit_category": mas.get("unit_category", "I"),
        "execution_class": str(mas.get("execution_class", 2)),
        "manufacturing_control": mas.get("manufacturing_control", "normal"),
        "construction_control": mas.get("construction_control", "normal"),
        "gamma_M": plain_number(mas.get("gamma_M")),
        "bearing_type": str(design.get("bearing_type", 1)),
        "e_mk": plain_number(design.get("e_mk")),
        "phi_m": plain_number(design.get("phi_m")),
        "beta_s": plain_number(design.get("beta_s")),
    }
    return data


def padstone_across_words(pad: dict) -> str:
    """Where a stored padstone sits across the wall, in words."""
    position = pad.get("position_across")
    if position == "offset":
        return f"centre {plain_number(pad.get('offset_across'))} mm from the wall's centre line"
    if not position:
        return "the usual place: flush with the near face (beam across), centred (in line)"
    return dict(PADSTONE_ACROSS_CHOICES).get(position, str(position)).lower()


def design_summary(design: dict) -> list[tuple[str, list[tuple[str, str]]]]:
    """A stored design input as labelled, readable values (kN, kN/m, mm, N/mm²)."""
    load, beam, wall, mas = design["load"], design["beam"], design["wall"], design["masonry"]
    pad = design.get("padstone")

    def mm(v, empty="—"):
        return empty if v is None else f"{plain_number(v)} mm"

    def mpa(v, empty="—"):
        return empty if v is None else f"{plain_number(v)} N/mm²"

    out = [
        (
            "Loads (ULS)",
            [
                ("End reaction N_Ed", f"{plain_number(load['reaction'] / 1000.0)} kN"),
                ("Other load on the wall", f"{plain_number(load.get('wall_load') or 0)} kN/m"),
            ],
        ),
        (
            "Beam or lintel",
            [
                ("Member", dict(MEMBER_CHOICES).get(beam.get("member"), beam.get("member"))),
                (
                    "Spans",
                    dict(ORIENTATION_CHOICES).get(beam.get("orientation"), beam.get("orientation")),
                ),
                ("Flange width b_f", mm(beam["flange_width"])),
                ("Bearing length l_b", mm(beam["bearing_length"])),
                (
                    "Reaction acts",
                    dict(REACTION_AT_CHOICES).get(beam.get("reaction_at"), beam.get("reaction_at")),
                ),
                ("Offset along the wall", mm(beam.get("offset_along"), "as built in")),
                ("Offset across the wall", mm(beam.get("offset_across"), "as built in")),
            ],
        ),
    ]
    if pad:
        out.append(
            (
                "Padstone",
                [
                    (
                        "Length × width × depth",
                        f"{plain_number(pad['length'])} × {plain_number(pad['width'])} × {plain_number(pad['depth'])} mm",
                    ),
                    ("Concrete", pad.get("concrete") or "—"),
                    ("Declared f_ck", mpa(pad.get("f_ck"), "from the class")),
                    (
                        "Reinforcement",
                        "reinforced" if pad.get("reinforced") else "none: plain concrete",
                    ),
                    ("Across the wall", padstone_across_words(pad)),
                ],
            )
        )
    else:
        out.append(("Padstone", [("Padstone", "none: the beam bears on the masonry")]))
    out.append(
        (
            "Wall",
            [
                ("Thickness t", mm(wall["thickness"])),
                (
                    "Height from the wall's base to the padstone's underside h_c",
                    mm(wall["height_to_bearing"]),
                ),
                ("a1", mm(wall.get("a1"), "wall runs on")),
                ("a2", mm(wall.get("a2"), "wall runs on")),
                ("Clear height h", mm(wall.get("clear_height"), "= h_c")),
                ("Effective height h_ef", mm(wall.get("effective_height"), "= h")),
                ("Effective thickness t_ef", mm(wall.get("effective_thickness"), "= t")),
            ],
        )
    )
    strength = mpa(mas.get("unit_strength"))
    if mas.get("unit_strength") is not None and mas.get("unit_strength_is_normalised"):
        strength += " (normalised f_b)"
    out.append(
        (
            "Masonry",
            [
                ("Unit", f"{mas.get('material')}, Group {mas.get('group')}"),
                ("Unit strength", strength),
                (
                    "Unit size (height × least width)",
                    "—"
                    if mas.get("unit_height") is None
                    else f"{plain_number(mas.get('unit_height'))} × {plain_number(mas.get('unit_width'))} mm",
                ),
                ("Mortar", mas.get("mortar") or "—"),
                ("Declared f_k", mpa(mas.get("f_k"), "from the units and mortar")),
                ("Shell bedded", "yes" if mas.get("shell_bedded") else "no"),
                (
                    "Collar joint",
                    {True: "yes", False: "no"}.get(
                        mas.get("collar_joint"), "inferred from the wall's thickness"
                    ),
                ),
                (
                    "Category / execution class",
                    f"{mas.get('unit_category')} / {mas.get('execution_class')}",
                ),
                (
                    "Manufacturing / construction control",
                    f"{mas.get('manufacturing_control')} / {mas.get('construction_control')}",
                ),
                (
                    "γ_M override",
                    "—" if mas.get("gamma_M") is None else plain_number(mas.get("gamma_M")),
                ),
            ],
        )
    )
    out.append(
        (
            "Less often needed",
            [
                ("Bearing type (BS 5628-1)", str(design.get("bearing_type", 1))),
                ("e_mk", mm(design.get("e_mk"), "worked out")),
                ("Φ_m", plain_number(design.get("phi_m")) or "worked out"),
                ("β (BS 5628-1)", plain_number(design.get("beta_s")) or "worked out"),
            ],
        )
    )
    return out


# --- site settings: the code basis and the review settings -------------------------------------

# The words are the settings page's and the site record's (sitecheck.settings_words); the
# bounds are the core's (sitecheck.bearing.basis.SCALAR_BOUNDS), so a value the form takes
# the core takes too.
BASIS_SCALARS: dict[str, tuple[str, str, float, float]] = {
    name: (label, unit, *SCALAR_BOUNDS[name]) for name, (label, unit) in BASIS_LABELS.items()
}


def creep_field_name(table: str, material: str) -> str:
    return f"{table}_{_slug(material)}"


K_BOUNDS = TABLE_BOUNDS["k_values"]
GAMMA_BOUNDS = TABLE_BOUNDS["gamma_M_ec6"]
BEARING_TYPE_BOUNDS = TABLE_BOUNDS["bearing_type_factors"]

# Plausibility bounds of ours on the review settings, to catch a slip, not code limits.
_REVIEW_BOUNDS = {
    "threshold": (0.1, 1.0),
    "rise_margin": (0.0, 1.0),
    "tol_bearing_length": (0.0, 100.0),
    "tol_flange_width": (0.0, 100.0),
    "tol_padstone": (0.0, 100.0),
    "tol_wall_thickness": (0.0, 100.0),
    "tol_wall_thickness_ratio": (0.0, 0.5),
    "tol_end_distance": (0.0, 500.0),
    "tol_position": (0.0, 200.0),
    "max_packing": (0.0, 100.0),
}
REVIEW_FIELDS: dict[str, tuple[str, str, float, float, str]] = {
    name: (label, unit, *_REVIEW_BOUNDS[name], source)
    for name, (label, unit, source) in REVIEW_LABELS.items()
}


def _slug(text: str) -> str:
    return "".join(c if c.isalnum() else "_" for c in text)


def k_field_name(material: str, group: int, mortar_kind: str) -> str:
    return f"k_{_slug(material)}_{group}_{_slug(mortar_kind)}"


def k_key(material: str, group: int, mortar_kind: str) -> str:
    return f"{material}|{group}|{mortar_kind}"


def gamma_field_name(table: str, key: str) -> str:
    return f"{table}_{_slug(key)}"


K_ROWS = tuple((m, g) for m in MATERIALS for g in (1, 2, 3, 4))


def _build_settings_form() -> type[FlaskForm]:
    attrs = {
        "name": StringField(
            "Site name", validators=[DataRequired("Give the site a name."), Length(max=120)]
        ),
        "address": StringField("Address", validators=[Optional(), Length(max=300)]),
        **{name: BooleanField(label) for name, label in BASIS_FLAGS.items()},
    }
    for name, (label, unit, _lo, _hi) in BASIS_SCALARS.items():
        attrs[name] = number_field(label + (f" ({unit})" if unit else ""))
    for material, group in K_ROWS:
        for kind in K_MORTARS:
            attrs[k_field_name(material, group, kind)] = number_field(
                f"K, {material}, Group {group}, {kind} mortar"
            )
    for key, label in GAMMA_M_EC6_ROWS:
        attrs[gamma_field_name("gamma_M_ec6", key)] = number_field(f"γ_M, {label}")
    for key, label in GAMMA_M_BS_ROWS:
        attrs[gamma_field_name("gamma_m_bs", key)] = number_field(f"γ_m, {label}")
    for i in (1, 2, 3):
        attrs[f"bearing_type_factor_{i}"] = number_field(f"Bearing type {i} factor")
    for table, words in CREEP_TABLES:
        for material in MATERIALS:
            attrs[creep_field_name(table, material)] = number_field(f"{words}, {material}")
    for name, (label, unit, *_rest) in REVIEW_FIELDS.items():
        attrs[name] = number_field(label + (f" ({unit})" if unit else ""))
    return type("SettingsForm", (FlaskForm,), attrs)


SettingsForm = _build_settings_form()


def settings_form_data(site: dict, basis: CodeBasis, review: ReviewSettings) -> dict:
    data = {"name": site["name"], "address": site.get("address") or ""}
    for name in BASIS_SCALARS:
        data[name] = plain_number(getattr(basis, name))
    for name in BASIS_FLAGS:
        data[name] = bool(getattr(basis, name))
    for material, group in K_ROWS:
        for kind in K_MORTARS:
            data[k_field_name(material, group, kind)] = plain_number(
                basis.k_value(material, group, kind)
            )
    ec6 = dict(basis.gamma_M_ec6)
    for key, _label in GAMMA_M_EC6_ROWS:
        data[gamma_field_name("gamma_M_ec6", key)] = plain_number(ec6.get(key))
    bs = dict(basis.gamma_m_bs)
    for key, _label in GAMMA_M_BS_ROWS:
        data[gamma_field_name("gamma_m_bs", key)] = plain_number(bs.get(key))
    for i, v in enumerate(basis.bearing_type_factors, start=1):
        data[f"bearing_type_factor_{i}"] = plain_number(v)
    for table, _words in CREEP_TABLES:
        values = dict(getattr(basis, table))
        for material in MATERIALS:
            data[creep_field_name(table, material)] = plain_number(values.get(material))
    for name in REVIEW_FIELDS:
        data[name] = plain_number(getattr(review, name))
    return data


def _bounded(field, least: float, greatest: float, unit: str, required: bool = True):
    value = parse_number(field, unit, required=required, what="a value")
    if value is None:
        return None
    if not least <= value <= greatest:
        unit_words = f" {unit}" if unit else ""
        add_error(
            field,
            f"Expected {plain_number(least)} to {plain_number(greatest)}{unit_words}; "
            f"{plain_number(value)} is outside the range this tool accepts.",
        )
        return None
    return value


def settings_from_form(form, basis: CodeBasis, review: ReviewSettings) -> tuple[dict, dict] | None:
    """The code basis and review settings as stored (``CodeBasis.to_dict`` and
    ``ReviewSettings.as_dict`` shapes), or None with each problem on its field."""
    before = error_count(form)
    code = basis.to_dict()  # keeps the basis's name and anything this form does not show
    for name, (_label, unit, lo, hi) in BASIS_SCALARS.items():
        code[name] = _bounded(form[name], lo, hi, unit)
    for name in BASIS_FLAGS:
        code[name] = bool(form[name].data)
    k_values = {}
    for material, group in K_ROWS:
        for kind in K_MORTARS:
            # An empty K cell means the table gives no value: the check then refuses
            # such masonry rather than guess.
            value = _bounded(form[k_field_name(material, group, kind)], *K_BOUNDS, "", False)
            if value is not None:
                k_values[k_key(material, group, kind)] = value
    code["k_values"] = k_values
    code["gamma_M_ec6"] = {
        key: _bounded(form[gamma_field_name("gamma_M_ec6", key)], *GAMMA_BOUNDS, "")
        for key, _label in GAMMA_M_EC6_ROWS
    }
    code["gamma_m_bs"] = {
        key: _bounded(form[gamma_field_name("gamma_m_bs", key)], *GAMMA_BOUNDS, "")
        for key, _label in GAMMA_M_BS_ROWS
    }
    code["bearing_type_factors"] = [
        _bounded(form[f"bearing_type_factor_{i}"], *BEARING_TYPE_BOUNDS, "") for i in (1, 2, 3)
    ]
    for table, _words in CREEP_TABLES:
        code[table] = {
            material: _bounded(form[creep_field_name(table, material)], *TABLE_BOUNDS[table], "")
            for material in MATERIALS
        }
    settings = review.as_dict()  # keeps which as-built values are required
    for name, (_label, unit, lo, hi, _source) in REVIEW_FIELDS.items():
        settings[name] = _bounded(form[name], lo, hi, unit)
    if error_count(form) != before:
        return None
    return code, settings


def basis_rows(basis: CodeBasis) -> dict:
    """What the settings page shows beside each value: its default and where that comes
    from, and whether this site has changed it."""
    default = basis_named(basis.name)
    rows = {}
    for f in fields(CodeBasis):
        if f.name == "name":
            continue
        source = SOURCES.get(f.name, "")
        rows[f.name] = {
            "source": source,
            "tag": source_tag(source),
            "changed": getattr(basis, f.name) != getattr(default, f.name),
        }
    return rows


# --- the schedule import -----------------------------------------------------------------------


class ImportForm(FlaskForm):
    file = FileField("Schedule file (CSV)")
    text = TextAreaField(
        "…or paste the schedule",
        description="Cells copied from a spreadsheet, or CSV text; header row first.",
        render_kw={"rows": 8, "spellcheck": "false"},
    )
    keep_good_rows = BooleanField("Import the good rows anyway")


# --- members -----------------------------------------------------------------------------------

ROLE_CHOICES = [(r, r) for r in workflow.ROLES]


class InviteForm(FlaskForm):
    email = EmailField(
        "E-mail",
        validators=[
            DataRequired("Enter their e-mail address."),
            Length(max=254),
            Regexp(
                r"^[^@\s]+@[^@\s]+\.[^@\s]+$",
                message="Enter an e-mail address such as name@firm.example.",
            ),
        ],
    )
    role = SelectField(
        "Role on this site", choices=options(ROLE_CHOICES), default=workflow.INSPECTOR
    )


class RoleForm(FlaskForm):
    role = SelectField("Role", choices=options(ROLE_CHOICES))


class RemoveForm(FlaskForm):
    pass
