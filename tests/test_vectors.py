"""The shared vectors that hold the browser's mirror equal to the Python core.

The committed file must be what the core makes now: a change to the core that changes a
result shows here first, and the browser test (tests/browser/test_mirror.py) then says
whether static/js/bearing/ still agrees. The cases must also cover what the mirror has to
get right: both code bases and orientations, every unit group and material, end and
off-centre bearings, and every error the core's validation, strengths and bases can raise.
"""

from __future__ import annotations

import ast
import json
from collections import Counter
from pathlib import Path

import pytest

from devtools import vectors
from sitecheck.bearing.inputs import MATERIALS

ROOT = Path(__file__).resolve().parent.parent
COMMITTED = ROOT / "tests" / "vectors" / "bearing-vectors.json.gz"
REWRITE = f"{vectors.REWRITE} tests/vectors/bearing-vectors.json.gz"
# The core modules whose errors the mirror reproduces (validate.py's input checks, the
# strengths' formula limits, a refused code basis).
ERROR_SOURCES = ("validate.py", "strength.py", "basis.py")


@pytest.fixture(scope="module")
def fresh() -> dict:
    return vectors.build_vectors()


@pytest.fixture(scope="module")
def committed() -> dict:
    assert COMMITTED.is_file(), f"{COMMITTED} is missing: write it with `{REWRITE}`"
    return json.loads(vectors.read_text(COMMITTED))


def test_committed_vectors_are_what_the_core_makes_now(fresh, committed):
    made = json.loads(vectors.dumps(fresh))
    found = vectors.differences(committed, made)
    assert committed == made, (
        "tests/vectors/bearing-vectors.json.gz is out of date with the core:\n  "
        + "\n  ".join(found)
        + f"\nRewrite it with `{REWRITE}`, then run tests/browser/test_mirror.py."
    )
    assert vectors.read_text(COMMITTED) == vectors.dumps(fresh), (
        f"the vectors are right but the file's layout is not: rewrite it with `{REWRITE}`"
    )


def test_the_file_has_the_agreed_shape(fresh):
    assert fresh["format"] == 1 and fresh["tolerance"] == 1e-9
    assert set(fresh) == {"format", "tolerance", "check", "errors", "review", "remedy"}
    for case in fresh["check"]:
        assert set(case) == {"id", "basis", "input", "expect"}
    for case in fresh["errors"]:
        assert set(case) == {"id", "basis", "input", "expect", "raises"}
        assert case["raises"] is not None, case["id"]
    ids = [c["id"] for c in fresh["check"] + fresh["errors"]]
    assert len(ids) == len(set(ids)), "case ids must be unique"


def test_the_vectors_are_the_same_on_every_run(fresh):
    assert vectors.dumps(vectors.build_vectors()) == vectors.dumps(fresh)


def test_differences_name_the_cases_that_changed(fresh):
    few = {"check": fresh["check"][:5], "errors": fresh["errors"][:3]}
    changed = json.loads(json.dumps(few))
    changed["check"][3]["expect"]["passed"] = not changed["check"][3]["expect"]["passed"]
    del changed["errors"][0]
    found = vectors.differences(few, changed)
    assert any(fresh["check"][3]["id"] in line and "changed" in line for line in found)
    assert any(fresh["errors"][0]["id"] in line and "removed" in line for line in found)


def test_enough_cases(fresh):
    assert len(fresh["check"]) + len(fresh["errors"]) >= 450


def test_check_cases_cover_the_branches_of_the_core(fresh):
    cases = fresh["check"]
    inputs = [c["input"] for c in cases]
    results = [c["expect"] for c in cases]
    assert {c["basis"]["name"] for c in cases} == {"EC6 + UK NA", "BS 5628-1"}
    assert {i["beam"]["orientation"] for i in inputs} == {"across", "in-line"}
    assert {i["padstone"] is None for i in inputs} == {True, False}
    for basis in ("EC6 + UK NA", "BS 5628-1"):
        on_basis = [c for c in cases if c["basis"]["name"] == basis]
        for orient in ("across", "in-line"):
            for padded in (True, False):
                assert any(
                    c["input"]["beam"]["orientation"] == orient
                    and (c["input"]["padstone"] is not None) == padded
                    for c in on_basis
                ), (basis, orient, padded)
    ec6_units = Counter(
        (i["masonry"]["group"], i["masonry"]["material"])
        for c, i in zip(cases, inputs, strict=True)
        if c["basis"]["name"] == "EC6 + UK NA"
    )
    assert {g for g, _ in ec6_units} == {1, 2, 3, 4}
    assert {m for _, m in ec6_units} == set(MATERIALS)
    assert {i["masonry"]["mortar"] for i in inputs} >= {"M2", "M4", "M6", "M12", "thin-layer"}
    assert any(i["masonry"]["f_k"] is not None for i in inputs), "declared f_k"
    assert any(i["masonry"]["gamma_M"] is not None for i in inputs), "declared gamma_M"
    assert any(not i["masonry"]["unit_strength_is_normalised"] for i in inputs), "unit size"
    bs_types = {
        i["bearing_type"] for c, i in zip(cases, inputs, strict=True) if "BS" in c["basis"]["name"]
    }
    assert bs_types == {1, 2, 3}
    assert any(i["wall"]["a1"] == 0 for i in inputs), "a bearing at the wall's end"
    assert any(0 < (i["wall"]["a1"] or 0) <= 50 for i in inputs), "a bearing near the end"
    assert any(i["beam"]["offset_along"] for i in inputs if i["padstone"]), "off-centre"
    assert any(i["beam"]["offset_across"] for i in inputs), "off the centre line"
    assert any(i["beam"]["reaction_at"] == "near-third" for i in inputs)
    assert any(i["beam"]["member"] == "lintel" for i in inputs)
    assert {r["passed"] for r in results} == {True, False}
    assert any(r["utilisation"] is None for r in results), "an unbounded utilisation"
    assert {r["spread"]["distribution"] for r in results} == {"uniform", "trapezoid", "triangle"}
    assert any(r["spread"]["rigid"] for r in results) and not all(
        r["spread"]["rigid"] for r in results
    )
    codes = {c["code"] for r in results for c in r["checks"]}
    assert codes >= {"direct-bearing", "solid-material", "dispersion", "inline-web-centre"}
    notes = [n for r in results for c in r["checks"] for n in c["notes"]]
    assert any("is a spreader" in n for n in notes), "the spreader route"
    assert any(
        c["basis"] != vectors.ec6_uk_na().to_dict() and c["basis"] != vectors.bs5628().to_dict()
        for c in cases
    ), "a basis with values changed"


def _error_sites() -> list[tuple[str | None, str]]:
    """(field, code) of every InputError the mirrored core modules can raise, read from
    their source: the field where it is written out (None where it is worked out), each
    code a literal or either branch of a conditional."""
    sites = []
    for name in ERROR_SOURCES:
        tree = ast.parse((ROOT / "sitecheck" / "bearing" / name).read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if not (isinstance(node, ast.Call) and getattr(node.func, "id", None) == "InputError"):
                continue
            code_node = next((k.value for k in node.keywords if k.arg == "code"), None)
            if code_node is None:
                code_node = node.args[3] if len(node.args) > 3 else ast.Constant("invalid")
            field = node.args[0]
            field_name = field.value if isinstance(field, ast.Constant) else None
            branches = (
                [code_node.body, code_node.orelse]
                if isinstance(code_node, ast.IfExp)
                else [code_node]
            )
            for branch in branches:
                assert isinstance(branch, ast.Constant), (
                    f"{name}:{node.lineno}: a code not written out"
                )
                sites.append((field_name, branch.value))
    return sites


def test_every_error_the_core_can_raise_has_a_case(fresh):
    sites = _error_sites()
    assert len({code for _, code in sites}) >= 10, "reading the sources found too few errors"
    seen = {
        (e["field"], e["code"])
        for case in fresh["errors"]
        for e in [*case["expect"], case["raises"]]
    }
    seen_codes = {code for _, code in seen}
    missing = sorted(
        f"{field or '(worked out)'} {code}"
        for field, code in set(sites)
        if (field, code) not in seen and not (field is None and code in seen_codes)
    )
    assert not missing, f"no error case raises: {missing}"


def test_error_cases_include_the_metres_hint_and_the_formula_limits(fresh):
    by_id = {c["id"]: c for c in fresh["errors"]}
    hint = by_id["error-wall-height_to_bearing-metres"]["expect"][0]
    # 2.0625 m and 2062.5 mm are exact binary fractions and ties at four significant figures:
    # the one formatter rounds them to even, as Python does, with commas between thousands.
    assert hint["code"] == "looks-like-metres"
    assert "2.062 looks like metres: did you mean 2,062 mm?" in hint["expected"]
    only_formula = [c for c in fresh["errors"] if not c["expect"]]
    assert len(only_formula) >= 5, "errors only a formula raises (no K value, δ table, f_b)"
    assert all(c["raises"]["code"] == "not-covered" for c in only_formula)
