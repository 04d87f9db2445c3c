"""The parts every engineer's form is made of: a number field, its reading and its
errors, and the core's refusal as a sentence. Nothing here knows one form from another."""

from __future__ import annotations

import math

from wtforms import (
    StringField,
)

# WTForms 3.3 added SelectChoice; its stubs (types-WTForms 3.2) do not have it yet.
from wtforms.fields.choices import SelectChoice  # type: ignore[attr-defined]

from sitecheck.bearing import (
    InputError,
)


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
