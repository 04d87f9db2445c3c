"""The one formula guard of every CSV sitecheck writes, and its undoing on import.

The characters a spreadsheet runs at the start of a cell (= + - @, and a tab or carriage
return that can hide one) are common practice: the list OWASP's "CSV Injection" page gives
(from memory)."""

from __future__ import annotations

import csv
import io

import pytest
from hypothesis import given
from hypothesis import strategies as st

from sitecheck.csvcells import FORMULA_STARTS, Figure, cell, guard_text, unguard_text
from sitecheck.report import export
from sitecheck.schedule import parse_schedule


@pytest.mark.parametrize("start", FORMULA_STARTS)
def test_text_a_spreadsheet_would_run_gets_an_apostrophe(start):
    text = f"{start}SUM(A1:A9)"
    assert guard_text(text) == "'" + text
    assert unguard_text(guard_text(text)) == text


@pytest.mark.parametrize(
    "text, written",
    [
        ("Grid C-4", "Grid C-4"),  # a sign inside the text is harmless
        ("'quoted'", "'quoted'"),  # an apostrophe before a letter is the engineer's own
        ("'=B5", "''=B5"),  # would read back as "=B5" if written as it is
        ("''-B6", "'''-B6"),
        ("", ""),
    ],
)
def test_text_is_guarded_only_where_reading_it_back_needs_it(text, written):
    assert guard_text(text) == written
    assert unguard_text(written) == text


@given(st.text())
def test_any_text_comes_back_and_never_starts_a_formula(text):
    written = guard_text(text)
    assert not written.startswith(FORMULA_STARTS)
    assert unguard_text(written) == text


@given(st.text(alphabet="'=+-@\t\r\n\",ab", max_size=8))
def test_any_text_survives_the_exports_csv_files(text):
    written = export._table(["text"], [[text]])
    header, row = csv.reader(io.StringIO(written, newline=""))
    assert unguard_text(row[0]) == text


def test_numbers_are_told_from_text_by_their_type():
    assert cell(-20.0, lambda x: f"{x:g}") == "-20"  # an offset: a number
    assert cell("-20") == "'-20"  # a reference typed as -20: text
    assert cell(Figure("-3.5")) == "-3.5"  # a number already written as text
    assert cell(-7) == "-7" and cell(True) == "yes" and cell(None) == ""
    with pytest.raises(TypeError):
        cell(object())


def test_the_schedule_reader_undoes_the_guard_even_before_a_tab():
    header = "reference,location,reaction_kN,flange_width,bearing_length,wall_thickness,height_to_bearing,f_k"
    row = ",".join([guard_text("=B1"), '"' + guard_text("\tlintel") + '"', "40", "133", "150"])
    parsed = parse_schedule(f"{header}\n{row},215,2400,4\n")
    assert not parsed.errors
    (bearing,) = parsed.rows
    assert (bearing.reference, bearing.location) == ("=B1", "\tlintel")
