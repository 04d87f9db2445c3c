"""The review and remedy cases of the shared vectors: they reach every review reason the
core can give, in each severity it can give it, on both code bases, and each one is what
the server's own flow (sitecheck.services.recheck) makes of the record.

The set of reasons is read from the source of sitecheck/bearing/review.py, not listed here,
so a reason added there without a case to reach it fails this test.
"""

from __future__ import annotations

import ast
import inspect

import pytest

from devtools.vectors_review import remedy_vectors, review_vectors
from sitecheck import services
from sitecheck.bearing import (
    ACROSS,
    BS5628,
    EC6_UK,
    IN_LINE,
    InputError,
    basis_from_dict,
    check_bearing,
)
from sitecheck.bearing import review as review_module
from sitecheck.bearing.serial import input_from_dict, input_to_dict

BOTH = ("blocks", "advisory")


@pytest.fixture(scope="module")
def review_cases():
    return review_vectors()


@pytest.fixture(scope="module")
def remedy_cases():
    return remedy_vectors()


def _severities(node: ast.expr) -> set[str]:
    if isinstance(node, ast.Name):
        return {getattr(review_module, node.id)}
    if isinstance(node, ast.IfExp):
        return _severities(node.body) | _severities(node.orelse)
    raise AssertionError(f"review.py: a severity this test cannot read: {ast.unparse(node)}")


def _slugs(function: ast.FunctionDef, name: str) -> list[str]:
    """The values a loop in ``function`` gives the variable ``name``: from a module-level
    table (``for name, ... in _DIMENSIONS``) or a literal one."""
    for loop in ast.walk(function):
        if not (isinstance(loop, ast.For) and isinstance(loop.target, ast.Tuple)):
            continue
        targets = [t.id for t in loop.target.elts if isinstance(t, ast.Name)]
        if name not in targets:
            continue
        i = targets.index(name)
        if isinstance(loop.iter, ast.Name):
            return [row[i] for row in getattr(review_module, loop.iter.id)]
        return [ast.literal_eval(row.elts[i]) for row in loop.iter.elts]
    raise AssertionError(f"review.py: cannot tell which values {name} takes in {function.name}")


def reasons_the_core_can_give() -> set[tuple[str, str]]:
    """Every (code, severity) a ReviewReason is built with in review.py."""
    tree = ast.parse(inspect.getsource(review_module))
    found = set()
    for function in (n for n in tree.body if isinstance(n, ast.FunctionDef)):
        for call in ast.walk(function):
            if not (
                isinstance(call, ast.Call)
                and isinstance(call.func, ast.Name)
                and call.func.id == "ReviewReason"
            ):
                continue
            code, severity = call.args[0], call.args[1]
            if isinstance(code, ast.Constant):
                codes = [code.value]
            else:
                # f"{slug}-off": one code for each value the loop gives slug.
                assert isinstance(code, ast.JoinedStr), ast.unparse(code)
                head, *tail = code.values
                assert isinstance(head, ast.FormattedValue) and isinstance(head.value, ast.Name)
                suffix = "".join(part.value for part in tail)
                codes = [slug + suffix for slug in _slugs(function, head.value.id)]
            for c in codes:
                for s in _severities(severity):
                    found.add((c, s))
    return found


def test_the_source_reading_finds_the_reasons_it_should():
    found = reasons_the_core_can_give()
    # A few the review's own tests name, so a reading that finds nothing cannot pass.
    assert ("not-measured", "blocks") in found
    assert ("padstone-added", "advisory") in found
    assert {("far-end-distance-off", s) for s in BOTH} <= found
    assert {("position-across-off", s) for s in BOTH} <= found
    assert len({c for c, _ in found}) >= 28


def test_every_reason_and_severity_is_reached(review_cases):
    reached = {
        (r["code"], r["severity"]) for case in review_cases for r in case["expect"]["reasons"]
    }
    missing = reasons_the_core_can_give() - reached
    assert not missing, f"no review case reaches {sorted(missing)}"


def test_enough_cases_on_both_bases_and_orientations(review_cases, remedy_cases):
    assert len(review_cases) >= 150 and len(remedy_cases) >= 30
    ids = [c["id"] for c in review_cases + remedy_cases]
    assert len(ids) == len(set(ids)), "case ids must be unique"
    for cases, key in ((review_cases, "design"), (remedy_cases, "input")):
        assert {c["basis"]["name"] for c in cases} == {EC6_UK, BS5628}
        assert {c[key]["beam"]["orientation"] for c in cases} == {ACROSS, IN_LINE}


def test_records_the_core_refuses_are_among_them(review_cases):
    refused = [c for c in review_cases if c["expect"]["error"] is not None]
    codes = {c["expect"]["error"]["code"] for c in refused}
    # Unreadable values (serial), physical nonsense (validate) and no formula (strength).
    assert {"unknown-field", "not-a-number", "bad-shape", "wider-than-wall", "not-covered"} <= codes
    for case in refused:
        assert case["expect"]["result"] is None and case["expect"]["reasons"] == []
    assert len(refused) < len(review_cases) / 3, "most cases should reach the review"


def test_each_case_is_what_the_server_makes_of_the_record(review_cases):
    for case in review_cases:
        site = {"code_basis": case["basis"], "review_settings": case["settings"]}
        bearing = {"design_input": case["design"]}
        expect = case["expect"]
        basis = basis_from_dict(case["basis"])
        design = input_from_dict(case["design"])
        assert expect["design_result"] == check_bearing(design, basis).as_dict(), case["id"]
        if expect["error"] is not None:
            with pytest.raises(InputError) as refused:
                services.recheck(
                    site, bearing, case["measurements"], case["checklist"], case.get("why")
                )
            assert refused.value.as_dict() == expect["error"], case["id"]
            continue
        rc = services.recheck(
            site, bearing, case["measurements"], case["checklist"], case.get("why")
        )
        assert input_to_dict(rc.as_built) == expect["as_built"], case["id"]
        assert rc.result.as_dict() == expect["result"], case["id"]
        assert [r.as_dict() for r in rc.reasons] == expect["reasons"], case["id"]
        assert rc.blocking == expect["blocking"], case["id"]


def test_remedy_cases_are_failing_bearings_and_some_have_no_standard_size(remedy_cases):
    for case in remedy_cases:
        inp = input_from_dict(case["input"])
        assert not check_bearing(inp, basis_from_dict(case["basis"])).passed, case["id"]
    no_size = [c for c in remedy_cases if c["expect"]["padstone"] is None]
    assert {c["basis"]["name"] for c in no_size} == {EC6_UK, BS5628}
    assert any(c["expect"]["bearing_length"] is None for c in no_size)
    found = [c for c in remedy_cases if c["expect"]["padstone"] is not None]
    assert {c["basis"]["name"] for c in found} == {EC6_UK, BS5628}
    for case in found:
        assert case["expect"]["padstone_utilisation"] <= 1.0 + 1e-9


def test_the_cases_are_the_same_on_every_run(review_cases, remedy_cases):
    assert review_vectors() == review_cases
    assert remedy_vectors() == remedy_cases
