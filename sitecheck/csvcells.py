"""Cells of the CSV files sitecheck writes and reads: the one formula guard.

A spreadsheet runs a cell that begins with ``=``, ``+``, ``-`` or ``@`` as a formula, and
a leading tab or carriage return can smuggle one past a check. So every free-text cell
sitecheck writes that begins with one of these gets a ``'`` in front, which spreadsheets
show as text. Numbers are told apart from free text by their type before they become
text: a float offset of -20 is written ``-20`` as a :class:`Figure`, while a reference
typed as ``-20`` is a ``str`` and is guarded. The schedule import undoes the guard, so an
exported schedule imports with the same text.

The guard also puts a ``'`` before text that already begins with ``'`` and then one of
those characters, so that undoing it gives back exactly what was written.
"""

from __future__ import annotations

import re

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")

# Text the guard changes: any number of apostrophes, then a character a spreadsheet runs.
_GUARDED = re.compile(r"'*[=+\-@\t\r]")
# Text the guard made (or a spreadsheet user typed to force text): one more apostrophe.
_UNGUARD = re.compile(r"'+[=+\-@\t\r]")


class Figure(str):
    """The text of a number, written as it is: ``-20`` is a number, not a formula."""

    __slots__ = ()


def guard_text(text: str) -> str:
    """Free text as a spreadsheet will show it rather than run it."""
    return "'" + text if _GUARDED.match(text) else text


def unguard_text(text: str) -> str:
    """The text :func:`guard_text` was given (a cell typed ``'=x`` reads as ``=x``)."""
    return text[1:] if _UNGUARD.match(text) else text


def cell(value, number=str) -> str:
    """One cell: free text guarded, numbers (and :class:`Figure`) written by ``number``
    as they are, yes/no for a flag, empty for nothing."""
    if value is None:
        return ""
    if isinstance(value, Figure):
        return str(value)
    if isinstance(value, str):
        return guard_text(value)
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, (int, float)):
        return Figure(number(value))
    raise TypeError(f"a CSV cell holds text, a number, a flag or nothing, not {value!r}")
