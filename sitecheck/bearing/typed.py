"""The one reader of numbers as people type them, mirrored by ``static/js/bearing/typed.js``.

The engineer's forms, the inspector's forms (on the server, and on the phone through the
mirror), the schedule's CSV cells and the figures of a concrete class ("C25/30") all read a
typed number here, by one set of rules:

* spaces around the number are trimmed; nothing else is forgiven;
* a sign, the digits 0 to 9, a point for the decimal and an exponent ("1.5e-05": the data
  export writes the shortest text that reads back as the same number, which for a very
  small one has an exponent, so a re-imported export needs it);
* commas only between groups of three digits before a decimal point ("1,234.5"): a comma
  anywhere else, or with no point after it ("1,234" could be 1234 or 1.234), could be a
  decimal comma or a thousands separator, and is read neither way;
* no underscores, no spaces inside, no other script's digits, no unit ("215mm"), nothing
  that is not finite ("nan", "inf"), nothing outside the bounds the caller gives.

Empty text is not a number and not an error: :func:`read_number` gives None, and the caller
decides whether the value was needed. A refusal is a :class:`NumberRefused`, which says what
is wrong and what is expected, and makes the sentence a form shows beside the field.

The shared cases in ``tests/vectors/typed-numbers.json`` hold this module and its mirror to
the same readings and the same words. Pure: no I/O.
"""

from __future__ import annotations

import math
import re

from .format import number

# Trimmed around a number and refused inside one: ASCII white space and the no-break spaces
# a phone keyboard or a spreadsheet may put in. Written out, as Python's and JavaScript's
# ideas of white space differ.
SPACES = " \t\n\r\f\v\u00a0\u202f"
_SPACE = f"[{SPACES}]"

_PLAIN = re.compile(r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
# "1,234.5": commas between groups of three digits, with a decimal point to show that they
# are not a decimal comma.
_GROUPED = re.compile(r"[+-]?[0-9]{1,3}(?:,[0-9]{3})+\.[0-9]*(?:[eE][+-]?[0-9]+)?")
_NOT_FINITE = re.compile(r"[+-]?(?:inf|infinity|nan)", re.ASCII | re.IGNORECASE)
# A lone comma between up to three digits and exactly three: a decimal comma or thousands.
_EITHER_WAY = re.compile(r"[+-]?[0-9]{1,3},[0-9]{3}")
# Units a person may type after the number; longer names first where one begins another.
_UNIT_AFTER = re.compile(
    rf"(.*?){_SPACE}*(mm|cm|kN/m|kN|N/mm²|N/mm2|N/mm|MPa|m|N|°|deg)",
    re.ASCII | re.IGNORECASE | re.DOTALL,
)
_SAME_UNIT = {"n/mm2": "n/mm²", "mpa": "n/mm²", "deg": "°"}

# What to type, when a field has no example of its own.
EXAMPLES = {"mm": "215", "kN": "62", "kN/m": "20", "N/mm²": "7.3", "°": "45"}
DEFAULT_EXAMPLE = "0.85"
SHOWN_TEXT = 40  # characters of a refused text shown back


class NumberRefused(ValueError):
    """Typed text that is not a number by the rules above.

    ``code`` is a stable slug (``not-a-number``, ``decimal-comma``, ...), ``problem`` what is
    wrong with the text in words, ``expected`` what would be read (a CSV error's message).
    """

    def __init__(self, typed: str, code: str, problem: str, expected: str) -> None:
        self.typed = typed
        self.code = code
        self.problem = problem
        self.expected = expected
        super().__init__(self.sentence())

    def sentence(self, label: str | None = None) -> str:
        """The refusal as a form shows it: the field's label (where the form does not show it
        beside the message already), the text typed, what is wrong and what is expected."""
        head = f"{label}: " if label else ""
        return f"{head}“{shown(self.typed)}” {self.problem}; expected {self.expected}."

    def as_dict(self, label: str | None = None) -> dict[str, str]:
        return {"code": self.code, "expected": self.expected, "sentence": self.sentence(label)}


def shown(text: str) -> str:
    """Typed text as a message repeats it: its first 40 characters."""
    return text if len(text) <= SHOWN_TEXT else text[:SHOWN_TEXT] + "…"


def trimmed(text: str) -> str:
    return text.strip(SPACES)


def number_text(text: str) -> str | None:
    """Trimmed text as a plain decimal number (thousands commas taken out), or None."""
    if _GROUPED.fullmatch(text):
        return text.replace(",", "")
    return text if _PLAIN.fullmatch(text) else None


def read_number(
    text: str | None,
    *,
    unit: str = "",
    least: float | None = None,
    greatest: float | None = None,
    example: str | None = None,
    shift: int = 0,
) -> float | None:
    """The number typed, or None when nothing was. ``unit`` is the field's (for the words
    only: nothing is converted), ``least`` and ``greatest`` its bounds in that unit, and
    ``shift`` moves the decimal point right before the text becomes a float (3 reads kN as
    N exactly: "62.1" is 62100, not 62.1 × 1000 rounded twice). Raises NumberRefused."""
    if text is None:
        return None
    typed = trimmed(text)
    if not typed:
        return None
    words = _Words(unit, least, greatest, example)
    plain = number_text(typed)
    if plain is None:
        raise _refusal(typed, typed, words)
    value = float(plain)
    if not math.isfinite(value):
        raise words.not_finite(typed)
    if (least is not None and value < least) or (greatest is not None and value > greatest):
        raise words.out_of_range(typed)
    if shift:
        mantissa, _, exponent = plain.lower().partition("e")
        value = float(f"{mantissa}e{int(exponent or 0) + shift}")
    return value


class _Words:
    """The words of one field's refusals."""

    def __init__(
        self, unit: str, least: float | None, greatest: float | None, example: str | None
    ) -> None:
        self.unit = unit
        self.in_unit = f" in {unit}" if unit else ""
        self.least, self.greatest = least, greatest
        self.example = example or EXAMPLES.get(unit, DEFAULT_EXAMPLE)

    def bounded(self) -> bool:
        return self.least is not None or self.greatest is not None

    def not_finite(self, typed: str) -> NumberRefused:
        if self.bounded():
            return self.out_of_range(typed)
        return NumberRefused(
            typed,
            "not-finite",
            "is not a finite number",
            f"a finite number{self.in_unit}, e.g. {self.example}",
        )

    def out_of_range(self, typed: str) -> NumberRefused:
        after = f" {self.unit}" if self.unit else ""
        if self.least is not None and self.greatest is not None:
            expected = f"a number from {number(self.least)} to {number(self.greatest)}{after}"
        elif self.least is not None:
            expected = f"a number of at least {number(self.least)}{after}"
        else:
            expected = f"a number of at most {number(self.greatest)}{after}"
        return NumberRefused(typed, "out-of-range", "is out of range", expected)


def _refusal(typed: str, text: str, words: _Words) -> NumberRefused:
    """Why ``text`` (all or the start of ``typed``) is not a number, most telling reason
    first, with the text to write instead where one can be told."""
    in_unit = words.in_unit
    if _NOT_FINITE.fullmatch(text):
        return words.not_finite(typed)
    if any(c.isdecimal() and not "0" <= c <= "9" for c in text):
        return NumberRefused(
            typed,
            "digits",
            "has digits other than 0 to 9",
            f"a number{in_unit} written with the digits 0 to 9",
        )
    unit_typed = _UNIT_AFTER.fullmatch(text)
    if unit_typed and trimmed(unit_typed[1]):
        head = trimmed(unit_typed[1])
        if number_text(head) is None:
            return _refusal(typed, head, words)
        return _unit_refusal(typed, head, unit_typed[2], words)
    if "_" in text and number_text(text.replace("_", "")) is not None:
        return NumberRefused(
            typed,
            "underscore",
            "has an underscore",
            f"a number{in_unit} without underscores: write {text.replace('_', '')}",
        )
    spaceless = re.sub(_SPACE, "", text)
    if spaceless != text and number_text(spaceless) is not None:
        return NumberRefused(
            typed,
            "space",
            "has a space inside it",
            f"a number{in_unit} without spaces: write {spaceless}",
        )
    if "," in text:
        found = _comma_refusal(typed, text, in_unit)
        if found:
            return found
    return NumberRefused(
        typed, "not-a-number", "is not a number", f"a number{in_unit}, e.g. {words.example}"
    )


_EITHER = "(a comma could be a decimal comma or a thousands separator, so it is read neither way)"


def _comma_refusal(typed: str, text: str, in_unit: str) -> NumberRefused | None:
    if text.count(",") == 1 and "." not in text:
        if _EITHER_WAY.fullmatch(text):
            sign = text[0] if text[0] in "+-" else ""
            whole, _, thousands = text.lstrip("+-").partition(",")
            return NumberRefused(
                typed,
                "comma-either-way",
                "has a comma",
                f"a number{in_unit} without the comma or with a decimal point: write "
                f"{sign}{whole}{thousands} or {sign}{whole}.{thousands} {_EITHER}",
            )
        pointed = text.replace(",", ".")
        if number_text(pointed) is not None:
            return NumberRefused(
                typed,
                "decimal-comma",
                "has a comma",
                f"a number{in_unit} with a decimal point: write {pointed} {_EITHER}",
            )
    if number_text(text.replace(",", "")) is not None:
        return NumberRefused(
            typed,
            "commas",
            "has commas",
            f"a number{in_unit} with a point for the decimal and commas, if any, only between "
            "groups of three digits before it, e.g. 1,234.5 or 1234.5",
        )
    return None


def _unit_refusal(typed: str, head: str, unit_typed: str, words: _Words) -> NumberRefused:
    def same(unit: str) -> str:
        low = unit.lower()
        return _SAME_UNIT.get(low, low)

    if not words.unit:
        expected = f"a number without a unit: write {head}"
    elif same(unit_typed) == same(words.unit):
        expected = f"a number in {words.unit}, without the unit: write {head}"
    else:
        expected = (
            f"a number in {words.unit}, without a unit (this value is in {words.unit}, "
            f"not {unit_typed})"
        )
    return NumberRefused(typed, "unit", "has a unit", expected)
