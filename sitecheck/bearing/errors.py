"""The one error the engineering core raises for input it cannot work with."""

from __future__ import annotations


class InputError(ValueError):
    """An input that makes no physical sense, or that no coded formula covers.

    ``field`` is a dotted path into the bearing input (``"padstone.length"``), ``code`` a
    stable slug the screens and the phone's mirror match on, ``expected`` a sentence that
    says what would have been accepted.
    """

    def __init__(self, field: str, value: object, expected: str, code: str = "invalid"):
        self.field = field
        self.value = value
        self.expected = expected
        self.code = code
        super().__init__(f"{field} = {value!r}: {expected}")

    def as_dict(self) -> dict[str, object]:
        return {
            "field": self.field,
            "value": self.value,
            "expected": self.expected,
            "code": self.code,
        }
