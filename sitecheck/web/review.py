"""The engineer's review: the bearings waiting for a decision, and one bearing's design
against what was built, with the decision form.

The page shows what the store holds and what the core already worked out (both results are
stored with their traces); nothing is re-calculated here.
"""

from __future__ import annotations

from flask import Blueprint, current_app, flash, g, redirect, request, url_for

from sitecheck import services, store, workflow
from sitecheck.bearing.format import number, quantity
from sitecheck.bearing.review import FIELD_LABELS
from sitecheck.report.summary import CHECKLIST_QUESTIONS, decision_title
from sitecheck.web import get_db
from sitecheck.web.access import bearing_for, site_for
from sitecheck.web.decision_forms import (
    DECISION_HINTS,
    DECISION_LABELS,
    DecisionForm,
    KeepReleaseForm,
    ReopenForm,
)
from sitecheck.web.login import login_required
from sitecheck.web.pages import listing, looked_now, page_rule, render_page
from sitecheck.web.record_form import MEASUREMENT_FIELDS, SPECS, designed_value

bp = Blueprint("review", __name__)

QUEUE_PAGE = 50  # bearings the queue shows at once


# --- the queue ----------------------------------------------------------------------------------


@page_rule(bp, "/review")
@login_required
def queue():
    db = get_db()
    user_id = g.user["id"]
    mine = [s for s in store.sites_for_user(db, user_id) if s["role"] == workflow.ENGINEER]
    is_engineer = bool(mine)
    new = {
        row["bearing_id"]
        for row in store.since_last_looked(db, user_id=user_id)
        if row["kind"] == "to-decide"
    }
    everything = queue_items(db, user_id, new=new) if is_engineer else []
    chosen = _filters()
    matching = [i for i in everything if _passes(i, chosen)]
    # Most serious first over the whole queue; a page of what the filters keep is shown.
    page = listing(len(matching), QUEUE_PAGE)
    items = matching[page.offset : page.offset + page.size]
    if not is_engineer:
        sentence = "Only a site's engineer decides on bearings, and you are not the engineer on any site, so there is nothing here for you."
    elif not everything:
        sentence = "Nothing to decide: no bearing on your sites is waiting for the engineer."
    elif not items:
        sentence = "No bearing waiting for you matches these filters."
    else:
        sentence = None
    looked_now([s["id"] for s in mine])
    return render_page(
        "review/queue.html",
        items=items,
        waiting=len(everything),
        is_engineer=is_engineer,
        sentence=sentence,
        filters=chosen,
        site_options=_site_options(mine, everything),
        reason_options=_reason_options(everything),
        when=when,
        listing=page,
    )


def queue_items(db, user_id: int, *, new=frozenset()) -> list[dict]:
    """The bearings waiting for this engineer, most serious first: failing as built, then
    blocking reasons, then advisory only; within each, the highest utilisation, the most
    blocking reasons, then the longest waiting."""
    items = [_queue_item(r, new) for r in store.review_queue(db, user_id=user_id)]
    items.sort(
        key=lambda i: (
            i["tier"],
            -_worst(i),
            -i["blocking"],
            i["waiting_since"],
            i["bearing_id"],
        )
    )
    return items


def _worst(item: dict) -> float:
    """The utilisation a queue item is ordered by: the worst recorded after a release, else
    the latest record's; no capacity at all counts as the worst there is."""
    u = item["worst_after_release"] if item["after_release"] else item["utilisation"]
    return float("inf") if u is None else u


def _queue_item(row: dict, new) -> dict:
    reasons = workflow.ordered_reasons(row.get("reasons"))
    first = reasons[0] if reasons else None
    has_record = row["latest_record_uuid"] is not None
    tier = workflow.queue_tier(bool(row["passed"]) if has_record else None, reasons)
    worst_late = row["worst_after_release"]
    if row["state"] == workflow.RELEASED:
        # Released, with evidence recorded since: it waits as blocking, or as failing when
        # a record after the release fails (its utilisation is the one that counts).
        tier = workflow.FAILING if worst_late is not None and worst_late > 1 else workflow.BLOCKING
    return {
        "site_id": row["site_id"],
        "site_name": row["site_name"],
        "bearing_id": row["id"],
        "reference": row["reference"],
        "location": row["location"],
        "state": row["state"],
        "utilisation": row["utilisation"],
        "has_record": has_record,
        "tier": tier,
        "tier_words": workflow.TIER_WORDS[tier],
        "blocking": row["blocking"] or 0,
        "first_reason": first["sentence"] if first else None,
        "reasons": [
            {"code": r["code"], "severity": r["severity"], "sentence": r["sentence"]}
            for r in reasons
        ],
        "older_revision": bool(row["older_revision"]),
        "measured_at": row["measured_at"],
        # Released bearings wait from the first thing recorded after their release.
        "waiting_since": row["first_after_release"] or row["state_changed_at"],
        # Released, and something was recorded since: the engineer reopens or keeps it.
        "after_release": _after_release_counts(row),
        "worst_after_release": row["worst_after_release"],
        "new": row["id"] in new,
    }


def _after_release_counts(row: dict) -> dict | None:
    records, photos = row["records_after_release"], row["photos_after_release"]
    if not records and not photos:
        return None
    parts = [
        f"{n} {word}{'' if n == 1 else 's'}"
        for n, word in ((records, "record"), (photos, "photo"))
        if n
    ]
    return {"records": records or 0, "photos": photos or 0, "text": " and ".join(parts)}


def _filters() -> dict:
    """The queue's filters from the address: ``site`` (an id) and ``reason`` (a code)."""
    return {
        key: value for key in ("site", "reason") if (value := (request.args.get(key) or "").strip())
    }


def _passes(item: dict, chosen: dict) -> bool:
    if chosen.get("site") and item["site_id"] != chosen["site"]:
        return False
    return not chosen.get("reason") or any(r["code"] == chosen["reason"] for r in item["reasons"])


def _site_options(mine: list[dict], items: list[dict]) -> list[dict]:
    return [
        {
            "value": s["id"],
            "label": s["name"],
            "count": sum(1 for i in items if i["site_id"] == s["id"]),
        }
        for s in mine
    ]


def _reason_options(items: list[dict]) -> list[dict]:
    counts: dict[str, int] = {}
    for item in items:
        for code in dict.fromkeys(r["code"] for r in item["reasons"]):
            counts[code] = counts.get(code, 0) + 1
    return [
        {"value": code, "label": reason_name(code), "count": n}
        for code, n in sorted(counts.items(), key=lambda kv: (-kv[1], reason_name(kv[0])))
    ]


# Short names of the review reasons' codes, for the queue's filter (each reason's own
# sentence says the rest).
REASON_NAMES = {
    "check-fails": "A check fails as built",
    "not-measured": "Not measured",
    "could-not-measure": "Could not be measured",
    "above-threshold": "Above the review threshold",
    "utilisation-rise": "Utilisation rose",
    "padstone-missing": "Padstone missing",
    "padstone-added": "Padstone added",
    "hollow-units": "Hollow units built",
    "spreader-lost": "No longer a spreader",
    "masonry-weaker": "Weaker masonry",
    "masonry-unverified": "Masonry not verified",
    "masonry-changed": "Masonry changed",
    "concrete-weaker": "Weaker concrete",
    "not-bedded": "Padstone not bedded",
    "packing-thick": "Thick packing",
    "cracks": "Cracks near the bearing",
    "cut-units": "Cut or hollow units",
    "not-level": "Padstone not level",
    "bearing-type-basis": "Bearing type changed",
    "older-design-revision": "Older design revision",
    "clock-ahead": "Phone clock ahead",
    "position-along": "Beam moved along",
    "position-across": "Beam moved across",
}


def reason_name(code: str) -> str:
    if code in REASON_NAMES:
        return REASON_NAMES[code]
    if code.endswith("-off"):
        return code.removesuffix("-off").replace("-", " ").capitalize() + " off the design"
    return code.replace("-", " ").capitalize()


def next_to_decide(db, user_id: int, chosen: dict, *, after: str) -> dict | None:
    """The next bearing for this engineer within the same filters, the one just decided
    (``after``) left out."""
    return next(
        (i for i in queue_items(db, user_id) if i["bearing_id"] != after and _passes(i, chosen)),
        None,
    )


# --- one bearing --------------------------------------------------------------------------------


@page_rule(bp, "/sites/<site_id>/bearings/<bearing_id>/review")
@login_required
def bearing(site_id, bearing_id):
    site, _role = site_for(site_id, "view")
    return bearing_page(site, bearing_for(site, bearing_id))


@bp.post("/sites/<site_id>/bearings/<bearing_id>/decision")
@login_required
def decide(site_id, bearing_id):
    site, _role = site_for(site_id, "decide")
    found = bearing_for(site, bearing_id)
    form = DecisionForm()
    if not workflow.can_decide(found["state"]):
        # The form is no longer on the page, so its field errors would be invisible.
        return bearing_page(site, found, message=_nothing_to_decide(found), status=409)
    if not form.validate_on_submit():
        return bearing_page(site, found, decision_form=form, status=400)
    # Decide on what the engineer saw: if the state or the latest record moved since, the
    # store refuses with StaleState and nothing is kept.
    seen = dict(found, state=form.seen_state.data, latest_record_uuid=form.record_uuid.data.lower())
    db = get_db()
    try:
        services.decide(
            db,
            site=site,
            bearing=seen,
            kind=form.kind.data,
            reason=form.reason.data,
            engineer_id=g.user["id"],
            engineer_name=g.user["name"],
            confirmed_failing=bool(form.confirm_failing.data),
        )
    except services.AcceptFailingRefused as refused:
        # The engineer's words stay in the box; the message sits by the field to mend.
        getattr(form, refused.field).errors = [str(refused)]
        return bearing_page(site, found, decision_form=form, status=400)
    except (store.StaleState, workflow.WorkflowError) as error:
        fresh = bearing_for(site, bearing_id)
        keep = DecisionForm(formdata=None, kind=form.kind.data, reason=form.reason.data)
        return bearing_page(site, fresh, decision_form=keep, message=as_sentence(error), status=409)
    now = bearing_for(site, bearing_id)
    done = (
        f"Decision kept: {DECISION_LABELS[form.kind.data].lower()}. "
        f"Bearing {now['reference']} is now '{now['state']}'."
    )
    # Straight on to the next bearing waiting for this engineer, within the same filters.
    chosen = _filters()
    following = next_to_decide(db, g.user["id"], chosen, after=bearing_id)
    if following is None:
        left = "with these filters " if chosen else ""
        flash(f"{done} Nothing else waits for your decision {left}now.")
        return redirect(url_for("review.queue", **chosen))
    flash(f"{done} Next to decide: {following['reference']} ({following['site_name']}).")
    return redirect(
        url_for(
            "review.bearing",
            site_id=following["site_id"],
            bearing_id=following["bearing_id"],
            **chosen,
        )
    )


def _nothing_to_decide(b: dict) -> str:
    if b["state"] == workflow.RELEASED:
        return (
            f"Bearing {b['reference']} is released and locked: there is nothing to decide. "
            "Reopen it first, with a reason, if it must be looked at again."
        )
    return f"Bearing {b['reference']} is '{b['state']}': there is nothing to decide until an as-built record arrives."


def bearing_page(
    site: dict,
    b: dict,
    *,
    decision_form: DecisionForm | None = None,
    reopen_form: ReopenForm | None = None,
    keep_form: KeepReleaseForm | None = None,
    message: str | None = None,
    status: int = 200,
):
    """The review page of one bearing; the release blueprint renders it too (reopening,
    keeping a release)."""
    db = get_db()
    records = store.records_for_bearing(db, site_id=site["id"], bearing_id=b["id"])
    after_release = _after_release(
        site["id"], store.after_release_evidence(db, site_id=site["id"], bearing_id=b["id"])
    )
    latest = next((r for r in records if r["uuid"] == b["latest_record_uuid"]), None)
    names = _Names(db, site["id"])

    decision_form, reopen_form, keep_form = _page_forms(
        b, latest, after_release, decision_form, reopen_form, keep_form
    )
    may_decide, may_reopen, may_keep = (
        decision_form is not None,
        reopen_form is not None,
        keep_form is not None,
    )

    with_result = store.get_bearing(db, site_id=site["id"], bearing_id=b["id"], with_result=True)
    assert with_result is not None  # b was read from this site a moment ago
    photos = []
    if latest is not None:
        photos = [
            _photo(site["id"], p)
            for p in store.photos_for_record(db, site_id=site["id"], record_uuid=latest["uuid"])
        ]

    return render_page(
        "review/bearing.html",
        status=status,
        filters=_filters(),
        failing=services.failing_as_built(latest),
        sentence_rule=workflow.FULL_SENTENCE_WORDS,
        site={"id": site["id"], "name": site["name"]},
        role=g.role,
        bearing=_bearing_summary(b),
        design_result=with_result["design_result"],
        latest=_record(latest, names, b) if latest else None,
        remedy_hint=_remedy_hint(site, b, latest),
        comparison=_compare(b["design_input"], latest["measurements"]) if latest else [],
        checklist=_checklist(latest["checklist"]) if latest else [],
        photos=photos,
        photos_viewable="inspect.photo" in current_app.view_functions,
        records=[_record(r, names, b) for r in records],
        history=bearing_history(db, site["id"], b["id"], names),
        decision_kinds=[
            {"kind": k, "label": DECISION_LABELS[k], "hint": DECISION_HINTS[k]}
            for k in workflow.DECISION_KINDS
        ],
        # Booleans for JSON readers: the forms themselves are not sent as data.
        may_decide=may_decide,
        may_reopen=may_reopen,
        may_keep_release=may_keep,
        after_release=after_release,
        decision_form=decision_form,
        reopen_form=reopen_form,
        keep_form=keep_form,
        message=message,
        when=when,
    )


def _page_forms(
    b: dict,
    latest: dict | None,
    after_release: list[dict],
    decision_form: DecisionForm | None,
    reopen_form: ReopenForm | None,
    keep_form: KeepReleaseForm | None,
) -> tuple[DecisionForm | None, ReopenForm | None, KeepReleaseForm | None]:
    """The forms this person may use on the page now (None for each they may not), kept
    as typed when given back after a refusal."""
    may_decide = (
        workflow.allowed(g.role, "decide")
        and workflow.can_decide(b["state"])
        and latest is not None
    )
    if may_decide:
        assert latest is not None  # may_decide asks for it
        if decision_form is None:
            decision_form = DecisionForm(formdata=None)
        # Always the values now on the page, even when the engineer's words are kept.
        decision_form.record_uuid.data = latest["uuid"]
        decision_form.seen_state.data = b["state"]
    may_reopen = workflow.allowed(g.role, "reopen") and b["state"] == workflow.RELEASED
    if may_reopen and reopen_form is None:
        reopen_form = ReopenForm(formdata=None)
    may_keep = may_reopen and bool(after_release)
    if may_keep:
        keep_form = keep_form or KeepReleaseForm(formdata=None)
        # Always the newest evidence now on the page, even when the engineer's words are kept.
        keep_form.seen_up_to.data = str(after_release[-1]["id"])
    return (
        decision_form if may_decide else None,
        reopen_form if may_reopen else None,
        keep_form if may_keep else None,
    )


def _after_release(site_id: str, rows: list[dict]) -> list[dict]:
    """What was recorded after the release and waits for the engineer, oldest first."""
    names = _Names(get_db(), site_id)
    out = []
    for e in rows:
        item = {
            "id": e["id"],
            "kind": "photo" if e["photo_uuid"] else "record",
            "record_uuid": e["record_uuid"],
            "received_at": e["received_at"],
            "measured_at": e["measured_at"],
            "inspector": names(e["inspector_id"]),
            "utilisation": e["utilisation"],
            "passed": bool(e["passed"]),
            "blocking": e["blocking"],
            "record_url": url_for("inspect.result", site_id=site_id, record_uuid=e["record_uuid"])
            if "inspect.result" in current_app.view_functions
            else None,
        }
        if e["photo_uuid"]:
            item |= _photo(site_id, {**e, "uuid": e["photo_uuid"]})
        out.append(item)
    return out


def _remedy_hint(site: dict, b: dict, latest: dict | None) -> str | None:
    if latest is None:
        return None
    hint = services.remedy_for_record(site, b, latest)
    return hint.describe() if hint else None


def _bearing_summary(b: dict) -> dict:
    return {
        "id": b["id"],
        "reference": b["reference"],
        "location": b["location"],
        "state": b["state"],
        "state_changed_at": b["state_changed_at"],
        "revision": b["revision"],
        "design_utilisation": b["design_utilisation"],
        "design_passed": b["design_passed"],
        "latest_record_uuid": b["latest_record_uuid"],
    }


def _record(r: dict, names: _Names, b: dict) -> dict:
    return {
        "uuid": r["uuid"],
        "measured_at": r["measured_at"],
        "received_at": r["received_at"],
        "inspector": names(r["inspector_id"]),
        "design_revision": r["design_revision"],
        "older_revision": bool(r["older_revision"]),
        "late": bool(r["late"]),
        "drives_state": r["uuid"] == b["latest_record_uuid"],
        "utilisation": r["utilisation"],
        "passed": bool(r["passed"]),
        "blocking": r["blocking"],
        "result": r["result"],
        "reasons": r["reasons"],
        "notes": r["notes"],
    }


def _photo(site_id: str, p: dict) -> dict:
    out = {"uuid": p["uuid"], "captured_at": p["captured_at"], "width": p["width"]}
    out["height"] = p["height"]
    if "inspect.photo" in current_app.view_functions:
        out["thumb_url"] = url_for(
            "inspect.photo", site_id=site_id, photo_uuid=p["uuid"], size="thumb"
        )
        out["display_url"] = url_for(
            "inspect.photo", site_id=site_id, photo_uuid=p["uuid"], size="display"
        )
    return out


# Each measured value → where its design value sits in the stored design input, and its unit.
# A missing padstone reads as "none" so that "padstone present" compares like the others.
_LABELS = FIELD_LABELS | {
    "offset_along": "Beam offset along the wall",
    "offset_across": "Beam offset across the wall",
    "padstone_concrete": "Padstone concrete",
}


def _compare(design_input: dict, measurements: dict) -> list[dict]:
    """One row per measured value: design | as built | difference, in the form's order
    (the as-built form owns which design value each measured field stands against)."""
    rows = []
    for name in MEASUREMENT_FIELDS:
        built = (measurements or {}).get(name)
        if built is None:
            continue  # not measured: the design value stands in the re-check
        rows.append(_compare_row(name, SPECS[name].unit, designed_value(design_input, name), built))
    return rows


def _compare_row(name: str, unit: str, designed, built) -> dict:
    numeric = all(
        isinstance(v, (int, float)) and not isinstance(v, bool) for v in (designed, built)
    )
    if numeric:
        diff = built - designed
        changed = abs(diff) > 1e-9
        difference = f"{number(diff, plus=True)} {unit}".strip() if changed else "0"
    else:
        diff = None
        changed = designed != built
        difference = "differs" if changed else "same"
    return {
        "field": name,
        "label": _LABELS.get(name, name.replace("_", " ")),
        "unit": unit,
        "design": designed,
        "as_built": built,
        "design_text": _value_text(designed, unit),
        "as_built_text": _value_text(built, unit),
        "difference": diff,
        "difference_text": difference,
        "changed": changed,
    }


def _value_text(value, unit: str) -> str:
    if value is None:
        return "none"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return quantity(value, unit)
    return f"{value} {unit}".strip()


_CHECKLIST = CHECKLIST_QUESTIONS


def _checklist(answers: dict) -> list[dict]:
    answers = answers or {}
    return [
        {
            "item": key,
            "question": question,
            "answer": answers.get(key),
            "answer_text": "not looked at"
            if answers.get(key) is None
            else _value_text(answers[key], unit),
        }
        for key, question, unit in _CHECKLIST
    ]


# --- shared by the release blueprint --------------------------------------------------------------


def bearing_history(db, site_id: str, bearing_id: str, names: _Names) -> list[dict]:
    """Decisions, releases, kept releases and reopenings of one bearing, newest first."""
    entries = []
    for d in store.decisions_for(db, site_id=site_id, bearing_id=bearing_id):
        entries.append(
            {
                "what": "decision",
                "title": decision_title(d),
                "at": d["created_at"],
                "who": d.get("engineer_name") or names(d["engineer_id"]),
                "text": d["reason"],
                "record_uuid": d["record_uuid"],
                "accepted_failing": bool(d.get("accepted_failing")),
            }
        )
    for r in store.releases_for(db, site_id=site_id, bearing_id=bearing_id):
        entries.append(
            {
                "what": "release",
                "title": "Released for closing up",
                "at": r["created_at"],
                "who": names(r["contractor_id"]),
                "signed_as": r["contractor_name"],
                "text": r["statement"],
                "record_uuid": r["record_uuid"],
            }
        )
    for k in store.releases_kept_for(db, site_id=site_id, bearing_id=bearing_id):
        entries.append(
            {
                "what": "release kept",
                "title": "Release kept after what was recorded since",
                "at": k["created_at"],
                "who": names(k["engineer_id"]),
                "text": k["reason"],
            }
        )
    for o in store.reopenings_for(db, site_id=site_id, bearing_id=bearing_id):
        entries.append(
            {
                "what": "reopening",
                "title": "Reopened",
                "at": o["created_at"],
                "who": names(o["engineer_id"]),
                "text": o["reason"],
            }
        )
    entries.sort(key=lambda e: e["at"], reverse=True)
    return entries


def engineer_words(decision: dict | None) -> dict | None:
    """The engineer's words of a decision (from ``store.latest_decisions``, which names the
    signer), as the release list, the inspector's form and the site pack show them."""
    if decision is None:
        return None
    return {
        "kind": decision["kind"],
        "title": decision_title(decision),
        "text": decision["reason"],
        "by": decision["signed_by"],
        "at": decision["created_at"],
    }


class _Names:
    """People's names by id, looked up once per page. Someone no longer on the site is
    still named: what they did stays on the record."""

    def __init__(self, db, site_id: str):
        self._db = db
        self._names = {m["id"]: m["name"] for m in store.members_of(db, site_id=site_id)}

    def __call__(self, user_id: int | None) -> str:
        if user_id is None:
            return "sitecheck"
        if user_id not in self._names:
            user = store.get_user_by_id(self._db, user_id)
            self._names[user_id] = user["name"] if user else f"person {user_id}"
        return self._names[user_id]


def site_names(db, site_id: str) -> _Names:
    return _Names(db, site_id)


def when(ts: str | None) -> str:
    """A stored UTC time as people read it; the page says UTC so no one guesses the zone."""
    if not ts:
        return "—"
    return f"{ts[:10]} {ts[11:16]} UTC"


def as_sentence(error: Exception) -> str:
    text = str(error).strip()
    return text if text.endswith((".", "!", "?")) else text + "."
