"""A bearing's design, typed by the engineer: the form, its sections, and the way between
the form's text (kN, mm) and the core's input (N, mm).

Parsing turns text into numbers and says which field was wrong; whether the numbers make
physical sense is the core's judgement (:func:`sitecheck.bearing.input_errors`), and its
answer is shown against the field it names. Nothing here computes engineering."""

from __future__ import annotations

from flask_wtf import FlaskForm
from wtforms import (
    BooleanField,
    HiddenField,
    SelectField,
    StringField,
)
from wtforms.validators import DataRequired, Length, Optional

from sitecheck.bearing import (
    Beam,
    BearingInput,
    CodeBasis,
    InputError,
    Load,
    Masonry,
    Padstone,
    Wall,
    input_errors,
)
from sitecheck.bearing.inputs import (
    CONDITIONING,
    CONTROL_LEVELS,
    MATERIALS,
    MORTARS,
)
from sitecheck.schedule import FIELD_TO_COLUMN
from sitecheck.web.form_fields import (
    add_error,
    core_message,
    error_count,
    number_field,
    options,
    parse_number,
    plain_number,
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


# One piece: the form's fields to the core's input in the input's order, each refusal put on its
# field.
def design_from_form(form: BearingForm, basis: CodeBasis) -> BearingInput | None:
    """The design input the form describes (kN → N), or None with every problem put on
    its field. Refusals from the core go against the field they name."""
    before = error_count(form)

    def num(name: str, unit: str = "mm", required: bool = False, what: str = "", shift: int = 0):
        return parse_number(form[name], unit, required=required, what=what, shift=shift)

    # kN to N by moving the decimal point, as the schedule reads it: 1.005 kN is 1005 N.
    reaction = num("reaction_kN", "kN", required=True, what="the ULS end reaction", shift=3)
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
            reaction=reaction,
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
    # Typed text is repeated with the refusal; a choice is shown beside it as chosen.
    typed = field.data if field.type == "StringField" and isinstance(field.data, str) else ""
    add_error(field, core_message(problem, typed))


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
