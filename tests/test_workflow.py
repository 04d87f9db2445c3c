"""Bearing states, transitions and the permission table."""

import ast
import sys
from pathlib import Path

import pytest

from sitecheck import workflow
from sitecheck.workflow import (
    ACCEPTED,
    AWAITING_SURVEY,
    ENGINEER_TO_DECIDE,
    RELEASED,
    REMEDIAL,
    WITHIN_DESIGN,
)


def _moves(state: str) -> set[str]:
    """Every state one act can take a bearing to from ``state``, by the rules alone."""
    after = set()
    if not workflow.record_is_late(state):
        after |= {workflow.state_after_record(state, blocking, True) for blocking in (0, 1)}
        after |= {workflow.state_after_revision(state, measured) for measured in (False, True)}
    if workflow.can_decide(state):
        after |= {workflow.state_after_decision(kind) for kind in workflow.DECISION_KINDS}
    if workflow.can_release(state):
        after.add(RELEASED)
    if state == RELEASED:
        after.add(workflow.reopen(state=state, role="engineer", reason="Padstone found cracked."))
    return after


def test_every_state_is_reached_from_awaiting_survey_and_none_but_these():
    seen, waiting = {AWAITING_SURVEY}, [AWAITING_SURVEY]
    while waiting:
        for state in _moves(waiting.pop()) - seen:
            seen.add(state)
            waiting.append(state)
    assert seen == set(workflow.STATES)
    # And back: from every state there is a way to released, the end of the hold point.
    for start in workflow.STATES:
        reach, waiting = {start}, [start]
        while waiting:
            for state in _moves(waiting.pop()) - reach:
                reach.add(state)
                waiting.append(state)
        assert RELEASED in reach, start


@pytest.mark.parametrize(
    ("current", "blocking", "newest", "expected"),
    [
        (AWAITING_SURVEY, 0, True, WITHIN_DESIGN),
        (AWAITING_SURVEY, 1, True, ENGINEER_TO_DECIDE),
        (AWAITING_SURVEY, 4, True, ENGINEER_TO_DECIDE),
        (WITHIN_DESIGN, 0, True, WITHIN_DESIGN),
        (WITHIN_DESIGN, 2, True, ENGINEER_TO_DECIDE),
        (ENGINEER_TO_DECIDE, 0, True, WITHIN_DESIGN),
        (ACCEPTED, 0, True, WITHIN_DESIGN),
        (ACCEPTED, 1, True, ENGINEER_TO_DECIDE),
        (REMEDIAL, 0, True, WITHIN_DESIGN),
        (REMEDIAL, 1, True, ENGINEER_TO_DECIDE),
        # an older record (by measured time) does not drive the state
        (WITHIN_DESIGN, 3, False, WITHIN_DESIGN),
        (ENGINEER_TO_DECIDE, 0, False, ENGINEER_TO_DECIDE),
        (AWAITING_SURVEY, 0, False, AWAITING_SURVEY),
        # released stays released; the record is late
        (RELEASED, 0, True, RELEASED),
        (RELEASED, 2, True, RELEASED),
        (RELEASED, 0, False, RELEASED),
    ],
)
def test_state_after_record(current, blocking, newest, expected):
    assert workflow.state_after_record(current, blocking, newest) == expected


def test_state_after_record_rejects_nonsense():
    with pytest.raises(ValueError, match="'closed'"):
        workflow.state_after_record("closed", 0, True)
    with pytest.raises(ValueError, match="negative"):
        workflow.state_after_record(AWAITING_SURVEY, -1, True)


@pytest.mark.parametrize("state", workflow.STATES)
def test_only_a_released_bearing_takes_late_records(state):
    assert workflow.record_is_late(state) is (state == RELEASED)


@pytest.mark.parametrize(
    ("kind", "expected"),
    [("accept", ACCEPTED), ("remedial", REMEDIAL), ("measure-again", AWAITING_SURVEY)],
)
def test_state_after_decision(kind, expected):
    assert workflow.state_after_decision(kind) == expected


def test_an_unknown_decision_is_refused():
    with pytest.raises(ValueError, match="accept, remedial, measure-again"):
        workflow.state_after_decision("ignore")


@pytest.mark.parametrize(
    ("state", "releasable", "decidable"),
    [
        (AWAITING_SURVEY, False, False),
        (WITHIN_DESIGN, True, True),
        (ENGINEER_TO_DECIDE, False, True),
        (ACCEPTED, True, True),
        (REMEDIAL, False, True),
        (RELEASED, False, False),
    ],
)
def test_release_and_decide_by_state(state, releasable, decidable):
    assert workflow.can_release(state) is releasable
    assert workflow.can_decide(state) is decidable
    refusal = workflow.release_refusal(state, reference="B3")
    if releasable:
        assert refusal is None
    else:
        assert refusal.startswith(f"Bearing B3 is '{state}': ")
        assert refusal.endswith(".")


def test_release_refusal_reads_as_a_sentence():
    assert workflow.release_refusal(ENGINEER_TO_DECIDE, reference="B3") == (
        "Bearing B3 is 'engineer to decide': the engineer has not decided yet."
    )
    assert workflow.release_refusal(AWAITING_SURVEY).startswith("This bearing is 'awaiting survey'")


def test_reopen_needs_a_released_bearing_an_engineer_and_a_reason():
    reason = "Padstone found cracked."
    assert workflow.reopen(state=RELEASED, role="engineer", reason=reason) == ENGINEER_TO_DECIDE
    for role in ("inspector", "contractor", "viewer", None):
        with pytest.raises(workflow.WorkflowError, match="engineer"):
            workflow.reopen(state=RELEASED, role=role, reason=reason)
    for state in set(workflow.STATES) - {RELEASED}:
        with pytest.raises(workflow.WorkflowError, match="Only a released bearing"):
            workflow.reopen(state=state, role="engineer", reason=reason)
    for blank in ("", "   ", None):
        with pytest.raises(workflow.WorkflowError, match="reason"):
            workflow.reopen(state=RELEASED, role="engineer", reason=blank)


@pytest.mark.parametrize(
    ("state", "has_records", "expected"),
    [
        (AWAITING_SURVEY, False, AWAITING_SURVEY),
        (AWAITING_SURVEY, True, AWAITING_SURVEY),
        (WITHIN_DESIGN, True, ENGINEER_TO_DECIDE),
        (ACCEPTED, True, ENGINEER_TO_DECIDE),
        (REMEDIAL, True, ENGINEER_TO_DECIDE),
        (ENGINEER_TO_DECIDE, True, ENGINEER_TO_DECIDE),
    ],
)
def test_state_after_revision(state, has_records, expected):
    assert workflow.state_after_revision(state, has_records) == expected


def test_a_released_bearing_cannot_be_revised():
    with pytest.raises(workflow.WorkflowError, match="reopen"):
        workflow.state_after_revision(RELEASED, True)


# The whole table, written out so that any change to it is a deliberate change to this test.
EXPECTED_PERMISSIONS = {
    #                 engineer inspector contractor viewer
    "view": (True, True, True, True),
    "export": (True, True, True, True),
    "record": (True, True, False, False),
    "edit-site": (True, False, False, False),
    "edit-schedule": (True, False, False, False),
    "decide": (True, False, False, False),
    "reopen": (True, False, False, False),
    "invite": (True, False, False, False),
    "release": (False, False, True, False),
    # The site record's sign-off is the engineer's statement, nobody else's.
    "sign-off": (True, False, False, False),
}


@pytest.mark.parametrize(
    ("role", "action", "expected"),
    [
        (role, action, row[i])
        for action, row in EXPECTED_PERMISSIONS.items()
        for i, role in enumerate(workflow.ROLES)
    ],
)
def test_permission_table(role, action, expected):
    assert workflow.allowed(role, action) is expected


def test_permission_table_covers_every_action():
    assert set(EXPECTED_PERMISSIONS) == set(workflow.ACTIONS) == set(workflow.PERMISSIONS)


@pytest.mark.parametrize("action", workflow.ACTIONS)
def test_nobody_outside_the_site_may_do_anything(action):
    assert workflow.allowed(None, action) is False
    assert workflow.allowed("admin", action) is False


def test_a_misspelt_action_is_an_error_not_a_silent_no():
    with pytest.raises(ValueError, match="'relase'"):
        workflow.allowed("contractor", "relase")


def test_every_state_has_a_distinct_symbol_and_its_own_words():
    assert set(workflow.STATE_BADGES) == set(workflow.STATES)
    symbols = [badge.symbol for badge in workflow.STATE_BADGES.values()]
    assert len(set(symbols)) == len(symbols)
    for state, badge in workflow.STATE_BADGES.items():
        assert badge.symbol.strip() and not badge.symbol.isalnum()
        assert badge.label == state
        assert badge.css_class == "state-" + state.replace(" ", "-")


def test_workflow_is_pure():
    source = Path(workflow.__file__).read_text(encoding="utf-8")
    imported = set()
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.Import):
            imported |= {alias.name.split(".")[0] for alias in node.names}
        elif isinstance(node, ast.ImportFrom):
            imported.add((node.module or "").split(".")[0])
    assert imported <= set(sys.stdlib_module_names)
