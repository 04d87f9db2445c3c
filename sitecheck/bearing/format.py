"""Numbers into text: the one formatter of every trace, table, PDF, message and the command
line, mirrored digit for digit by ``static/js/bearing/format.js``.

* At most four significant figures, but every digit of the whole part (a loaded area of
  123 456 mm² is not rounded to 123 500), never an exponent: a figure in a calculation is
  read by people, and "3e+04 N" is not how the trade writes 30 kN.
* Thousands separated by commas, as UK drawings and schedules write them (the schedule
  reader takes "1,234.5" back).
* Forces in kN and line loads in kN/m: the core works in N and N/mm, the trade reads kN.
* Rounding is Python's: half to even on the exact binary value (the mirror does the same).

Pure: no I/O. The core's own messages use it too, so the phone's mirror prints them alike.
"""

from __future__ import annotations

import math
from functools import lru_cache

SIGNIFICANT = 4

# Unit inside the core → (unit shown, divisor).
_SHOWN = {"N": ("kN", 1000.0), "N/mm": ("kN/m", 1.0)}

NO_CAPACITY = "no capacity (fails)"


@lru_cache(maxsize=4096)  # a site writes the same few heights and sizes in every trace
def number(x: float, plus: bool = False) -> str:
    """``x`` to four significant figures (every whole digit kept), commas between
    thousands, no exponent; ``plus`` writes a + before a positive value."""
    x = float(x)
    if math.isnan(x):
        return "NaN"
    if math.isinf(x):
        return "∞" if x > 0 else "-∞"
    if x == 0:
        return "0"
    a = abs(x)
    # The exponent after rounding to the kept figures (9.9996 is 10.00, not 9.9996).
    exponent = int(format(a, f".{SIGNIFICANT - 1}e").partition("e")[2])
    decimals = max(0, SIGNIFICANT - 1 - exponent)
    text = format(a, f".{decimals}f")
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    whole, dot, fraction = text.partition(".")
    text = f"{int(whole):,}{dot}{fraction}"
    sign = "-" if x < 0 else ("+" if plus else "")
    return sign + text


def shown_unit(unit: str) -> str:
    """The unit a value in the core's ``unit`` is shown in."""
    return _SHOWN.get(unit, (unit, 1.0))[0]


def quantity(x: float | str | None, unit: str = "") -> str:
    """A value with its unit as a person reads it: ``quantity(60000.0, "N")`` is "60 kN".
    Text passes through (a mortar class, say); None is a dash."""
    if x is None:
        return "—"
    if isinstance(x, bool):
        return "yes" if x else "no"
    if isinstance(x, str):
        return f"{x} {unit}".strip()
    shown, divisor = _SHOWN.get(unit, (unit, 1.0))
    value = float(x) / divisor if divisor != 1.0 else float(x)
    return f"{number(value)} {shown}".strip()


def utilisation(u: float | None) -> str:
    """A utilisation to two decimals. A check with no capacity at all (no solid material
    under a bare bearing on hollow units, say) is a failure, and says so: it is never
    "n/a"."""
    if u is None or (isinstance(u, float) and not math.isfinite(u)):
        return NO_CAPACITY
    return format(u, ".2f")
