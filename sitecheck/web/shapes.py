"""What each page's ``.json`` twin holds: one function per page, picking from the page's
context what the asker's role may see.

A page renders its whole context as HTML (the template decides what shows); its JSON twin
sends only what its shape picks, so a field added to a page for the template never reaches
a JSON reader by accident. A page without a shape answers no JSON at all (``json_answer``
raises), and ``tests/test_json_shapes.py`` walks every twin as every role looking for
addresses, secrets and internal fields.

Shapes name keys explicitly. People appear by name; account ids, e-mail addresses (save on
the members page, for whoever may invite) and the app's own workings never appear.
"""

from __future__ import annotations

from collections.abc import Callable

from sitecheck import workflow

Shape = Callable[[dict, "str | None"], dict]
SHAPES: dict[str, Shape] = {}

# Keys an event's free-form detail may carry that are for the audit trail in the data
# export, not for a page: who asked from where, and addresses.
_PRIVATE_DETAIL = frozenset({"email", "remote_addr", "to_addr", "token", "password"})


def shape(template: str):
    def register(fn: Shape) -> Shape:
        SHAPES[template] = fn
        return fn

    return register


def json_answer(template: str, context: dict, role: str | None) -> dict:
    """The JSON answer of a page for a role (None: a page not on one site)."""
    try:
        picker = SHAPES[template]
    except KeyError:
        raise LookupError(
            f"{template} has no declared JSON shape; add one in sitecheck/web/shapes.py "
            "before giving the page a .json address"
        ) from None
    return picker(context, role)


def pick(source: dict | None, *keys: str) -> dict | None:
    if source is None:
        return None
    return {key: source.get(key) for key in keys}


def pick_all(rows, *keys: str) -> list[dict | None]:
    return [pick(row, *keys) for row in rows or []]


def private_removed(value):
    """An event's before/after/detail without the keys that are not for pages."""
    if isinstance(value, dict):
        return {k: private_removed(v) for k, v in value.items() if k not in _PRIVATE_DETAIL}
    if isinstance(value, list):
        return [private_removed(v) for v in value]
    return value


_SITE = ("id", "name", "address", "basis", "created_at")


# --- pages not on one site ------------------------------------------------------------------


@shape("home.html")
def _home(c, _role):
    return {
        "sites": [
            {
                **pick(s, "id", "name", "address", "role"),
                "since": pick_all(s.get("since"), "kind", "count", "words", "references"),
            }
            for s in c["sites"]
        ],
        "queue_count": c["queue_count"],
        "invitations": pick_all(
            c.get("invitations"), "id", "site_name", "role", "invited_by_name", "expires_at"
        ),
    }


@shape("review/queue.html")
def _queue(c, _role):
    return {
        "items": pick_all(
            c["items"],
            "site_id",
            "site_name",
            "bearing_id",
            "reference",
            "location",
            "state",
            "utilisation",
            "has_record",
            "tier",
            "tier_words",
            "blocking",
            "first_reason",
            "reasons",
            "older_revision",
            "measured_at",
            "waiting_since",
            "new",
            "after_release",
            "worst_after_release",
        ),
        "waiting": c["waiting"],
        "is_engineer": c["is_engineer"],
        "sentence": c["sentence"],
        "filters": c["filters"],
        "site_options": c["site_options"],
        "reason_options": c["reason_options"],
        "listing": c["listing"].as_dict(),
    }


# --- a site and its schedule ------------------------------------------------------------------


@shape("sites/show.html")
def _site(c, role):
    return {
        "site": pick(c["site"], *_SITE),
        "role": role,
        "bearings": c["bearings"],  # rows the view already picked (_schedule_row)
        "counts": c["counts"],
        "failing_at_design": c["failing_at_design"],
        "since": pick_all(c["since"], "kind", "count", "words", "references"),
        "next_for_you": pick(c["next_for_you"], "count", "words", "url"),
        # Which page of the schedule this is, and the state and search that chose it.
        "listing": c["listing"].as_dict(),
        "chosen": c["chosen"],
    }


_BEARING = (
    "id",
    "reference",
    "location",
    "revision",
    "state",
    "state_changed_at",
    "design_input",
    "design_utilisation",
    "design_passed",
    "latest_record_uuid",
    "created_at",
)


@shape("sites/bearing.html")
def _bearing(c, role):
    return {
        "site": pick(c["site"], *_SITE),
        "role": role,
        "bearing": pick(c["bearing"], *_BEARING),
        "design": c["design"],
        "result": c["result"],
        "records": pick_all(
            c["records"],
            "uuid",
            "measured_at",
            "received_at",
            "inspector",
            "design_revision",
            "utilisation",
            "passed",
            "blocking",
            "older_revision",
            "late",
            "latest",
        ),
        "decisions": pick_all(
            c["decisions"], "id", "record_uuid", "kind", "reason", "engineer", "created_at"
        ),
        "releases": pick_all(
            c["releases"],
            "id",
            "record_uuid",
            "contractor",
            "contractor_name",
            "statement",
            "created_at",
        ),
        "reopenings": pick_all(c["reopenings"], "id", "engineer", "reason", "created_at"),
        "events": [
            {
                "at": e["at"],
                "kind": e["kind"],
                "by": e["by"],
                "detail": private_removed(e["detail"]),
                "summary": e["summary"],
            }
            for e in c["events"]
        ],
    }


@shape("sites/settings.html")
def _settings(c, role):
    return {
        "site": pick(c["site"], *_SITE),
        "role": role,
        "code_basis": c["code_basis"],
        "review_settings": c["review_settings"],
        "sources": c["sources"],
        "review_sources": c["review_sources"],
    }


@shape("sites/members.html")
def _members(c, role):
    may_invite = workflow.allowed(role, "invite")
    person = ("id", "name", "email", "role", "disabled", "since", "you")
    answer = {
        "site": pick(c["site"], *_SITE),
        "role": role,
        # Addresses and account ids are for whoever manages who is on the site.
        "members": pick_all(c["members"], *person)
        if may_invite
        else pick_all(c["members"], "name", "role", "you", "disabled"),
        "roles": c["roles"],
        "may_invite": may_invite,
        "error": c.get("error"),
    }
    if may_invite:
        answer["invitations"] = pick_all(
            c["invitations"], "id", "email", "role", "invited_by", "made_at", "expires_at", "mail"
        )
    return answer


# --- the engineer's review, release and the audit trail -----------------------------------------


_RECORD = (
    "uuid",
    "measured_at",
    "received_at",
    "inspector",
    "design_revision",
    "older_revision",
    "late",
    "drives_state",
    "utilisation",
    "passed",
    "blocking",
    "result",
    "reasons",
    "notes",
)


@shape("review/bearing.html")
def _review(c, role):
    return {
        "site": pick(c["site"], "id", "name"),
        "role": role,
        "bearing": c["bearing"],  # the view's summary (_bearing_summary)
        "design_result": c["design_result"],
        "latest": pick(c["latest"], *_RECORD),
        "remedy_hint": c["remedy_hint"],
        "comparison": c["comparison"],
        "checklist": c["checklist"],
        "photos": pick_all(
            c["photos"], "uuid", "captured_at", "width", "height", "thumb_url", "display_url"
        ),
        "records": pick_all(c["records"], *_RECORD),
        "history": pick_all(
            c["history"],
            "what",
            "title",
            "at",
            "who",
            "signed_as",
            "text",
            "record_uuid",
            "accepted_failing",
        ),
        "failing": c["failing"],
        "decision_kinds": c["decision_kinds"],
        "may_decide": c["may_decide"],
        "may_reopen": c["may_reopen"],
        "may_keep_release": c["may_keep_release"],
        "after_release": pick_all(
            c["after_release"],
            "id",
            "kind",
            "record_uuid",
            "received_at",
            "measured_at",
            "inspector",
            "utilisation",
            "passed",
            "blocking",
            "record_url",
            "uuid",
            "captured_at",
            "width",
            "height",
            "thumb_url",
            "display_url",
        ),
        "message": c["message"],
    }


@shape("release/site.html")
def _release(c, role):
    item = ("id", "reference", "location", "state", "since", "who_acts", "next_step")
    item += ("engineer_words",)
    return {
        "site": pick(c["site"], "id", "name"),
        "role": role,
        "may_release": c["may_release"],
        "confirm": c["confirm"],
        "ready": pick_all(c["ready"], *item, "selected"),
        "waiting": pick_all(c["waiting"], *item, "reason"),
        "released": pick_all(c["released"], *item, "released_at", "signed_as", "by", "statement"),
        "outcome": c["outcome"],
    }


@shape("release/history.html")
def _history(c, role):
    return {
        "site": pick(c["site"], "id", "name"),
        "role": role,
        "events": [
            {
                **pick(
                    e,
                    "id",
                    "at",
                    "who",
                    "what",
                    "bearing_id",
                    "bearing",
                    "state_before",
                    "state_after",
                    "changes",
                    "notes",
                ),
                "before": private_removed(e["before"]),
                "after": private_removed(e["after"]),
                "detail": private_removed(e["detail"]),
            }
            for e in c["events"]
        ],
        "pager": c["pager"],
    }


# --- the inspector's pages --------------------------------------------------------------------


@shape("inspect/bearings.html")
def _survey(c, _role):
    return {
        "site": pick(c["site"], *_SITE),
        "bearings": pick_all(
            c["bearings"],
            "id",
            "reference",
            "location",
            "state",
            "revision",
            "order",
            "design_passed",
            "record_url",
            "latest_record_url",
        ),
        "to_survey": c["to_survey"],
        "design_fails": c["design_fails"],
        "query": c["query"],
        "shown": c["shown"],
        "total": c["total"],
        "listing": c["listing"].as_dict(),
    }


@shape("inspect/result.html")
def _result(c, _role):
    return {
        "site": pick(c["site"], *_SITE),
        "bearing": c["bearing"],  # the view's summary
        "record": pick(
            c["record"],
            "uuid",
            "design_revision",
            "measured_at",
            "received_at",
            "measured_text",
            "received_text",
            "inspector",
            "notes",
            "measurements",
            "checklist",
            "kind",
        ),
        "not_measured": c["not_measured"],
        "result": c["result"],
        "reasons": c["reasons"],
        "blocking": c["blocking"],
        "flags": c["flags"],
        "comparison": c["comparison"],
        "checklist": c["checklist"],
        "photos": pick_all(
            c["photos"], "uuid", "width", "height", "captured_at", "display_url", "thumb_url"
        ),
        "record_again_url": c["record_again_url"],
    }


# --- the site record --------------------------------------------------------------------------

_JOB = (
    "id",
    "kind",
    "selection",
    "state",
    "running",
    "bearings_done",
    "bearings",
    "current",
    "percent",
    "status",
    "created_at",
    "updated_at",
    "finished_at",
    "created_text",
    "finished_text",
    "size_bytes",
    "error",
    "started_by_name",
    "download",
)


@shape("record/site.html")
def _record(c, role):
    return {
        "site": pick(c["site"], "id", "name", "address"),
        "role": role,
        "bearing_count": c["bearing_count"],
        "sign_off": c["sign_off"],
        "would_cover": c["would_cover"],
        "may_sign": c["may_sign"],
        "files": [
            {
                **pick(f, "kind", "label", "hint", "make", "progress"),
                "making": pick(f["making"], *_JOB),
                "current": pick(f["current"], *_JOB),
            }
            for f in c["files"]
        ],
    }


@shape("record/progress.html")
def _record_progress(c, _role):
    return {
        "site": pick(c["site"], "id", "name"),
        "kind": c["kind"],
        "label": c["label"],
        "part": c["part"],
        "job": pick(c["job"], *_JOB),
        "made": pick(c["made"], *_JOB),
        "message": c["message"],
        "make": c["make"],
        "refresh_seconds": c["refresh_seconds"],
    }
