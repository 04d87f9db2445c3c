"""The parts every engineer's form is made of: a number field, its reading and its
errors, and the core's refusal as a sentence. Nothing here knows one form from another."""

from __future__ import annotations

from wtforms import (
    StringField,
)
from wtforms.fields.choices import SelectChoice

from sitecheck.bearing import (
    InputError,
)
from sitecheck.bearing.typed import NumberRefused, read_number, shown


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


def core_message(e: InputError, typed: str = "") -> str:
    """The core's refusal beside a field: what was typed there, if anything, and what the
    core expects (the field's label stands beside it)."""
    typed = (typed or "").strip()
    if typed:
        expected = e.expected.strip()
        end = "" if expected[-1:] in ".?!)" else "."
        return f"“{shown(typed)}” is not accepted; expected {expected}{end}"
    return _sentence(f"expected {e.expected}")


def plain_number(value: float | None) -> str:
    """A stored number as an engineer would type it back (no trailing .0, no exponent)."""
    if value is None:
        return ""
    text = format(value, ".10g")
    if "e" in text:
        text = format(value, "f").rstrip("0").rstrip(".")
    return text


def parse_number(
    field,
    unit: str = "",
    *,
    required: bool = False,
    what: str = "",
    least: float | None = None,
    greatest: float | None = None,
    shift: int = 0,
) -> float | None:
    """The number typed into ``field`` by the one reader's rules (bearing/typed.py), or
    None: empty, or refused with a field error that repeats what was typed and says what is
    expected (the label stands beside it, and leads it in the summary above the form)."""
    try:
        value = read_number(field.data, unit=unit, least=least, greatest=greatest, shift=shift)
    except NumberRefused as e:
        add_error(field, e.sentence())
        return None
    if value is None and required:
        add_error(field, f"Required: enter {what or 'a value'}" + (f" in {unit}." if unit else "."))
    return value
