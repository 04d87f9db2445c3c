"""The audit trail in words, for the site record: who did what, to which bearing, in a
sentence a reader of the quality file follows without the data behind it.

Identifiers, hashes and raw before/after values stay out of these sentences: they are in
the data export (JSON), which the record names. A record is named by when it was measured,
a person by name, a bearing by its reference.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from sitecheck import workflow
from sitecheck.report.summary import decision_title, plural


@dataclass(frozen=True)
class Words:
    """What a sentence may name: people by id, records by their UUID (as when measured)."""

    name: Callable[[int | None], str]
    measured: dict[str, str]  # record uuid → measured at

    def record(self, uuid: str | None) -> str:
        at = self.measured.get(uuid or "")
        return f"the as-built record measured {_when(at)}" if at else "an as-built record"


def _when(stamp: str | None) -> str:
    return stamp[:16].replace("T", " ") + " UTC" if stamp else "—"


def _quoted(text) -> str:
    text = " ".join(str(text or "").split())
    return f"“{text}”"


def _states(detail: dict) -> str:
    before = workflow.event_part(detail, "before")
    after = workflow.event_part(detail, "after")
    was, now = before.get("state"), after.get("state")
    if now and was and was != now:
        return f" State: {was} → {now}."
    return ""


def _user(detail_part, words: Words) -> str:
    user = detail_part.get("user") if isinstance(detail_part, dict) else None
    return words.name(user) if isinstance(user, int) else "someone"


def sentence(event: dict, words: Words) -> str:
    """One history entry as a sentence (or two)."""
    kind = event["kind"]
    d = event.get("detail") or {}
    after = workflow.event_part(d, "after")
    before = workflow.event_part(d, "before")
    if kind == "site created":
        basis = (after.get("code_basis") or {}).get("name", "")
        return f"Made the site, checked to {basis}." if basis else "Made the site."
    if kind == "site settings changed":
        changed = [k.replace("_", " ") for k in after]
        what = ", ".join(changed) if changed else "settings"
        return f"Changed the site's {what}; the values before and after are in the data export."
    if kind == "member added":
        return f"Put {_user(after, words)} on the site as {after.get('role', '?')}."
    if kind == "member role changed":
        return (
            f"Changed {_user(after, words)}'s role from {before.get('role', '?')} to "
            f"{after.get('role', '?')}."
        )
    if kind == "member removed":
        return f"Took {_user(before, words)} off the site (was {before.get('role', '?')})."
    if kind in ("invitation", "invitation made"):
        return f"Invited someone to the site as {d.get('role', '?')} (the address is in the data export)."
    if kind == "invitation accepted":
        return f"Accepted an invitation to the site as {d.get('role', after.get('role', '?'))}."
    if kind == "invitation withdrawn":
        return "Withdrew an invitation."
    if kind == "bearing added":
        return f"Added the bearing to the schedule (design revision {after.get('revision', 1)})."
    if kind == "bearing revised":
        revision = d.get("revision") or {}
        return (
            f"Revised the design: revision {revision.get('before', '?')} → "
            f"{revision.get('after', '?')}.{_states(d)}"
        )
    if kind == "record received":
        text = f"Sent {words.record(d.get('record_uuid'))}"
        blocking = d.get("blocking")
        if blocking == 0:
            text += ", with no blocking review reason"
        elif isinstance(blocking, int):
            text += f", with {plural(blocking, 'blocking review reason')}"
        text += "."
        if d.get("late"):
            text += " It arrived after the release: kept, it moves nothing."
        elif d.get("newest") is False:
            text += " It was measured before the latest record, so it does not set the state."
        if d.get("design_revision") and d.get("design_revision") != d.get("bearing_revision"):
            text += f" Measured against design revision {d['design_revision']}."
        return text + _states(d)
    if kind == "photo received":
        return f"Added a photo to {words.record(d.get('record_uuid'))}."
    if kind == "decision":
        title = decision_title(d)
        signed = f", signed {d['engineer_name']}" if d.get("engineer_name") else ""
        return f"Decided: {title}{signed}. Reason: {_quoted(d.get('reason'))}.{_states(d)}"
    if kind == "release":
        return (
            f"Released for closing up, signed as {d.get('contractor_name', '?')}: "
            f"{_quoted(d.get('statement'))}.{_states(d)}"
        )
    if kind == "release refused":
        return f"Tried to release it; refused: {d.get('reason', 'not releasable')}"
    if kind == "reopening":
        return f"Reopened it. Reason: {_quoted(d.get('reason'))}.{_states(d)}"
    if kind == "refused":
        action = d.get("action") or "act"
        action = workflow.ACTION_WORDS.get(action, action)
        role = d.get("role")
        return f"Tried to {action}{f' as {role}' if role else ''}; refused."
    if kind == "phone verdict differed":
        differs = ", ".join(d.get("differs") or []) or "its verdict"
        return (
            f"The phone's own re-check differed from the server's ({differs}); the server's "
            "stands. Both are in the data export."
        )
    if kind == "engineer's sign-off":
        return f"Signed off the site record, signed as {d.get('engineer_name', '?')}."
    return f"{kind[:1].upper()}{kind[1:]}.{_states(d)}"
