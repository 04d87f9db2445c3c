"""The site record: the page that offers it, the PDF, the data export (CSV in a zip, JSON),
and the drawing of a bearing that the review, result and bearing pages include.

Everyone on a site may export its record ('export'); anyone else gets 404, as for every
other page of the site.
"""

from __future__ import annotations

import re
import unicodedata
from datetime import UTC, datetime

from flask import Blueprint, Response, g, render_template, url_for
from markupsafe import Markup

from sitecheck import store
from sitecheck.bearing import InputError
from sitecheck.report import export, pdf
from sitecheck.report.collect import collect
from sitecheck.report.drawing import as_built_input_dict, bearing_svg, side_by_side_svg
from sitecheck.web import get_db, photo_store
from sitecheck.web.access import site_for
from sitecheck.web.auth import login_required
from sitecheck.web.pages import page_rule, render_page

bp = Blueprint("record", __name__)

DOWNLOADS = (
    (
        "pdf",
        "Site record (PDF)",
        "record.pdf_file",
        "For the quality file: every bearing with its drawing, calculation, photos, decisions and release, and the audit trail.",
    ),
    (
        "zip",
        "Data export (CSV, zipped)",
        "record.export_zip",
        "schedule.csv (imports into a site), bearings, as-built records, decisions, releases, reopenings, events.",
    ),
    (
        "json",
        "Data export (JSON)",
        "record.export_json",
        "Everything in one file, with every design input and calculation whole.",
    ),
)


def safe_filename(name: str, suffix: str) -> str:
    """A file name any system accepts, made from the site's name and today's date."""
    plain = unicodedata.normalize("NFKD", name).encode("ascii", "ignore").decode()
    slug = re.sub(r"[^A-Za-z0-9]+", "-", plain).strip("-").lower()[:40].strip("-") or "site"
    return f"{slug}-{datetime.now(UTC):%Y-%m-%d}{suffix}"


def _download(data: bytes, mimetype: str, filename: str) -> Response:
    response = Response(data, mimetype=mimetype)
    response.headers["Content-Disposition"] = f'attachment; filename="{filename}"'
    return response


@page_rule(bp, "/sites/<site_id>/record")
@login_required
def site(site_id):
    found, role = site_for(site_id, "export")
    bearings = store.list_bearings(get_db(), site_id=site_id)
    return render_page(
        "record/site.html",
        site={"id": found["id"], "name": found["name"], "address": found["address"]},
        role=role,
        bearing_count=len(bearings),
        downloads=[
            {"kind": k, "label": label, "href": url_for(endpoint, site_id=site_id), "hint": hint}
            for k, label, endpoint, hint in DOWNLOADS
        ],
    )


@bp.get("/sites/<site_id>/record.pdf")
@login_required
def pdf_file(site_id):
    found, _role = site_for(site_id, "export")
    data = pdf.pdf_bytes(collect(get_db(), site_id), photo_store=photo_store())
    return _download(data, "application/pdf", safe_filename(found["name"], "-site-record.pdf"))


@bp.get("/sites/<site_id>/export.zip")
@login_required
def export_zip(site_id):
    found, _role = site_for(site_id, "export")
    data = export.csv_zip(collect(get_db(), site_id))
    return _download(data, "application/zip", safe_filename(found["name"], "-data.zip"))


@bp.get("/sites/<site_id>/export.json")
@login_required
def export_json(site_id):
    found, _role = site_for(site_id, "export")
    data = export.json_bytes(collect(get_db(), site_id))
    return _download(data, "application/json", safe_filename(found["name"], "-data.json"))


# --- the drawing, for other blueprints' pages ---------------------------------------------------


def _figure(svg: str, caption: str) -> Markup:
    return Markup(render_template("record/_drawing.html", svg=Markup(svg), caption=caption))


def _unavailable() -> Markup:
    return _figure("", "The drawing cannot be made from the stored values.")


def bearing_drawing(bearing_id: str) -> Markup:
    """The design, and beside it the latest as-built record, of a bearing on the site the
    page was authorised for (``site_for`` set ``g.site``)."""
    site = getattr(g, "site", None)
    if site is None:
        return Markup("")
    db = get_db()
    b = store.get_bearing(db, site_id=site["id"], bearing_id=bearing_id)
    if b is None:
        return Markup("")
    record = (
        store.get_record(db, site_id=site["id"], uuid=b["latest_record_uuid"])
        if b["latest_record_uuid"]
        else None
    )
    try:
        if record is None:
            svg = bearing_svg(
                b["design_input"], b["design_result"], title=f"{b['reference']}: design"
            )
            return _figure(svg, "The bearing as designed, to scale.")
        built = as_built_input_dict(b["design_input"], record["measurements"])
        svg = side_by_side_svg(
            (b["design_input"], b["design_result"]), (built, record["result"]), title=b["reference"]
        )
    except (InputError, KeyError, TypeError, ValueError):
        return _unavailable()
    return _figure(
        svg, "Design, and as built by the latest record, at one scale; ≠ marks what differs."
    )


def record_drawing(record_uuid: str) -> Markup:
    """One as-built record drawn against the design revision it was measured against."""
    site = getattr(g, "site", None)
    if site is None:
        return Markup("")
    db = get_db()
    record = store.get_record(db, site_id=site["id"], uuid=record_uuid)
    if record is None:
        return Markup("")
    revision = next(
        (
            r
            for r in store.bearing_revisions(
                db, site_id=site["id"], bearing_id=record["bearing_id"]
            )
            if r["revision"] == record["design_revision"]
        ),
        None,
    )
    if revision is None:
        return _unavailable()
    try:
        built = as_built_input_dict(revision["design_input"], record["measurements"])
        svg = side_by_side_svg(
            (revision["design_input"], revision["design_result"]), (built, record["result"])
        )
    except (InputError, KeyError, TypeError, ValueError):
        return _unavailable()
    return _figure(
        svg,
        f"Design revision {record['design_revision']}, and as built by this record, at one scale; ≠ marks what differs.",
    )


@bp.app_context_processor
def _drawing_helpers():
    return {"bearing_drawing": bearing_drawing, "record_drawing": record_drawing}
