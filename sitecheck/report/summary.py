"""The site record's summary in words: counts by state, what is still open and who must act,
and what an engineer's sign-off covers. The PDF's first page and the record page both say
these, so they are said once, here.
"""

from __future__ import annotations

from sitecheck import workflow
from sitecheck.bearing.format import utilisation

# The statement offered to the engineer signing off a site record; they may change it.
DEFAULT_SIGN_OFF = (
    "I have reviewed this site record: each bearing's design, its as-built re-check, the "
    "decisions and the releases, as held when I signed. It is complete to the best of my "
    "knowledge, subject to the open items it lists."
)

# The as-built checklist: key, the question the screens ask, its unit.
CHECKLIST_QUESTIONS = (
    ("bedded", "Padstone fully bedded on mortar", ""),
    ("packing", "Packing under the beam", "mm"),
    ("cracks", "Cracks in the masonry near the bearing", ""),
    ("cut_units", "Cut or hollow units under the padstone", ""),
    ("level", "Padstone level", ""),
)

# The states still waiting for someone, in the order the summary lists them.
OPEN_STATES = (
    workflow.ENGINEER_TO_DECIDE,
    workflow.REMEDIAL,
    workflow.AWAITING_SURVEY,
    workflow.WITHIN_DESIGN,
    workflow.ACCEPTED,
)


def decision_title(d: dict) -> str:
    """A decision's title as the history, the release list and the site record say it: an
    acceptance of a bearing that fails as built says so, with what fails."""
    failing = d.get("accepted_failing")
    if failing:
        return (
            f"Accepted although it fails: {failing.get('title')}, utilisation "
            f"{utilisation(failing.get('utilisation'))}"
        )
    return workflow.DECISION_LABELS.get(d["kind"], d["kind"])


def plural(n: int, one: str, many: str | None = None) -> str:
    return f"{n} {one if n == 1 else (many or one + 's')}"


def state_counts(states: list[str]) -> dict[str, int]:
    """Bearings by state, in the workflow's order, every state present (0 included)."""
    counts = {state: 0 for state in workflow.STATES}
    for state in states:
        counts[state] += 1
    return counts


def counts_words(counts: dict[str, int]) -> str:
    """ "11 bearings: 4 awaiting survey, 1 released" (states with none left out)."""
    total = sum(counts.values())
    parts = [f"{n} {state}" for state, n in counts.items() if n]
    return plural(total, "bearing") + (": " + ", ".join(parts) if parts else "")


# What the role that acts on a bearing in each open state must do, for "who must act".
_TO_DO = {
    workflow.ENGINEER_TO_DECIDE: "decide on {n}",
    workflow.REMEDIAL: "do the remedial work on {n} (then the inspector measures again)",
    workflow.AWAITING_SURVEY: "measure {n} as built",
    workflow.WITHIN_DESIGN: "release {n} within design for closing up",
    workflow.ACCEPTED: "release {n} accepted by the engineer for closing up",
}


def who_must_act(counts: dict[str, int]) -> list[dict]:
    """For each role with bearings waiting for it: how many, which states, and what it must
    do, e.g. the contractor: "do the remedial work on 1 ...", "release 2 within design"."""
    out: dict[str, dict] = {}
    for state in OPEN_STATES:
        n = counts.get(state, 0)
        if not n:
            continue
        role, _sentence = workflow.who_acts(state)
        entry = out.setdefault(role, {"role": role, "count": 0, "states": [], "what": []})
        entry["count"] += n
        entry["states"].append(state)
        entry["what"].append(_TO_DO[state].format(n=n))
    return list(out.values())


def covers_words(covers: dict, lead: str = "The site record as it stood when signed") -> str:
    """What a sign-off covers (or would cover, with another ``lead``), in one sentence."""
    states = covers.get("states") or {}
    counts = {state: states.get(state, 0) for state in workflow.STATES}
    last = covers.get("last_event_at")
    until = f" up to {_when(last)}" if last else ""
    return (
        f"{lead}: {counts_words(counts)}; "
        f"{plural(covers.get('records', 0), 'as-built record')} with "
        f"{plural(covers.get('photos', 0), 'photo')}; the history{until}."
    )


def _when(stamp: str) -> str:
    return stamp[:16].replace("T", " ") + " UTC"
