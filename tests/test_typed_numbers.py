"""The one reader of typed numbers (sitecheck/bearing/typed.py): the shared cases, each
naming the rule it proves (tests/vectors/typed-numbers.json, which the phone's twin is held
to in tests/browser/test_mirror_typed.py), and properties over any text.

The readings are checked against Python's own float() and the standard library's decimal
module, both of which convert decimal text to the nearest double (IEEE 754, round to nearest).
"""

from __future__ import annotations

import json
import math
from decimal import Decimal
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from sitecheck.bearing.typed import SPACES, NumberRefused, number_text, read_number
from sitecheck.bearing.validate import concrete_class_fck

CASES_FILE = Path(__file__).parent / "vectors" / "typed-numbers.json"
CASES = json.loads(CASES_FILE.read_text(encoding="utf-8"))["cases"]
OPTIONS = ("unit", "least", "greatest", "example", "shift")


def outcome(case: dict) -> dict:
    """What the reader makes of a case, in the file's own shape."""
    options = {k: case[k] for k in OPTIONS if k in case}
    try:
        return {"reads": read_number(case["typed"], **options)}
    except NumberRefused as e:
        return {"refused": e.as_dict(case.get("label"))}


@pytest.mark.parametrize("case", CASES, ids=[f"{c['rule']}: {c['typed']!r}" for c in CASES])
def test_each_shared_case_reads_as_written(case):
    want = {k: case[k] for k in ("reads", "refused") if k in case}
    assert outcome(case) == want


def test_the_shared_cases_cover_every_refusal_and_both_outcomes():
    codes = {c["refused"]["code"] for c in CASES if "refused" in c}
    assert codes == {
        "not-a-number",
        "not-finite",
        "out-of-range",
        "digits",
        "unit",
        "underscore",
        "space",
        "decimal-comma",
        "comma-either-way",
        "commas",
    }
    assert any(c.get("reads") is None for c in CASES) and any(c.get("shift") for c in CASES)
    rules = [c["rule"] for c in CASES]
    assert all(r and r == r.strip() for r in rules)


def test_a_refusal_names_the_label_the_text_typed_and_what_is_expected():
    with pytest.raises(NumberRefused) as caught:
        read_number(" 7,3 ", unit="N/mm²")
    e = caught.value
    assert (e.typed, e.code) == ("7,3", "decimal-comma")
    sentence = e.sentence("Unit strength")
    assert sentence.startswith("Unit strength: “7,3” has a comma; expected a number in N/mm²")
    assert "write 7.3" in sentence and sentence.endswith(".")
    assert str(e) == e.sentence()  # without a label, for a form that shows it beside


# --- properties -------------------------------------------------------------------------


@given(st.floats(allow_nan=False, allow_infinity=False))
def test_every_finite_float_reads_back_from_its_shortest_text(x):
    # The data export writes repr(); re-importing it must give the very same number.
    assert read_number(repr(x)) == x
    assert read_number(f"  {x!r}\u00a0") == x


@given(st.text(max_size=30))
def test_any_text_reads_as_a_finite_number_none_or_a_refusal(text):
    try:
        value = read_number(text)
    except NumberRefused as e:
        assert e.code and e.expected and e.typed == text.strip(SPACES)
        return
    if value is None:
        assert not text.strip(SPACES)
    else:
        assert math.isfinite(value)
        # Whatever reads, reads as Python reads its plain digits.
        assert value == float(number_text(text.strip(SPACES)))


@given(
    st.text(alphabet="0123456789", min_size=1, max_size=4),
    st.characters(categories=["Nd"]).filter(lambda c: not "0" <= c <= "9"),
    st.text(alphabet="0123456789", max_size=4),
)
def test_no_digit_but_0_to_9_is_read(before, other, after):
    text = before + other + after
    assert math.isfinite(float(text))  # Python's float() reads every script's digits
    with pytest.raises(NumberRefused) as caught:
        read_number(text)
    assert caught.value.code == "digits"


@given(
    st.decimals(min_value=Decimal("-1e6"), max_value=Decimal("1e6"), allow_nan=False, places=6),
    st.integers(min_value=0, max_value=6),
)
def test_a_shift_moves_the_point_exactly(amount, shift):
    text = format(amount, "f")
    assert read_number(text, shift=shift) == float(amount.scaleb(shift))


@given(st.integers(min_value=1000, max_value=999_999_999), st.integers(0, 99))
def test_thousands_commas_read_with_a_point_and_are_refused_without(whole, cents):
    grouped = f"{whole:,}"
    assert read_number(f"{grouped}.{cents:02d}") == float(f"{whole}.{cents:02d}")
    with pytest.raises(NumberRefused) as caught:
        read_number(grouped)
    # One comma could be a decimal one; several cannot, but still need the point.
    assert caught.value.code == ("comma-either-way" if grouped.count(",") == 1 else "commas")


@given(st.sampled_from(["inf", "-inf", "+Infinity", "NaN", "nan", "1e309", "-1e999"]))
def test_nothing_infinite_or_not_a_number_is_read(text):
    assert not math.isfinite(float(text))  # Python's float() takes each of these
    with pytest.raises(NumberRefused) as caught:
        read_number(text)
    assert caught.value.code == "not-finite"
    with pytest.raises(NumberRefused) as caught:
        read_number(text, least=-1e6, greatest=1e6)
    assert caught.value.code == "out-of-range"


@pytest.mark.parametrize(
    ("concrete", "f_ck"),
    [
        # EN 1992-1-1 Table 3.1: class C25/30 has f_ck 25 N/mm² (and f_ck,cube 30).
        ("C25/30", 25.0),
        ("c 25 / 30", 25.0),  # spaces around each figure are trimmed
        ("C2_5/3_0", None),  # Python's float() would read 25 and 30
        ("C٢٥/٣٠", None),  # and these too
        ("C25,0/30", None),
    ],
)
def test_a_concrete_class_reads_its_figures_by_the_same_rules(concrete, f_ck):
    assert concrete_class_fck(concrete) == f_ck
