"""Notices: each person learns, without looking, that a bearing is in their hands.

What concerns whom (the kinds below) is decided here from the audit trail, so every way a
bearing can move (a record from the phone or the form, a decision, a reopening, a revised
design) gives its notices without that code knowing about them. The mail sender's thread
runs :func:`make_messages` before each delivery round:

1. the events since the last round become ``notices`` rows, one per person concerned
   (never the person who acted), unless that person turned the kind off;
2. each person's waiting notices go into one message, grouped by site, once their last
   notice message is at least a quarter of an hour old: the first notice after a quiet
   spell goes at once, and any that follow within the quarter hour wait and go together
   in the next message. A notice whose bearing has moved on meanwhile (decided, measured,
   released) is dropped rather than sent stale.

Messages are plain text with a simple HTML copy, hold only what the person may see on
that site, no photos, and link to the pages built on SITECHECK_BASE_URL. With no mail
configured nothing here runs: "since you last looked" in the app still shows the same.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime
from html import escape

from sitecheck import store, workflow
from sitecheck.bearing.format import utilisation as _utilisation
from sitecheck.cautions import CAUTION

TO_DECIDE = "to-decide"
RELEASABLE = "releasable"
REMEDIAL = "remedial"
MEASURE_AGAIN = "measure-again"


@dataclass(frozen=True)
class Kind:
    code: str
    roles: tuple[str, ...]
    setting: str  # on the person's notices page
    heading: str  # in a message and on the sites list
    since: str  # "since you last looked", counted: "2 new to decide"


KINDS = {
    k.code: k
    for k in (
        Kind(
            TO_DECIDE,
            (workflow.ENGINEER,),
            "Bearings newly needing my decision, on sites where I am the engineer",
            "New to decide",
            "new to decide",
        ),
        Kind(
            RELEASABLE,
            (workflow.CONTRACTOR,),
            "Bearings that may now be closed up, on sites where I am the contractor",
            "May now be closed up",
            "newly releasable",
        ),
        Kind(
            REMEDIAL,
            (workflow.CONTRACTOR, workflow.INSPECTOR),
            "Remedial work the engineer instructs, with the engineer's words",
            "Remedial work instructed",
            "remedial work instructed",
        ),
        Kind(
            MEASURE_AGAIN,
            (workflow.INSPECTOR,),
            "Bearings the engineer asks to be measured again, with the engineer's words",
            "To measure again",
            "to measure again",
        ),
    )
}


def kinds_for_roles(roles) -> list[Kind]:
    """The kinds a person with these roles (on any of their sites) can receive."""
    roles = set(roles)
    return [k for k in KINDS.values() if roles & set(k.roles)]


def kinds_for_person(db, user_id: int) -> list[Kind]:
    """The kinds of the roles the person holds on any of their sites."""
    return kinds_for_roles({s["role"] for s in store.sites_for_user(db, user_id)})


def keep_choices(db, *, user_id: int, on) -> None:
    """Which of the person's kinds come by e-mail: those in ``on``; the rest are off."""
    mine = [k.code for k in kinds_for_person(db, user_id)]
    on = set(on)
    store.set_notice_kinds_off(
        db, user_id=user_id, kinds=[code for code in mine if code not in on], known=mine
    )


def looked(db, *, user_id: int, site_ids) -> None:
    """The person has just seen these sites' bearings: "since you last looked" starts
    again for each."""
    store.looked(db, user_id=user_id, site_ids=site_ids)


# --- who an event concerns -----------------------------------------------------------------------


def notices_for_event(event: dict, members: list[dict]):
    """(user_id, kind, words, by_user_id) for each person this event puts a bearing in the
    hands of. ``members`` are the site's people with their ``role``."""
    detail = event.get("detail") or {}
    before = detail.get("before") if isinstance(detail.get("before"), dict) else {}
    after = detail.get("after") if isinstance(detail.get("after"), dict) else {}
    was, now = before.get("state"), after.get("state")
    actor = event.get("user_id")
    wanted: list[tuple[str, str]] = []  # (kind, words)
    if now == workflow.ENGINEER_TO_DECIDE and was != now:
        wanted.append((TO_DECIDE, ""))
    elif event.get("kind") in ("record received", "photo received") and (
        detail.get("late") or detail.get("after_release")
    ):
        # Evidence for a released bearing: the release stands, but the engineer must look.
        wanted.append((TO_DECIDE, ""))
    if now in workflow.RELEASABLE_STATES and was not in workflow.RELEASABLE_STATES:
        wanted.append((RELEASABLE, ""))
    if event.get("kind") == "decision":
        words = str(detail.get("reason") or "")
        if detail.get("kind") == "measure-again":
            wanted.append((MEASURE_AGAIN, words))
        elif detail.get("kind") == "remedial":
            wanted.append((REMEDIAL, words))
    out = []
    for kind, words in wanted:
        for person in members:
            concerned = person["role"] in KINDS[kind].roles and person["id"] != actor
            if concerned and not person.get("disabled"):
                out.append((person["id"], kind, words, actor))
    return out


def still_holds(notice: dict) -> bool:
    """Whether a waiting notice is still true and still for its person: the bearing has
    not moved on, the person is still on the site in a role the kind is for, and has not
    turned the kind off or been disabled since."""
    kind = KINDS.get(notice["kind"])
    if kind is None or notice["role_now"] not in kind.roles:
        return False
    if notice["disabled"] or notice["turned_off"]:
        return False
    state = notice["state"]
    if kind.code == TO_DECIDE:
        return state == workflow.ENGINEER_TO_DECIDE or bool(notice["after_release"])
    if kind.code == RELEASABLE:
        return state in workflow.RELEASABLE_STATES
    if kind.code == REMEDIAL:
        return state == workflow.REMEDIAL
    return state == workflow.AWAITING_SURVEY and notice["last_decision"] == "measure-again"


# --- the message ---------------------------------------------------------------------------------


def link_for(notice: dict) -> str:
    """The page where the person acts on this notice (a path; the base URL goes before)."""
    site, bearing = notice["site_id"], notice["bearing_id"]
    if notice["kind"] == TO_DECIDE:
        return f"/sites/{site}/bearings/{bearing}/review"
    if notice["kind"] == RELEASABLE or (
        notice["kind"] == REMEDIAL and notice["role_now"] == workflow.CONTRACTOR
    ):
        return f"/sites/{site}/release"
    return f"/sites/{site}/bearings/{bearing}/record"


SETTINGS_PATH = "/notices"
# Bearings listed by name per site and kind in one message; the rest are counted, with the
# page that lists them all (a morning's records can put hundreds in one message).
LISTED_PER_KIND = 20


def list_link(notice: dict) -> str:
    """The page listing every bearing of this notice's site and kind."""
    site = notice["site_id"]
    if notice["kind"] == TO_DECIDE:
        return f"/review?site={site}"
    if notice["kind"] == RELEASABLE or (
        notice["kind"] == REMEDIAL and notice["role_now"] == workflow.CONTRACTOR
    ):
        return f"/sites/{site}/release"
    return f"/sites/{site}/inspect"


def line_for(notice: dict) -> str:
    """One bearing in a message, in words."""
    where = f" ({notice['location']})" if notice.get("location") else ""
    head = f"{notice['reference']}{where}"
    kind = notice["kind"]
    if kind == TO_DECIDE:
        reasons = workflow.ordered_reasons(notice.get("reasons"))
        verdict = (
            f"fails as built, utilisation {_utilisation(notice['utilisation'])}"
            if notice.get("passed") is False
            else f"utilisation {_utilisation(notice['utilisation'])}"
            if notice.get("passed")
            else "no as-built record to go by"
        )
        first = f" {reasons[0]['sentence']}" if reasons else ""
        more = f" (and {len(reasons) - 1} more)" if len(reasons) > 1 else ""
        return f"{head}: {verdict}.{first}{more}"
    if kind == RELEASABLE:
        return f"{head}: {notice['state']}; it may be released for closing up."
    by = notice.get("by_name") or "the engineer"
    what = "Remedial work" if kind == REMEDIAL else "Measure again"
    return f"{head}: {what}, from {by}: “{notice['words']}”"


def compose(person: dict, notices: list[dict], base_url: str) -> tuple[str, str, str]:
    """Subject, plain text and HTML of one person's notice message. ``notices`` are theirs,
    still true, in site order; a bearing is listed once per kind."""
    sites: dict[str, dict] = {}
    for n in notices:
        site = sites.setdefault(n["site_id"], {"name": n["site_name"], "kinds": {}})
        by_bearing = site["kinds"].setdefault(n["kind"], {})
        by_bearing[n["bearing_id"]] = n  # the newest notice of a bearing stands for it
    count = len({(n["site_id"], n["bearing_id"]) for n in notices})
    bearings = f"{count} bearing{'' if count == 1 else 's'}"
    if len(sites) == 1:
        only = next(iter(sites.values()))
        subject = f"sitecheck: {bearings} need{'s' if count == 1 else ''} you on {only['name']}"
    else:
        subject = f"sitecheck: {bearings} need{'s' if count == 1 else ''} you on {len(sites)} sites"
    subject = " ".join(subject.split())
    settings_url = base_url + SETTINGS_PATH
    text = [f"Hello {person['user_name']},", "", "These bearings are in your hands now.", ""]
    html = [
        f"<p>Hello {escape(person['user_name'])},</p>",
        "<p>These bearings are in your hands now.</p>",
    ]
    for site in sites.values():
        text.append(site["name"])
        text.append("=" * min(60, len(site["name"])))
        html.append(f"<h2>{escape(site['name'])}</h2>")
        for code, by_bearing in site["kinds"].items():
            kind = KINDS[code]
            text.append(f"{kind.heading} ({len(by_bearing)}):")
            html.append(f"<h3>{escape(kind.heading)} ({len(by_bearing)})</h3><ul>")
            listed = list(by_bearing.values())
            for n in listed[:LISTED_PER_KIND]:
                url = base_url + link_for(n)
                text.append(f"- {line_for(n)}")
                text.append(f"  {url}")
                html.append(
                    f'<li>{escape(line_for(n))}<br><a href="{escape(url)}">{escape(url)}</a></li>'
                )
            if len(listed) > LISTED_PER_KIND:
                more = f"and {len(listed) - LISTED_PER_KIND} more, all listed at"
                url = base_url + list_link(listed[0])
                text.append(f"- {more}")
                text.append(f"  {url}")
                html.append(f'<li>{escape(more)} <a href="{escape(url)}">{escape(url)}</a></li>')
            html.append("</ul>")
            text.append("")
    policy = (
        "sitecheck sends you at most one such message every 15 minutes; what happens in "
        "between waits for the next one. Choose which notices come by e-mail at:"
    )
    text += [policy, settings_url, "", CAUTION]
    html += [
        f'<p>{escape(policy)} <a href="{escape(settings_url)}">{escape(settings_url)}</a></p>',
        f"<p><small>{escape(CAUTION)}</small></p>",
    ]
    return subject, "\n".join(text) + "\n", "\n".join(html) + "\n"


# --- the round, run by the mail sender -------------------------------------------------------------


def make_messages(db, base_url: str, *, now: datetime | None = None) -> int:
    """Turn new events into notices, and each person's waiting notices that may go now into
    one queued message; returns how many messages were queued. Safe to run in several
    processes at once: each step is its own transaction, and a notice is claimed by the
    message it goes into."""
    while store.derive_notices(db, rule=notices_for_event, now=now) == store.EVENTS_PER_ROUND:
        pass
    by_person: dict[int, list[dict]] = {}
    for n in store.waiting_notices(db, now=now):
        by_person.setdefault(n["user_id"], []).append(n)
    queued = 0
    for theirs in by_person.values():
        holding = [n for n in theirs if still_holds(n)]
        overtaken = [n["id"] for n in theirs if not still_holds(n)]
        with store.transaction(db):
            # Claimed here, under the write lock: another process that read the same
            # notices finds them taken and sends nothing.
            ids = [n["id"] for n in theirs]
            if not store.notices_still_waiting(db, ids=ids, now=now):
                continue
            store.notices_dropped(db, ids=overtaken, now=now)
            if not holding:
                continue
            person = holding[0]
            subject, text, html = compose(person, holding, base_url)
            mail_id = store.queue_mail(
                db,
                kind="notice",
                to_addr=person["email"],
                subject=subject,
                body=text,
                html=html,
                now=now,
            )
            store.notices_mailed(db, ids=[n["id"] for n in holding], mail_id=mail_id, now=now)
            queued += 1
    return queued
