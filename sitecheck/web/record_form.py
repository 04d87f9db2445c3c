"""The as-built form: its fields, how typed text becomes measurements, and how the core's
complaints about the merged input find their way back to the field that caused them.

The posted field names are the names of :class:`sitecheck.bearing.review.Measurements` and
:class:`~sitecheck.bearing.review.Checklist`, flat, plus ``notes``, ``photos``,
``measured_at``, ``record_uuid`` and ``design_revision``. The phone's outbox will send the
same names, so they must not change without a migration of its queued records.

Typed text is only parsed here; whether a value makes physical sense is the core's call
(:func:`sitecheck.bearing.input_errors` on the design with the measured values put in).
"""

from __future__ import annotations

import json
import uuid as uuid_module
from dataclasses import dataclass
from datetime import UTC, datetime

from flask_wtf import FlaskForm
from wtforms import (
    HiddenField,
    MultipleFileField,
    RadioField,
    SelectField,
    StringField,
    TextAreaField,
)
from wtforms.fields.choices import SelectChoice
from wtforms.validators import StopValidation, ValidationError

from sitecheck.bearing import InputError
from sitecheck.bearing.format import number, quantity
from sitecheck.bearing.inputs import MATERIALS, MORTARS
from sitecheck.bearing.review import CHECKLIST_FIELDS, MEASUREMENT_FIELDS, UNMEASURABLE
from sitecheck.bearing.typed import NumberRefused, read_number

MAX_PHOTOS = 8
NOTES_MAX = 4000
PROVISIONAL_MAX = 8000  # a verdict with every review reason code fits easily
# Packing is not a design value the core checks; these bounds only catch slips of the thumb.
PACKING_MAX_MM = 200.0

YES, NO, NOT_SEEN = "yes", "no", ""
# The padstone's positions across the wall (the core's PADSTONE_POSITIONS) in words.
PADSTONE_POSITION_WORDS = {
    "near-face": "flush with the near face",
    "centred": "centred on the wall",
    "far-face": "flush with the far face",
    "offset": "offset, as measured below",
}
TRI_STATE = (SelectChoice(YES, "yes"), SelectChoice(NO, "no"), SelectChoice(NOT_SEEN, "not seen"))


@dataclass(frozen=True)
class FieldSpec:
    name: str
    label: str
    kind: str  # number, tri, select, text
    unit: str = ""
    hint: str = ""
    # Where the designed value sits in the stored design input, if it has one.
    design: tuple[str, str] | None = None
    # A number's example in its refusal, and the bounds the form itself sets (most are the
    # core's to judge against the design; the phone reads these from phone_words()).
    example: str = ""
    bounds: tuple[float, float] | None = None


SPECS: dict[str, FieldSpec] = {
    s.name: s
    for s in (
        FieldSpec(
            "bearing_length",
            "Bearing length",
            "number",
            "mm",
            design=("beam", "bearing_length"),
            example="150",
        ),
        FieldSpec(
            "flange_width",
            "Flange width",
            "number",
            "mm",
            design=("beam", "flange_width"),
            example="133",
        ),
        FieldSpec(
            "offset_along",
            "Offset along the wall",
            "number",
            "mm",
            "Flange centre from the centre of the padstone (or wall), along the wall. "
            "Leave empty if the beam sits where drawn.",
            ("beam", "offset_along"),
            example="0",
        ),
        FieldSpec(
            "offset_across",
            "Offset across the wall",
            "number",
            "mm",
            "Flange centre from the centre of the padstone (or wall), across the wall.",
            ("beam", "offset_across"),
            example="0",
        ),
        FieldSpec("padstone_present", "Padstone present", "tri"),
        FieldSpec(
            "padstone_length",
            "Padstone length",
            "number",
            "mm",
            design=("padstone", "length"),
            example="440",
        ),
        FieldSpec(
            "padstone_width",
            "Padstone width",
            "number",
            "mm",
            design=("padstone", "width"),
            example="215",
        ),
        FieldSpec(
            "padstone_depth",
            "Padstone depth",
            "number",
            "mm",
            design=("padstone", "depth"),
            example="140",
        ),
        FieldSpec(
            "padstone_concrete",
            "Padstone concrete class",
            "text",
            hint="As marked or delivered, e.g. C25/30.",
            design=("padstone", "concrete"),
        ),
        FieldSpec(
            "padstone_reinforced",
            "Padstone reinforced",
            "tri",
            hint="Plain concrete unless the padstone or its delivery note shows reinforcement.",
            design=("padstone", "reinforced"),
        ),
        FieldSpec(
            "padstone_position",
            "Padstone's position across the wall",
            "select",
            hint="For a padstone narrower than the wall.",
            design=("padstone", "position_across"),
        ),
        FieldSpec(
            "padstone_offset_across",
            "Padstone offset from the wall's centre line",
            "number",
            "mm",
            "Its centre from the middle of the wall, + towards the far face: for an offset "
            "position.",
            ("padstone", "offset_across"),
            example="0",
        ),
        FieldSpec(
            "wall_thickness",
            "Wall thickness",
            "number",
            "mm",
            design=("wall", "thickness"),
            example="215",
        ),
        FieldSpec(
            "a1",
            "Distance to the wall's end (a1)",
            "number",
            "mm",
            "From the padstone's end to the wall's end or the edge of an opening.",
            ("wall", "a1"),
            example="900",
        ),
        FieldSpec(
            "a2",
            "Distance to the wall's other end (a2)",
            "number",
            "mm",
            "From the padstone's other end to the wall's end or an opening, where there is one.",
            ("wall", "a2"),
            example="900",
        ),
        FieldSpec("masonry_material", "Unit material", "select", design=("masonry", "material")),
        FieldSpec("masonry_group", "Unit group", "select", design=("masonry", "group")),
        FieldSpec(
            "unit_strength",
            "Unit strength",
            "number",
            "N/mm²",
            "The declared strength marked on the units or their delivery note.",
            ("masonry", "unit_strength"),
            example="7.3",
        ),
        FieldSpec("mortar", "Mortar class", "select", design=("masonry", "mortar")),
        FieldSpec(
            "collar_joint",
            "Collar joint in the wall",
            "tri",
            hint="A mortar joint parallel to the wall's face, as in a one-brick wall of two "
            "leaves.",
            design=("masonry", "collar_joint"),
        ),
        FieldSpec("bedded", "Padstone fully bedded on mortar", "tri"),
        FieldSpec(
            "packing",
            "Packing under the beam",
            "number",
            "mm",
            "Total thickness of packing between beam and padstone; 0 if none.",
            example="0",
            bounds=(0.0, PACKING_MAX_MM),
        ),
        FieldSpec("cracks", "Cracks in the masonry near the bearing", "tri"),
        FieldSpec("cut_units", "Cut or hollow units under the padstone", "tri"),
        FieldSpec("level", "Padstone level", "tri"),
    )
}


GROUPS = (
    ("Beam", ("bearing_length", "flange_width", "offset_along", "offset_across")),
    (
        "Padstone",
        (
            "padstone_present",
            "padstone_length",
            "padstone_width",
            "padstone_depth",
            "padstone_concrete",
            "padstone_reinforced",
            "padstone_position",
            "padstone_offset_across",
        ),
    ),
    ("Wall", ("wall_thickness", "a1", "a2")),
    ("Masonry", ("masonry_material", "masonry_group", "unit_strength", "mortar", "collar_joint")),
    ("How it was built", CHECKLIST_FIELDS),
)

# The core names fields by their place in the bearing input; the form by what was measured.
CORE_PATHS = (
    {
        "beam.bearing_length": "bearing_length",
        "beam.flange_width": "flange_width",
        "beam.offset_along": "offset_along",
        "beam.offset_across": "offset_across",
        "padstone.length": "padstone_length",
        "padstone.width": "padstone_width",
        "padstone.depth": "padstone_depth",
        "padstone.concrete": "padstone_concrete",
        "padstone.f_ck": "padstone_concrete",
        "padstone.reinforced": "padstone_reinforced",
        "padstone.position_across": "padstone_position",
        "padstone.offset_across": "padstone_offset_across",
        "wall.thickness": "wall_thickness",
        # t_ef follows a measured wall thickness in proportion, so its complaint is about t.
        "wall.effective_thickness": "wall_thickness",
        "wall.a1": "a1",
        "wall.a2": "a2",
        "masonry.material": "masonry_material",
        "masonry.group": "masonry_group",
        "masonry.unit_strength": "unit_strength",
        "masonry.mortar": "mortar",
        "masonry.collar_joint": "collar_joint",
    }
    | {f"measurements.{n}": n for n in MEASUREMENT_FIELDS}
    | {f"checklist.{n}": n for n in CHECKLIST_FIELDS}
)

# "Could you measure it?": measured (the empty answer), or why not, in the core's codes.
WHY_NOT_MEASURED = "why_not_measured"
OUTCOME_CHOICES = (
    SelectChoice("", "yes, measured"),
    *(SelectChoice(code, f"no: {words}") for code, words in UNMEASURABLE),
)


class NumberField(StringField):
    """Typed text kept as typed (so a refused form shows it again), parsed into ``number``
    by the one reader's rules (bearing/typed.py, which the phone's form shares). Empty
    means not measured; a refusal names the field, repeats what was typed and says what is
    expected."""

    def __init__(self, label=None, validators=None, *, spec: FieldSpec, **kw):
        super().__init__(label, validators, **kw)
        self.spec = spec
        self.number: float | None = None

    def process_formdata(self, valuelist):
        self.data = valuelist[0] if valuelist else ""

    def _value(self):
        return self.data or ""

    def pre_validate(self, form):
        self.number = None
        least, greatest = self.spec.bounds or (None, None)
        try:
            self.number = read_number(
                self.data,
                unit=self.spec.unit,
                least=least,
                greatest=greatest,
                example=self.spec.example or None,
            )
        except NumberRefused as e:
            raise StopValidation(e.sentence(self.spec.label)) from None


class TriStateField(RadioField):
    """yes, no, or the empty answer: not seen (or, for the padstone itself, not checked)."""

    def __init__(self, label=None, validators=None, *, blank_label: str = "not seen", **kw):
        choices = [*TRI_STATE[:2], SelectChoice(NOT_SEEN, blank_label)]
        super().__init__(label, validators, choices=choices, default=NOT_SEEN, **kw)
        self.blank_label = blank_label

    def pre_validate(self, form):
        if self.data not in (YES, NO, NOT_SEEN):
            raise StopValidation(f"{self.label.text}: choose yes, no or {self.blank_label}.")

    @property
    def answer(self) -> bool | None:
        return {YES: True, NO: False}.get(self.data)


class ChoiceField(SelectField):
    def pre_validate(self, form):
        if self.data not in {choice.value for choice in self.choices}:
            raise StopValidation(f"{self.label.text}: choose one of the listed values.")


def _choices(values, label: str = "{}") -> list[SelectChoice]:
    # Empty first: a value not looked at keeps the design's and counts as not measured.
    return [SelectChoice("", "not checked")] + [SelectChoice(v, label.format(v)) for v in values]


def _number(name: str) -> NumberField:
    spec = SPECS[name]
    return NumberField(spec.label, spec=spec)


class RecordForm(FlaskForm):
    """One as-built record. CSRF comes from FlaskForm (and is enforced app-wide as well)."""

    bearing_length = _number("bearing_length")
    flange_width = _number("flange_width")
    offset_along = _number("offset_along")
    offset_across = _number("offset_across")
    padstone_present = TriStateField(SPECS["padstone_present"].label, blank_label="not checked")
    padstone_length = _number("padstone_length")
    padstone_width = _number("padstone_width")
    padstone_depth = _number("padstone_depth")
    padstone_concrete = StringField(SPECS["padstone_concrete"].label)
    padstone_reinforced = TriStateField(SPECS["padstone_reinforced"].label)
    padstone_position = ChoiceField(
        SPECS["padstone_position"].label,
        choices=[
            SelectChoice("", "not checked"),
            *(SelectChoice(v, w) for v, w in PADSTONE_POSITION_WORDS.items()),
        ],
        default="",
    )
    padstone_offset_across = _number("padstone_offset_across")
    wall_thickness = _number("wall_thickness")
    a1 = _number("a1")
    a2 = _number("a2")
    masonry_material = ChoiceField(
        SPECS["masonry_material"].label,
        choices=_choices(MATERIALS),
        default="",
    )
    masonry_group = ChoiceField(
        SPECS["masonry_group"].label,
        choices=_choices(("1", "2", "3", "4"), "Group {}"),
        default="",
    )
    unit_strength = _number("unit_strength")
    mortar = ChoiceField(
        SPECS["mortar"].label,
        choices=_choices(MORTARS),
        default="",
    )
    collar_joint = TriStateField(SPECS["collar_joint"].label)
    bedded = TriStateField(SPECS["bedded"].label)
    packing = _number("packing")
    cracks = TriStateField(SPECS["cracks"].label)
    cut_units = TriStateField(SPECS["cut_units"].label)
    level = TriStateField(SPECS["level"].label)
    why_not_measured = RadioField(
        "Could you measure it?", choices=list(OUTCOME_CHOICES), default=""
    )
    notes = TextAreaField("Notes")
    photos = MultipleFileField("Photos")
    # The phone's date-time picker: local time without a zone. Without JavaScript the page
    # fills it in UTC and says so; with it, the phone sends the moment with its zone.
    measured_at = StringField("Measured at")
    record_uuid = HiddenField()
    design_revision = HiddenField()
    # What the phone's mirror of the core showed as the values were typed (JSON), sent so
    # the server can report a difference; empty when the page ran without JavaScript.
    provisional = HiddenField()

    def start(self, bearing: dict, now: datetime | None = None) -> None:
        """Fill a fresh form: a new record UUID, the time now, the design it is measured against."""
        self.record_uuid.data = str(uuid_module.uuid4())
        self.measured_at.data = picker_now(now)
        self.design_revision.data = str(bearing["revision"])

    def renew_uuid(self) -> None:
        self.record_uuid.data = str(uuid_module.uuid4())

    # --- validators beyond parsing -------------------------------------------------------

    def validate_padstone_concrete(self, field):
        if len((field.data or "").strip()) > 20:
            raise ValidationError(
                f"{field.label.text}: at most 20 characters; write the class, e.g. C25/30."
            )

    def validate_why_not_measured(self, field):
        if field.data == "other" and not (self.notes.data or "").strip():
            raise ValidationError(
                "Could you measure it: you chose another reason; say what it is in the notes."
            )

    @property
    def why(self) -> str | None:
        """Why the bearing could not be measured (a core code), None when it was measured."""
        return self.why_not_measured.data or None

    def validate_notes(self, field):
        if len(field.data or "") > NOTES_MAX:
            raise ValidationError(
                f"Notes: at most {NOTES_MAX} characters; these are {len(field.data)}. "
                "Shorten them, or add a photo of a sketch instead."
            )

    def validate_measured_at(self, field):
        text = (field.data or "").strip()
        example = picker_now().replace("T", " ")
        if not text:
            raise ValidationError(f"Measured at: give the time you measured, e.g. {example} (UTC).")
        try:
            moment = datetime.fromisoformat(text.replace("Z", "+00:00"))
        except ValueError:
            raise ValidationError(
                f"Measured at: “{text[:40]}” is not a date and time; choose it with the "
                f"picker, or write it like {example}."
            ) from None
        # The picker gives no zone; the page says its time is UTC when no script set it.
        if moment.tzinfo is None:
            moment = moment.replace(tzinfo=UTC)
        self.measured_at_utc = iso_now(moment)

    def validate_record_uuid(self, field):
        try:
            field.data = str(uuid_module.UUID(str(field.data or "")))
        except ValueError:
            raise ValidationError(
                "This form's record id is missing or damaged; it has been renewed. "
                "Check the values and send again."
            ) from None

    def provisional_verdict(self) -> object:
        """The phone's verdict as sent: a dict, None when none was sent, or the raw text
        when it was not readable JSON (the record is still stored; the event says so)."""
        text = (self.provisional.data or "").strip()
        if not text:
            return None
        if len(text) > PROVISIONAL_MAX:
            return text[:200]
        try:
            return json.loads(text)
        except ValueError:
            return text[:200]

    # --- what was measured -----------------------------------------------------------------

    def measurements(self) -> dict:
        """Measured values by name; a field left empty is not measured and is left out."""
        out: dict = {}
        for name in MEASUREMENT_FIELDS:
            field = self[name]
            if isinstance(field, NumberField):
                value = field.number
            elif isinstance(field, TriStateField):
                value = field.answer
            elif name == "masonry_group":
                value = int(field.data) if field.data else None
            else:
                value = (field.data or "").strip() or None
            if value is not None:
                out[name] = value
        return out

    def checklist(self) -> dict:
        out: dict = {}
        for name in CHECKLIST_FIELDS:
            field = self[name]
            value = field.number if isinstance(field, NumberField) else field.answer
            if value is not None:
                out[name] = value
        return out

    def add_core_errors(self, errors: list[InputError], design_input: dict) -> list[str]:
        """Put each core complaint on its field; return those that belong to no field."""
        general = []
        # A field that did not parse was left out, so the core judged the design's value in
        # its place; its own parse error is the one worth reading.
        unparsed = {name for name in SPECS if self[name].errors}
        for error in errors:
            name = CORE_PATHS.get(error.field)
            if error.field == WHY_NOT_MEASURED:
                general.append(f"Could you measure it: expected {error.expected}.")
                continue
            if name is None:
                general.append(
                    f"The design itself cannot be re-checked ({error.field} = {error.value!r}: "
                    f"{error.expected}). Nothing was saved; tell the site's engineer."
                )
                continue
            field = self[name]
            if name in unparsed:
                continue
            message = core_message(SPECS[name], field, error, design_input)
            if message not in field.errors:
                field.errors = [*field.errors, message]
        return general


def core_message(spec: FieldSpec, field, error: InputError, design_input: dict) -> str:
    typed = field.data.strip() if isinstance(field.data, str) else ""
    if typed:
        value = error.value
        shown = (
            quantity(value, spec.unit)
            if isinstance(value, int | float) and not isinstance(value, bool)
            else f"“{typed[:40]}”"
        )
        return f"{spec.label}: {shown} is not accepted; expected {error.expected}."
    designed = designed_value(design_input, spec.name)
    if designed is None or (
        spec.design and spec.design[0] == "padstone" and not design_input.get("padstone")
    ):
        return (
            f"{spec.label}: needed here, and the design has no value to keep; measure it. "
            f"Expected {error.expected}."
        )
    # Left empty, the designed value was kept; it is the other measured values that clash.
    return (
        f"{spec.label}: the designed {value_text(spec.name, designed)} (kept, as nothing was "
        f"typed) does not fit the other measured values; expected {error.expected}."
    )


# --- design values beside the fields, and as-built against designed on the result -------------


def designed_value(design_input: dict, name: str):
    """The designed value of a measured field (raw), or None where the design has none."""
    if name == "padstone_present":
        return design_input.get("padstone") is not None
    spec = SPECS[name]
    if spec.design is None:
        return None
    part, key = spec.design
    return (design_input.get(part) or {}).get(key)


def designed_text(design_input: dict, name: str) -> str:
    value = designed_value(design_input, name)
    spec = SPECS[name]
    if name == "padstone_present":
        return "yes" if value else "no padstone"
    if spec.design and spec.design[0] == "padstone" and design_input.get("padstone") is None:
        return "no padstone"
    if value is None:
        if name in ("offset_along", "offset_across"):
            return "where drawn (no offset)"
        if name == "a2":
            return "wall runs on"
        if name == "padstone_reinforced":
            return "no (plain concrete)"
        if name == "padstone_position":
            across = (design_input.get("beam") or {}).get("orientation", "across") == "across"
            return PADSTONE_POSITION_WORDS["near-face" if across else "centred"]
        if name == "padstone_offset_across":
            return "none"
        if name == "collar_joint":
            return "inferred from the wall's thickness"
        if name == "unit_strength" and (design_input.get("masonry") or {}).get("f_k") is not None:
            return (
                f"characteristic strength f_k {number(design_input['masonry']['f_k'])} N/mm² "
                "declared"
            )
        if spec.kind == "tri" or name == "packing":
            return ""
        return "not given"
    return value_text(name, value)


def value_text(name: str, value) -> str:
    if value is None:
        return "not measured"
    spec = SPECS[name]
    if isinstance(value, bool):
        return "yes" if value else "no"
    if name == "masonry_group":
        return f"Group {value}"
    if name == "padstone_position":
        return PADSTONE_POSITION_WORDS.get(value, str(value))
    if isinstance(value, int | float):
        return quantity(value, spec.unit)
    return str(value)


def _differs(designed, measured) -> bool:
    if measured is None:
        return False
    if designed is None:
        return True
    if isinstance(measured, bool) or isinstance(designed, bool):
        return bool(measured) != bool(designed)
    if isinstance(measured, int | float) and isinstance(designed, int | float):
        return abs(measured - designed) > 1e-9
    return str(measured).strip().upper() != str(designed).strip().upper()


def comparison(design_input: dict, measurements: dict) -> list[dict]:
    """Each measured field beside its designed value, marking those that differ."""
    rows = []
    for name in MEASUREMENT_FIELDS:
        designed = designed_value(design_input, name)
        measured = measurements.get(name)
        rows.append(
            {
                "field": name,
                "label": SPECS[name].label,
                "unit": SPECS[name].unit,
                "designed": designed,
                "measured": measured,
                "designed_text": designed_text(design_input, name),
                "measured_text": value_text(name, measured),
                "measured_flag": measured is not None,
                "changed": _differs(designed, measured),
            }
        )
    return rows


def checklist_rows(checklist: dict) -> list[dict]:
    rows = []
    for name in CHECKLIST_FIELDS:
        value = checklist.get(name)
        text = "not seen" if value is None else value_text(name, value)
        rows.append({"field": name, "label": SPECS[name].label, "value": value, "text": text})
    return rows


def iso_now(now: datetime | None = None) -> str:
    return (now or datetime.now(UTC)).astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def picker_now(now: datetime | None = None) -> str:
    """Now in UTC as a date-time picker holds it (no seconds, no zone)."""
    return (now or datetime.now(UTC)).astimezone(UTC).strftime("%Y-%m-%dT%H:%M")


def when_text(stamp: str | None) -> str:
    """A stored UTC time as people read it."""
    if not stamp:
        return "—"
    try:
        moment = datetime.fromisoformat(stamp)
    except ValueError:
        return stamp
    if moment.tzinfo is None:
        return moment.strftime("%d %b %Y %H:%M") + " (camera time)"
    return moment.astimezone(UTC).strftime("%d %b %Y %H:%M UTC")


# What the core may refuse in a bearing's design (not in anything measured), in words: the
# phone names it this way when a design cannot be re-checked, never by its path.
DESIGN_WORDS = {
    "load.reaction": "the end reaction",
    "load.wall_load": "the other load on the wall",
    "beam.orientation": "which way the beam spans",
    "beam.member": "beam or lintel",
    "beam.reaction_at": "where the reaction acts",
    "wall.height_to_bearing": "the height to the bearing",
    "wall.clear_height": "the clear height",
    "wall.effective_height": "the effective height",
    "masonry.conditioning": "how the units were tested",
    "masonry.unit_category": "the unit category",
    "masonry.execution_class": "the execution class",
    "masonry.manufacturing_control": "the manufacturing control",
    "masonry.construction_control": "the construction control",
    "masonry.gamma_M": "the masonry's partial factor",
    "masonry.f_k": "the declared masonry strength",
    "masonry.unit_height": "the unit height",
    "masonry.unit_width": "the unit width",
    "masonry.unit_strength_is_normalised": "whether the unit strength is normalised",
    "bearing_type": "the bearing type",
    "e_mk": "the eccentricity at mid-height",
    "phi_m": "the reduction factor at mid-height",
    "beta_s": "the capacity reduction factor",
    "basis": "the code basis",
    "design": "the design",
}


def phone_words() -> dict:
    """The words the phone puts in its messages (static/js/messages.js): each field's label
    and unit (and a number's example and bounds), the core's paths each field answers for, the design's paths in words, and why
    a bearing could not be measured. Written into the pages, so they have one source."""
    labels = {name: {"label": s.label, "unit": s.unit} for name, s in SPECS.items()}
    for name, s in SPECS.items():
        # What the phone's number reader (bearing/typed.js) needs to word a refusal as the
        # server's form does, and the form's own bounds.
        if s.kind == "number":
            labels[name] |= {"example": s.example} | ({"bounds": s.bounds} if s.bounds else {})
    labels |= {
        WHY_NOT_MEASURED: {"label": "Could you measure it", "unit": ""},
        "notes": {"label": "Notes", "unit": ""},
        "measured_at": {"label": "Measured at", "unit": ""},
        "photos": {"label": "Photos", "unit": ""},
    }
    paths = dict(CORE_PATHS) | {
        WHY_NOT_MEASURED: WHY_NOT_MEASURED,
        "notes": "notes",
        "measured_at": "measured_at",
    }
    return {
        "labels": labels,
        "paths": paths,
        "design": DESIGN_WORDS,
        # Where each field's designed value sits in the design input (designed_value()).
        "designed_at": {name: list(s.design) for name, s in SPECS.items() if s.design},
        "why": dict(UNMEASURABLE),
    }
