"""The home page, error pages, and how every data page answers as HTML or JSON."""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import UTC, datetime

from flask import Blueprint, g, jsonify, render_template, request
from markupsafe import Markup, escape

from sitecheck import notices, store, workflow
from sitecheck.bearing.format import number, quantity, utilisation
from sitecheck.cautions import CAUTION
from sitecheck.web import get_db
from sitecheck.web.login import login_required
from sitecheck.web.shapes import json_answer
from sitecheck.web.symbols import DRAWING_KEY, words_for

bp = Blueprint("pages", __name__)


def page_rule(blueprint: Blueprint, rule: str, **options):
    """Register a data page at ``rule`` and at ``rule.json``: one context, two renderings."""

    def register(view):
        blueprint.add_url_rule(rule, view_func=view, **options)
        blueprint.add_url_rule(
            rule + ".json", view_func=view, endpoint=view.__name__ + "_json", **options
        )
        return view

    return register


@dataclass(frozen=True)
class Listing:
    """One page of a long list: which page (from 1), of how many, of ``size`` rows each,
    out of ``total`` rows that match."""

    page: int
    pages: int
    size: int
    total: int

    @property
    def offset(self) -> int:
        return (self.page - 1) * self.size

    @property
    def first(self) -> int:
        return min(self.offset + 1, self.total)

    @property
    def last(self) -> int:
        return min(self.offset + self.size, self.total)

    def as_dict(self) -> dict:
        return {
            "page": self.page,
            "pages": self.pages,
            "size": self.size,
            "total": self.total,
            "first": self.first,
            "last": self.last,
        }


def listing(total: int, size: int) -> Listing:
    """The page of a list the request asks for (``?page=``), kept within the list: a page
    past the end shows the last one, anything unreadable the first."""
    pages = max(1, -(-total // size))
    try:
        page = int(request.args.get("page") or 1)
    except ValueError:
        page = 1
    return Listing(min(max(page, 1), pages), pages, size, total)


def search_words(limit: int = 100) -> tuple[str, list[str]]:
    """The search typed (``?q=``), cut to ``limit`` characters, and its words."""
    query = (request.args.get("q") or "").strip()[:limit]
    return query, query.split()


def wants_json() -> bool:
    return request.path.endswith(".json")


def render_page(template: str, status: int = 200, **context):
    """The page as HTML, or at its ``.json`` address the page's declared shape for the
    asker's role (sitecheck.web.shapes), never the whole context."""
    if wants_json():
        data = json_answer(template, context, getattr(g, "role", None))
        data["caution"] = CAUTION
        return jsonify(_jsonable(data)), status
    return render_template(template, **context), status


def _jsonable(value):
    if isinstance(value, dict):
        return {str(k): _jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_jsonable(v) for v in value]
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if hasattr(value, "as_dict"):
        return _jsonable(value.as_dict())
    return value


@page_rule(bp, "/")
@login_required
def home():
    db = get_db()
    sites = store.sites_for_user(db, g.user["id"])
    invitations = store.open_invitations_for_email(db, email=g.user["email"])
    since = since_you_looked(store.since_last_looked(db, user_id=g.user["id"]))
    for s in sites:
        s["since"] = since.get(s["id"], [])
    queue_count = store.to_decide_counts(db, user_id=g.user["id"])["waiting"]
    return render_page("home.html", sites=sites, queue_count=queue_count, invitations=invitations)


# A kind's references listed by name; past this many the count says the rest.
SINCE_REFERENCES = 12


def since_you_looked(rows: list[dict]) -> dict[str, list[dict]]:
    """Per site, what came into the person's hands since they last looked there: one entry
    per kind with its count, words and the bearings' references, in the kinds' order."""
    out: dict[str, dict[str, dict]] = {}
    for row in rows:
        kinds = out.setdefault(row["site_id"], {})
        entry = kinds.setdefault(
            row["kind"],
            {"kind": row["kind"], "count": 0, "references": [], "looked_at": row["looked_at"]},
        )
        entry["count"] += 1
        if len(entry["references"]) < SINCE_REFERENCES:
            entry["references"].append(row["reference"])
    order = list(notices.KINDS)
    return {
        site_id: [
            {**e, "words": f"{e['count']} {notices.KINDS[e['kind']].since}"}
            for e in sorted(kinds.values(), key=lambda e: order.index(e["kind"]))
        ]
        for site_id, kinds in out.items()
    }


def looked_now(site_ids) -> None:
    """The person has just seen these sites' bearings: "since you last looked" starts again.
    Only the HTML page counts as looking (a .json twin may be read by a script)."""
    if g.user is not None and not wants_json():
        notices.looked(get_db(), user_id=g.user["id"], site_ids=site_ids)


def error_page(error):
    code = getattr(error, "code", 500) or 500
    description = getattr(error, "description", None) or "Something went wrong on the server."
    if code == 500:
        description = (
            "Something went wrong on the server. Nothing you entered has been lost; try again."
        )
    if wants_json() or request.path.startswith("/api/"):
        return jsonify(error=description, status=code), code
    return render_template("error.html", code=code, description=description), code


def csrf_error(error):
    message = "This form has expired or did not come from sitecheck. Reload the page and send it again; nothing was saved."
    if wants_json() or request.path.startswith("/api/"):
        return jsonify(error=message, status=400, reason="csrf"), 400
    return render_template("error.html", code=400, description=message), 400


def install_template_helpers(app) -> None:
    @app.context_processor
    def helpers():
        return {
            "badge": state_badge,
            "caution": CAUTION,
            "util": utilisation,
            "qty": quantity,
            "num": number,
            "mm": lambda x: "—" if x is None else number(x),
            "allowed": lambda action: workflow.allowed(getattr(g, "role", None), action),
            "symbol_words": words_for,
            "drawing_key": DRAWING_KEY,
            "local_time": local_time,
            "decide_counts": _decide_counts,
        }


def _decide_counts() -> dict:
    """For the header: bearings waiting for this engineer, and how many are new since they
    last looked, and whether they are anyone's engineer: an inspector or a contractor is
    never offered a queue that can hold nothing for them."""
    if getattr(g, "user", None) is None:
        return {"waiting": 0, "new": 0, "engineer": False}
    return store.to_decide_counts(get_db(), user_id=g.user["id"])


def state_badge(state: str) -> Markup:
    """A state always as symbol and words, never colour alone."""
    b = workflow.STATE_BADGES[state]
    return Markup(
        '<span class="state {cls}"><span aria-hidden="true">{sym}</span> {label}</span>'
    ).format(cls=b.css_class, sym=b.symbol, label=escape(b.label))


def utc_words(stamp: str) -> str:
    """A stored time in UTC, as the page says it before the phone puts it in its own zone."""
    try:
        moment = datetime.fromisoformat(str(stamp).replace("Z", "+00:00"))
    except ValueError:
        return str(stamp)
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=UTC)
    return moment.astimezone(UTC).strftime("%-d %b %Y, %H:%M UTC")


def local_time(stamp) -> Markup:
    """A stored UTC time for a page: in UTC as written, and in the phone's own time and zone
    once its script runs (static/js/messages.js)."""
    if not stamp:
        return Markup("—")
    return Markup('<time datetime="{iso}" data-local>{words}</time>').format(
        iso=str(stamp), words=utc_words(stamp)
    )


@bp.get("/api/csrf")
def api_csrf():
    """A fresh CSRF token for the phone to send queued records with (a cached page's token
    may be stale). Never cached."""
    from flask_wtf.csrf import generate_csrf

    response = jsonify(token=generate_csrf(), user=g.user["id"] if g.user else None)
    response.headers["Cache-Control"] = "no-store"
    return response


@bp.get("/manifest.webmanifest")
def manifest():
    """The web app manifest: sitecheck installs to a phone's home screen."""
    from flask import url_for

    icons = [
        {
            "src": url_for("static", filename=f"icon-{n}.png"),
            "sizes": f"{n}x{n}",
            "type": "image/png",
            "purpose": "any",
        }
        for n in (192, 512)
    ] + [
        {
            "src": url_for("static", filename=f"icon-maskable-{n}.png"),
            "sizes": f"{n}x{n}",
            "type": "image/png",
            "purpose": "maskable",
        }
        for n in (192, 512)
    ]
    body = {
        "name": "sitecheck: bearings as built",
        "short_name": "sitecheck",
        "description": "Re-check beam bearings on masonry as built, before they are closed up.",
        "start_url": "/",
        "scope": "/",
        "display": "standalone",
        "background_color": "#f3f6f7",
        "theme_color": "#1f4e5a",
        "icons": icons,
    }
    response = jsonify(body)
    response.mimetype = "application/manifest+json"
    response.headers["Cache-Control"] = "no-cache"
    return response
