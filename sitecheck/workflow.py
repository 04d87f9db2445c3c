"""Bearing states, how a bearing moves between them, and who may do what on a site.

Pure rules: no SQL, no Flask, standard library only. The store applies these rules inside its
transactions; the web layer asks them before offering a button.

States (the words shown on screen, always with a symbol, never colour alone)::

    any but released --newest record, no blocking reason-->  within design
    any but released --newest record, blocking reason(s)-->  engineer to decide
    any but released --older record (by measured time)-->    unchanged
    released         --any record or photo-->                released (kept, and listed for
                                                             the engineer as recorded after
                                                             release)
    released         --keep the release (engineer, reason)-->released (what was listed is
                                                             answered)
    decidable        --decision accept-->                    accepted
    decidable        --decision remedial-->                  remedial
    decidable        --decision measure again-->             awaiting survey
    within design / accepted --release for closing up-->     released (locked)
    released         --reopen (engineer, with reason)-->     engineer to decide
    any but released --design revised-->                     engineer to decide if measured,
                                                             else awaiting survey

"decidable" is every state with a record to decide on that is not released: within design,
engineer to decide, accepted, remedial (an engineer may still order remedial work on a bearing
that passes, e.g. after seeing a photo).

Permissions (``allowed(role, action)``)::

    action          engineer  inspector  contractor  viewer
    view               yes       yes        yes       yes
    export             yes       yes        yes       yes
    record             yes       yes        no        no
    edit-site          yes       no         no        no
    edit-schedule      yes       no         no        no
    decide             yes       no         no        no
    reopen             yes       no         no        no
    invite             yes       no         no        no
    release            no        no         yes       no
    sign-off           yes       no         no        no

Engineers may record (they often measure on a site visit) but may not release: the release
for closing up is the contractor's signed act, and keeping it apart from the engineer's
decision means no one person both judges and closes up a bearing. Inspectors record and read.
Viewers (e.g. building control) read and export, nothing else.
"""

from typing import NamedTuple

AWAITING_SURVEY = "awaiting survey"
WITHIN_DESIGN = "within design"
ENGINEER_TO_DECIDE = "engineer to decide"
ACCEPTED = "accepted"
REMEDIAL = "remedial"
RELEASED = "released"

STATES = (AWAITING_SURVEY, WITHIN_DESIGN, ENGINEER_TO_DECIDE, ACCEPTED, REMEDIAL, RELEASED)

ENGINEER = "engineer"
INSPECTOR = "inspector"
CONTRACTOR = "contractor"
VIEWER = "viewer"

ROLES = (ENGINEER, INSPECTOR, CONTRACTOR, VIEWER)

DECISION_KINDS = ("accept", "remedial", "measure-again")
# Each decision as the screens, the notices and the site record name it.
DECISION_LABELS = {
    "accept": "Accept as built",
    "remedial": "Remedial work",
    "measure-again": "Measure again",
}

ACTIONS = (
    "view",
    "edit-site",
    "edit-schedule",
    "record",
    "decide",
    "release",
    "reopen",
    "invite",
    "export",
    "sign-off",
)

PERMISSIONS: dict[str, frozenset[str]] = {
    "view": frozenset(ROLES),
    "export": frozenset(ROLES),
    "record": frozenset({ENGINEER, INSPECTOR}),
    "edit-site": frozenset({ENGINEER}),
    "edit-schedule": frozenset({ENGINEER}),
    "decide": frozenset({ENGINEER}),
    "reopen": frozenset({ENGINEER}),
    "invite": frozenset({ENGINEER}),
    "release": frozenset({CONTRACTOR}),
    "sign-off": frozenset({ENGINEER}),
}

# What each action is, in words, for "you may not ..." and the audit trail.
ACTION_WORDS = {
    "make-sites": "make sites",
    "give-make-sites": "say who may make sites",
    "view": "see this site",
    "export": "export this site's record",
    "record": "record as-built values",
    "edit-site": "change the site's settings",
    "edit-schedule": "change the bearing schedule",
    "decide": "decide on bearings",
    "reopen": "reopen a released bearing",
    "invite": "invite people to the site",
    "release": "release bearings for closing up",
    "sign-off": "sign off the site record",
}

RELEASABLE_STATES = (WITHIN_DESIGN, ACCEPTED)
# A decision needs a record to be about, and a released bearing must be reopened first.
DECIDABLE_STATES = (WITHIN_DESIGN, ENGINEER_TO_DECIDE, ACCEPTED, REMEDIAL)

_AFTER_DECISION = {"accept": ACCEPTED, "remedial": REMEDIAL, "measure-again": AWAITING_SURVEY}

_NOT_RELEASABLE_BECAUSE = {
    AWAITING_SURVEY: "no as-built record has been made yet.",
    ENGINEER_TO_DECIDE: "the engineer has not decided yet.",
    REMEDIAL: "remedial work was instructed; a new as-built record is needed first.",
    RELEASED: "it is already released.",
}


class WorkflowError(ValueError):
    """A move the rules do not allow; the message is a plain sentence for the screen."""


class Badge(NamedTuple):
    """How a state is shown: a text symbol, the state's words, a CSS class for styling."""

    symbol: str
    label: str
    css_class: str


# Plain text symbols that read without colour; each differs in shape from the others.
STATE_BADGES: dict[str, Badge] = {
    AWAITING_SURVEY: Badge("○", AWAITING_SURVEY, "state-awaiting-survey"),
    WITHIN_DESIGN: Badge("✓", WITHIN_DESIGN, "state-within-design"),
    ENGINEER_TO_DECIDE: Badge("?", ENGINEER_TO_DECIDE, "state-engineer-to-decide"),
    ACCEPTED: Badge("☑", ACCEPTED, "state-accepted"),
    REMEDIAL: Badge("✗", REMEDIAL, "state-remedial"),
    RELEASED: Badge("■", RELEASED, "state-released"),
}


def _check_state(state: str) -> str:
    if state not in STATES:
        raise ValueError(f"state {state!r} is not one of: {', '.join(STATES)}")
    return state


def state_after_record(
    current_state: str, blocking_reason_count: int, record_is_newest: bool
) -> str:
    """The state after an as-built record arrives.

    A released bearing stays released (the record is kept and marked late). A record older, by
    measured time, than the newest does not drive the state. The newest record gives 'within
    design' with no blocking review reason and 'engineer to decide' with one or more.
    """
    _check_state(current_state)
    if blocking_reason_count < 0:
        raise ValueError(
            f"blocking_reason_count {blocking_reason_count} is negative; count the reasons"
        )
    if current_state == RELEASED or not record_is_newest:
        return current_state
    return WITHIN_DESIGN if blocking_reason_count == 0 else ENGINEER_TO_DECIDE


def record_is_late(current_state: str) -> bool:
    """A record that arrives after release is late: kept and listed for the engineer as
    recorded after release, but it moves nothing."""
    return _check_state(current_state) == RELEASED


def can_decide(state: str) -> bool:
    return _check_state(state) in DECIDABLE_STATES


def state_after_decision(kind: str) -> str:
    """accept -> 'accepted'; remedial -> 'remedial'; measure-again -> 'awaiting survey'."""
    try:
        return _AFTER_DECISION[kind]
    except KeyError:
        raise ValueError(f"decision {kind!r} is not one of: {', '.join(DECISION_KINDS)}") from None


def can_release(state: str) -> bool:
    return _check_state(state) in RELEASABLE_STATES


def release_refusal(
    state: str, *, reference: str | None = None, measure_again: bool = False
) -> str | None:
    """Why a bearing in ``state`` may not be released, as one sentence; None if it may.
    ``measure_again``: it awaits survey because the engineer asked for it to be measured
    again (it has records, so "no record yet" would be wrong)."""
    if can_release(state):
        return None
    subject = f"Bearing {reference}" if reference else "This bearing"
    because = _NOT_RELEASABLE_BECAUSE[state]
    if measure_again and state == AWAITING_SURVEY:
        because = "the engineer asked for it to be measured again."
    return f"{subject} is '{state}': {because}"


def reopen(*, state: str, role: str | None, reason: str) -> str:
    """The state a released bearing reopens to; raises WorkflowError if reopening is not allowed."""
    _check_state(state)
    if not allowed(role, "reopen"):
        raise WorkflowError("Only the site's engineer can reopen a released bearing.")
    if state != RELEASED:
        raise WorkflowError(f"Only a released bearing can be reopened; this one is '{state}'.")
    if not (reason or "").strip():
        raise WorkflowError("Write the reason for reopening; it stays on the record.")
    return ENGINEER_TO_DECIDE


def keep_release(*, state: str, role: str | None, reason: str) -> str:
    """The engineer keeps a release after looking at what was recorded since; the bearing
    stays released. Raises WorkflowError if that is not allowed."""
    _check_state(state)
    if not allowed(role, "reopen"):
        raise WorkflowError("Only the site's engineer answers what was recorded after a release.")
    if state != RELEASED:
        raise WorkflowError(
            f"Only a released bearing has a release to keep; this one is '{state}'."
        )
    if not (reason or "").strip():
        raise WorkflowError("Write the reason for keeping the release; it stays on the record.")
    return RELEASED


def state_after_revision(current_state: str, has_records: bool) -> str:
    """The state after the engineer revises a bearing's design.

    Existing records were measured against the old design, so the engineer must look at them
    again; with no record yet, or a new one already asked for, it stays awaiting survey.
    """
    if _check_state(current_state) == RELEASED:
        raise WorkflowError("A released bearing is locked; reopen it before revising its design.")
    if current_state == AWAITING_SURVEY or not has_records:
        return AWAITING_SURVEY
    return ENGINEER_TO_DECIDE


def event_part(detail: dict, key: str) -> dict:
    """A part of an event's detail that is itself an object ("before", "after": the bearing's
    state either side), or {} where the event has none."""
    part = detail.get(key)
    return part if isinstance(part, dict) else {}


# --- accepting a bearing that fails as built ------------------------------------------------------

# The reason for accepting a bearing that fails as built must be a full sentence: at least
# this many words, ending with a full stop. The screen says so beside the box.
SENTENCE_MIN_WORDS = 8
FULL_SENTENCE_WORDS = (
    f"a full sentence: at least {SENTENCE_MIN_WORDS} words, ending with a full stop"
)


def full_sentence_problem(text: str | None) -> str | None:
    """Why ``text`` is not a full sentence in the sense above, or None if it is."""
    text = (text or "").strip()
    words = len(text.split())
    if words < SENTENCE_MIN_WORDS:
        return (
            f"Write the reason as {FULL_SENTENCE_WORDS} (you wrote {words} "
            f"word{'' if words == 1 else 's'}): accepting a bearing that fails as built "
            "must say why it is safe."
        )
    if not text.endswith("."):
        return f"End the reason with a full stop: it must be {FULL_SENTENCE_WORDS}."
    return None


# --- what comes first, and whose turn it is ------------------------------------------------------

# How serious a bearing waiting for the engineer is, most serious first: its latest record
# fails a check as built; or it passes but a blocking review reason stops the release; or
# only advisory reasons remain (e.g. reopened after release).
FAILING, BLOCKING, ADVISORY_ONLY = 0, 1, 2
TIER_WORDS = {
    FAILING: "fails as built",
    BLOCKING: "blocking reasons",
    ADVISORY_ONLY: "no blocking reason",
}
_FAILING_CHECK = "check-fails"


def _blocks(reason: dict) -> bool:
    return reason.get("severity") == "blocks"


def reason_rank(reason: dict) -> tuple[int, float]:
    """Failing checks first (the highest utilisation first), then the other blocking
    reasons, then advisory ones; equal ranks keep the order the review found them in."""
    if reason.get("code") == _FAILING_CHECK:
        utilisation = (reason.get("values") or {}).get("utilisation")
        if not isinstance(utilisation, (int, float)) or isinstance(utilisation, bool):
            utilisation = float("inf")  # no capacity at all: the worst there is
        return (0, -float(utilisation))
    return (1, 0.0) if _blocks(reason) else (2, 0.0)


def ordered_reasons(reasons: list[dict] | None) -> list[dict]:
    return sorted(reasons or [], key=reason_rank)


def queue_tier(passed: bool | None, reasons: list[dict] | None) -> int:
    """FAILING, BLOCKING or ADVISORY_ONLY for a bearing waiting for the engineer."""
    if passed is False or any(r.get("code") == _FAILING_CHECK for r in reasons or []):
        return FAILING
    if passed is None or any(_blocks(r) for r in reasons or []):
        return BLOCKING
    return ADVISORY_ONLY


# Whose move it is in each state, in words for the release list and the site page.
WHO_ACTS = {
    AWAITING_SURVEY: ("inspector", "The inspector measures it as built."),
    WITHIN_DESIGN: ("contractor", "The contractor may release it for closing up."),
    ENGINEER_TO_DECIDE: ("engineer", "The engineer decides on it."),
    ACCEPTED: ("contractor", "The contractor may release it for closing up."),
    REMEDIAL: (
        "contractor",
        "The contractor does the remedial work; then the inspector measures it again.",
    ),
    RELEASED: ("nobody", "Nobody: it is released and locked."),
}


# The decision whose words stand for a bearing in each state: what the engineer asked for
# and is still to be done, or why it may be closed up.
_WORDS_STAND = {REMEDIAL: "remedial", AWAITING_SURVEY: "measure-again", ACCEPTED: "accept"}


def standing_decision(state: str, decision: dict | None) -> dict | None:
    """The bearing's latest decision if its words still stand in ``state`` (remedial work
    not yet measured, a measure-again request not yet answered, an acceptance not yet
    released); None otherwise."""
    if decision is None or _WORDS_STAND.get(_check_state(state)) != decision.get("kind"):
        return None
    return decision


def who_acts(state: str) -> tuple[str, str]:
    """(role, sentence): who must act next on a bearing in ``state``."""
    return WHO_ACTS[_check_state(state)]


def allowed(role: str | None, action: str) -> bool:
    """May someone with ``role`` on a site (None: not on it) do ``action`` there?"""
    if action not in PERMISSIONS:
        # A misspelt action would otherwise deny silently and hide the bug.
        raise ValueError(f"action {action!r} is not one of: {', '.join(ACTIONS)}")
    return role in PERMISSIONS[action]
