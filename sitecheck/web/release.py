"""Release for closing up (the hold point), reopening or keeping a release after later
evidence, and a site's audit trail.

Each bearing is released in its own transaction: one refused bearing (its state changed
meanwhile) leaves the others released, and the page says which is which.
"""

from __future__ import annotations

from flask import Blueprint, abort, flash, g, redirect, request, url_for

from sitecheck import services, store, workflow
from sitecheck.web import get_db
from sitecheck.web.access import ACTION_WORDS, bearing_for, site_for
from sitecheck.web.decision_forms import (
    DECISION_LABELS,
    KeepReleaseForm,
    ReleaseForm,
    ReopenForm,
)
from sitecheck.web.login import login_required
from sitecheck.web.pages import looked_now, page_rule, render_page, wants_json
from sitecheck.web.review import (
    as_sentence,
    bearing_page,
    decision_title,
    engineer_words,
    site_names,
    when,
)

bp = Blueprint("release", __name__)

PER_PAGE = 200
# Deeper pages would read every newer event first; nobody pages this far by hand.
MAX_PAGE = 500


@page_rule(bp, "/sites/<site_id>/release", methods=["GET", "POST"])
@login_required
def site(site_id):
    if request.method == "POST":
        return _release(site_id)
    found, _role = site_for(site_id, "view")
    looked_now([found["id"]])
    return _release_page(found, ReleaseForm(formdata=None))


def _release(site_id: str):
    found, _role = site_for(site_id, "release")
    db = get_db()
    form = ReleaseForm()
    if not form.validate_on_submit():
        return _release_page(found, form, status=400)
    ids = list(dict.fromkeys(v for v in form.bearings.data or () if v))
    # Every id is resolved before anything is released: an id from another site stops the
    # whole request (404) rather than leaving it half done.
    chosen = [bearing_for(found, bearing_id) for bearing_id in ids]
    if form.confirmed.data != "yes":
        # Complete, so now (and only now) the contractor sees exactly what they sign.
        confirm = {
            "bearings": [{"id": b["id"], "reference": b["reference"]} for b in chosen],
            "contractor_name": form.contractor_name.data,
            "statement": form.statement.data,
        }
        return _release_page(found, form, confirm=confirm)
    released, refused = [], []
    for b in chosen:
        try:
            services.release(
                db,
                site=found,
                bearing=b,
                contractor_id=g.user["id"],
                # Both required: a form that validated holds text in each.
                contractor_name=form.contractor_name.data or "",
                statement=form.statement.data or "",
            )
        except (workflow.WorkflowError, store.StaleState, store.NotFound) as error:
            refused.append(
                {"id": b["id"], "reference": b["reference"], "reason": as_sentence(error)}
            )
        else:
            released.append({"id": b["id"], "reference": b["reference"]})
    outcome = {"released": released, "refused": refused}
    fresh = ReleaseForm(
        formdata=None,
        contractor_name=form.contractor_name.data,
        statement=form.statement.data,
    )
    # Partly done is still done: 409 only when nothing at all could be released.
    status = 409 if refused and not released else 200
    return _release_page(found, fresh, outcome=outcome, status=status)


def _release_page(
    found: dict,
    form: ReleaseForm,
    *,
    outcome: dict | None = None,
    confirm: dict | None = None,
    status=200,
):
    db = get_db()
    names = site_names(db, found["id"])
    ready, waiting, done = [], [], []
    selected = set(form.bearings.data or [])
    decisions = store.latest_decisions(db, site_id=found["id"])
    for b in store.list_bearings(db, site_id=found["id"]):
        actor, next_step = workflow.who_acts(b["state"])
        item = {
            "id": b["id"],
            "reference": b["reference"],
            "location": b["location"],
            "state": b["state"],
            "since": b["state_changed_at"],
            "who_acts": actor,
            "next_step": next_step,
            "engineer_words": engineer_words(
                workflow.standing_decision(b["state"], decisions.get(b["id"]))
            ),
        }
        if workflow.can_release(b["state"]):
            item["selected"] = b["id"] in selected
            ready.append(item)
        elif b["state"] == workflow.RELEASED:
            last = store.releases_for(db, site_id=found["id"], bearing_id=b["id"])[-1:]
            if last:
                r = last[0]
                item |= {
                    "released_at": r["created_at"],
                    "signed_as": r["contractor_name"],
                    "by": names(r["contractor_id"]),
                    "statement": r["statement"],
                }
            done.append(item)
        else:
            words = item["engineer_words"]
            item["reason"] = workflow.release_refusal(
                b["state"],
                reference=b["reference"],
                measure_again=words is not None and b["state"] == workflow.AWAITING_SURVEY,
            )
            waiting.append(item)
    return render_page(
        "release/site.html",
        status=status,
        site={"id": found["id"], "name": found["name"]},
        role=g.role,
        may_release=workflow.allowed(g.role, "release"),
        ready=ready,
        waiting=waiting,
        released=done,
        outcome=outcome,
        confirm=confirm,
        form=form,
        when=when,
    )


@bp.post("/sites/<site_id>/bearings/<bearing_id>/reopen")
@login_required
def reopen(site_id, bearing_id):
    found, role = site_for(site_id, "reopen")
    b = bearing_for(found, bearing_id)
    if b["state"] != workflow.RELEASED:
        # Checked before the form: the reopen form is not on this bearing's page, so its
        # field errors would have nowhere to show.
        message = f"Only a released bearing can be reopened; {b['reference']} is '{b['state']}'."
        return bearing_page(found, b, message=message, status=409)
    form = ReopenForm()
    if not form.validate_on_submit():
        return bearing_page(found, b, reopen_form=form, status=400)
    try:
        services.reopen(
            get_db(),
            site=found,
            bearing=b,
            role=role,
            reason=form.reason.data,
            engineer_id=g.user["id"],
        )
    except (workflow.WorkflowError, store.StaleState) as error:
        fresh = bearing_for(found, bearing_id)
        return bearing_page(found, fresh, message=as_sentence(error), status=409)
    now = bearing_for(found, bearing_id)
    flash(f"Bearing {now['reference']} is reopened and now '{now['state']}'.")
    return redirect(url_for("review.bearing", site_id=found["id"], bearing_id=bearing_id))


@bp.post("/sites/<site_id>/bearings/<bearing_id>/keep-release")
@login_required
def keep_release(site_id, bearing_id):
    """The engineer has looked at what was recorded after the release, and the release
    stands; what was listed leaves the queue, and the reason stays on the record."""
    found, role = site_for(site_id, "reopen")
    b = bearing_for(found, bearing_id)
    if b["state"] != workflow.RELEASED:
        message = (
            f"Only a released bearing has a release to keep; {b['reference']} is '{b['state']}'."
        )
        return bearing_page(found, b, message=message, status=409)
    form = KeepReleaseForm()
    if not form.validate_on_submit():
        return bearing_page(found, b, keep_form=form, status=400)
    try:
        services.keep_release(
            get_db(),
            site=found,
            bearing=b,
            role=role,
            reason=form.reason.data,
            seen_up_to=int(form.seen_up_to.data),
            engineer_id=g.user["id"],
        )
    except (workflow.WorkflowError, store.StaleState) as error:
        fresh = bearing_for(found, bearing_id)
        keep = KeepReleaseForm(formdata=None, reason=form.reason.data)
        return bearing_page(found, fresh, keep_form=keep, message=as_sentence(error), status=409)
    flash(
        f"The release of bearing {b['reference']} is kept; what was recorded after it stays "
        "on the record with your reason."
    )
    return redirect(url_for("review.bearing", site_id=found["id"], bearing_id=bearing_id))


@page_rule(bp, "/sites/<site_id>/history")
@login_required
def history(site_id):
    found, _role = site_for(site_id, "view")
    page = request.args.get("page", 1, type=int)
    if page < 1 or page > MAX_PAGE:
        abort(404, description=f"There is no page {page} of this site's history.")
    db = get_db()
    # events_for has no offset: read up to the end of this page, plus one to know if more follow.
    rows = store.events_for(db, site_id=found["id"], limit=page * PER_PAGE + 1)
    has_next = len(rows) > page * PER_PAGE
    rows = rows[(page - 1) * PER_PAGE : page * PER_PAGE]
    if page > 1 and not rows:
        abort(404, description=f"There is no page {page} of this site's history.")
    names = site_names(db, found["id"])
    references = {b["id"]: b["reference"] for b in store.list_bearings(db, site_id=found["id"])}
    events = [_event(e, names, references) for e in rows]
    pager = {
        "page": page,
        "per_page": PER_PAGE,
        "has_next": has_next,
        "next": _page_url(found["id"], page + 1) if has_next else None,
        "previous": _page_url(found["id"], page - 1) if page > 1 else None,
    }
    return render_page(
        "release/history.html",
        site={"id": found["id"], "name": found["name"]},
        role=g.role,
        events=events,
        pager=pager,
        when=when,
        is_state=lambda state: state in workflow.STATES,
    )


def _page_url(site_id: str, page: int) -> str:
    endpoint = "release.history_json" if wants_json() else "release.history"
    return url_for(endpoint, site_id=site_id, page=page)


def _event(e: dict, names, references: dict) -> dict:
    detail = e["detail"] or {}
    before = detail.get("before")
    after = detail.get("after")
    extra = {k: v for k, v in detail.items() if k not in ("before", "after")}
    return {
        "id": e["id"],
        "at": e["at"],
        "who": names(e["user_id"]),
        "what": e["kind"],
        "bearing_id": e["bearing_id"],
        "bearing": references.get(e["bearing_id"]) if e["bearing_id"] else None,
        "state_before": before.get("state") if isinstance(before, dict) else None,
        "state_after": after.get("state") if isinstance(after, dict) else None,
        "changes": _changes(before, after),
        "notes": _notes(extra),
        "before": before,
        "after": after,
        "detail": extra,
    }


# The parts of an event's detail worth a line on a phone; the rest is in the JSON and the
# data export.
_NOTE_LABELS = {
    "kind": "decision",
    "reason": "reason",
    "engineer_name": "signed as",
    "contractor_name": "signed as",
    "statement": "statement",
    "action": "tried to",
    "role": "as",
    "blocking": "blocking reasons",
    "revision": "design revision",
    "email": "e-mail",
}


def _notes(extra: dict) -> list[str]:
    lines = []
    for key, label in _NOTE_LABELS.items():
        if key not in extra:
            continue
        value = extra[key]
        if key == "kind":
            value = DECISION_LABELS.get(value, value)
        elif key == "action":
            value = ACTION_WORDS.get(value, value)
        lines.append(f"{label}: {_short(value)}")
    failing = extra.get("accepted_failing")
    if isinstance(failing, dict):
        lines.insert(0, decision_title({"kind": "accept", "accepted_failing": failing}).lower())
    if extra.get("late") or extra.get("after_release"):
        lines.append("recorded after release: kept and listed for the engineer; it moves nothing")
    elif extra.get("newest") is False:
        lines.append("measured before the latest record; it does not drive the state")
    return lines


_CHANGE_LABELS = {"latest_record_uuid": "latest record"}


def _changes(before, after) -> list[str]:
    """What moved, as short lines; the state is shown apart, with its badge."""
    b = before if isinstance(before, dict) else {}
    a = after if isinstance(after, dict) else {}
    if not isinstance(before, dict) and before is not None:
        b = {"value": before}
    if not isinstance(after, dict) and after is not None:
        a = {"value": after}
    lines = []
    for key in dict.fromkeys([*b, *a]):
        if key == "state" or b.get(key) == a.get(key):
            continue
        label = _CHANGE_LABELS.get(key, key.replace("_", " "))
        if key in b and key in a:
            lines.append(f"{label}: {_short(b[key])} → {_short(a[key])}")
        elif key in a:
            lines.append(f"{label}: {_short(a[key])}")
        else:
            lines.append(f"{label}: {_short(b[key])} → none")
    return lines


def _short(value) -> str:
    if value is None:
        return "none"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, dict) and set(value) == {"before", "after"}:
        return f"{_short(value['before'])} → {_short(value['after'])}"
    if isinstance(value, (dict, list)):
        return "(see the data export)"
    text = str(value)
    if len(text) == 36 and text.count("-") == 4:
        return text[:8]  # a record's UUID: the first block is enough to tell records apart
    return text if len(text) <= 240 else text[:239] + "…"
