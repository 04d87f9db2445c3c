"""The site record: the page that offers it, the PDF, the data export (CSV in a zip, JSON),
and the drawing of a bearing that the review, result and bearing pages include.

Everyone on a site may export its record ('export'); anyone else gets 404, as for every
other page of the site.

Every file is made in the background (sitecheck.report.jobs), never inside a request: a
request that made a PDF held a server thread and a core for seconds, eight at once slowed
log-in for everyone, and a large site's export held hundreds of MB for most of a minute.
The record page starts one (or joins the making under way, or hands out the last one while
nothing on the site has changed), a progress page shows how many bearings are done,
refreshing itself without JavaScript and polling its .json with it, and offers the file
when it is ready. A person may start only so many makings of each kind an hour. The files
are kept under the app's folder.
"""

from __future__ import annotations

import re
import unicodedata
from datetime import UTC, datetime
from pathlib import Path

from flask import (
    Blueprint,
    Response,
    abort,
    current_app,
    flash,
    g,
    make_response,
    redirect,
    render_template,
    send_file,
    url_for,
)
from markupsafe import Markup

from sitecheck import store
from sitecheck.bearing import InputError
from sitecheck.report.drawing import as_built_input_dict, bearing_svg, side_by_side_svg
from sitecheck.report.jobs import KINDS, RecordJobs, TooManyRecords, data_export, site_record
from sitecheck.web import get_db, photo_store
from sitecheck.web.access import site_for
from sitecheck.web.auth import login_required
from sitecheck.web.pages import page_rule, render_page

bp = Blueprint("record", __name__)

# How often the progress page asks again, without JavaScript and with it.
REFRESH_SECONDS = 2

# What each kind of file is called and holds, on the pages and in its download's name.
FILES = {
    "pdf": {
        "label": "Site record (PDF)",
        "make_label": "Make the site record (PDF)",
        "download_label": "Download the site record (PDF)",
        "hint": "For the quality file: every bearing with its drawing, calculation, photos, "
        "decisions and release, and the audit trail.",
        "what": "site record",
        "mimetype": "application/pdf",
        "suffix": "-site-record.pdf",
    },
    "csv": {
        "label": "Data export (CSV, zipped)",
        "make_label": "Make the data export (CSV, zipped)",
        "download_label": "Download the data export (CSV, zipped)",
        "hint": "schedule.csv (imports into a site), bearings, as-built records, decisions, "
        "releases, reopenings, events.",
        "what": "data export",
        "mimetype": "application/zip",
        "suffix": "-data.zip",
    },
    "json": {
        "label": "Data export (JSON)",
        "make_label": "Make the data export (JSON)",
        "download_label": "Download the data export (JSON)",
        "hint": "Everything in one file, with every design input and calculation whole.",
        "what": "data export",
        "mimetype": "application/json",
        "suffix": "-data.json",
    },
}
assert set(FILES) == set(KINDS)
KIND_RULE = "<any(" + ", ".join(KINDS) + "):kind>"


@bp.record_once
def _install_jobs(state) -> None:
    """One set of background jobs per app, their files beside the database and photos
    (``RECORD_DIR`` to put them elsewhere). ``RECORD_PDF_PER_HOUR``: how many makings of each
    kind one person may start in an hour."""
    app = state.app
    folder = app.config.get("RECORD_DIR") or Path(app.config["DB_PATH"]).parent / "records"
    app.extensions["record_jobs"] = RecordJobs(
        folder, app.config["DB_PATH"], per_user=app.config["RECORD_PDF_PER_HOUR"]
    )


def record_jobs() -> RecordJobs:
    return current_app.extensions["record_jobs"]


def safe_filename(name: str, suffix: str, when: datetime | None = None) -> str:
    """A file name any system accepts, made from the site's name and a date (today, unless
    `when` says)."""
    plain = unicodedata.normalize("NFKD", name).encode("ascii", "ignore").decode()
    slug = re.sub(r"[^A-Za-z0-9]+", "-", plain).strip("-").lower()[:40].strip("-") or "site"
    return f"{slug}-{when or datetime.now(UTC):%Y-%m-%d}{suffix}"


@page_rule(bp, "/sites/<site_id>/record")
@login_required
def site(site_id):
    found, role = site_for(site_id, "export")
    db = get_db()
    jobs = record_jobs()
    return render_page(
        "record/site.html",
        site={"id": found["id"], "name": found["name"], "address": found["address"]},
        role=role,
        bearing_count=store.count_bearings(db, site_id=site_id),
        files=[_file_card(db, jobs, site_id, kind) for kind in KINDS],
    )


def _file_card(db, jobs: RecordJobs, site_id: str, kind: str) -> dict:
    return {
        "kind": kind,
        "label": FILES[kind]["label"],
        "make_label": FILES[kind]["make_label"],
        "hint": FILES[kind]["hint"],
        "make": url_for("record.make_file", site_id=site_id, kind=kind),
        "progress": url_for("record.progress", site_id=site_id, kind=kind),
        "making": _job_summary(db, jobs.latest(site_id, kind)),
        # The last one made, if nothing on the site has changed since: no need to wait.
        "current": _job_summary(db, jobs.current(site_id, kind)),
    }


@bp.get("/sites/<site_id>/record.pdf", defaults={"kind": "pdf"}, endpoint="pdf_file")
@bp.get("/sites/<site_id>/export.zip", defaults={"kind": "csv"}, endpoint="export_zip")
@bp.get("/sites/<site_id>/export.json", defaults={"kind": "json"}, endpoint="export_json")
@login_required
def current_file(site_id, kind):
    """The file made from the site as it is now, if one was made since the last change;
    otherwise the progress page, where it is made (a GET starts nothing)."""
    found, _role = site_for(site_id, "export")
    job = record_jobs().current(site_id, kind)
    if job is None:
        what = FILES[kind]["what"]
        flash(
            f"The {what} is made in the background: make one from what the site holds now, "
            "and download it here when it is ready."
        )
        return redirect(url_for("record.progress", site_id=site_id, kind=kind))
    return _send(found, job)


@bp.post(f"/sites/<site_id>/record/{KIND_RULE}")
@login_required
def make_file(site_id, kind):
    """Start making the file in the background, join the making under way, or hand out the
    last one made if nothing on the site has changed since."""
    site_for(site_id, "export")
    db_path = current_app.config["DB_PATH"]
    make = (
        site_record(db_path, site_id, photo_store=photo_store())
        if kind == "pdf"
        else data_export(db_path, site_id, kind)
    )
    try:
        job, how = record_jobs().start(site_id, user_id=g.user["id"], make=make, kind=kind)
    except TooManyRecords as refused:
        return _progress_page(
            site_id, kind, message=str(refused), status=429, retry_at=refused.retry_at
        )
    what = FILES[kind]["what"]
    if how == "joined":
        flash(f"The {what} is already being made; its progress is below.")
    elif how == "reused":
        flash(
            f"Nothing on the site has changed since the {what} made {_when(job.finished_at)}"
            "; it is ready below."
        )
    return redirect(url_for("record.progress", site_id=site_id, kind=kind))


@page_rule(bp, f"/sites/<site_id>/record/{KIND_RULE}")
@login_required
def progress(site_id, kind):
    return _progress_page(site_id, kind)


def _progress_page(site_id, kind, *, message=None, status=200, retry_at=None):
    found, _role = site_for(site_id, "export")
    jobs = record_jobs()
    db = get_db()
    job = _job_summary(db, jobs.latest(site_id, kind))
    made = _job_summary(db, jobs.latest_done(site_id, kind))
    response = render_page(
        "record/progress.html",
        status=status,
        site={"id": found["id"], "name": found["name"]},
        kind=kind,
        label=FILES[kind]["label"],
        make_label=FILES[kind]["make_label"],
        download_label=FILES[kind]["download_label"],
        job=job,
        made=made,
        message=message,
        make=url_for("record.make_file", site_id=site_id, kind=kind),
        poll=url_for("record.progress_json", site_id=site_id, kind=kind),
        refresh_seconds=REFRESH_SECONDS if job and job["running"] else None,
    )
    if retry_at is not None:
        response = make_response(response)
        wait = datetime.fromisoformat(retry_at.replace("Z", "+00:00")) - datetime.now(UTC)
        response.headers["Retry-After"] = str(max(1, int(wait.total_seconds()) + 1))
    return response


@bp.get(f"/sites/<site_id>/record/{KIND_RULE}/file")
@login_required
def made_file(site_id, kind):
    """The newest file of the kind made in the background; none yet, and the page says so."""
    found, _role = site_for(site_id, "export")
    job = record_jobs().latest_done(site_id, kind)
    if job is None:
        flash(f"No {FILES[kind]['what']} has been made here yet: make one first.")
        return redirect(url_for("record.progress", site_id=site_id, kind=kind))
    return _send(found, job)


def _send(found: dict, job) -> Response:
    if job.kind not in FILES:
        abort(404)
    made = datetime.fromisoformat((job.finished_at or job.created_at).replace("Z", "+00:00"))
    return send_file(
        record_jobs().file_path(job),
        mimetype=FILES[job.kind]["mimetype"],
        as_attachment=True,
        download_name=safe_filename(found["name"], FILES[job.kind]["suffix"], made),
        conditional=False,
    )


def _when(ts: str | None) -> str:
    return f"{ts[:10]} {ts[11:16]} UTC" if ts else ""


def _job_summary(db, job) -> dict | None:
    """What the pages show of a job: its state, progress and who started it."""
    if job is None:
        return None
    who = store.get_user_by_id(db, job.started_by) if job.started_by is not None else None
    return job.as_dict() | {
        "started_by_name": who["name"] if who else "someone no longer on sitecheck",
        "percent": round(100 * job.bearings_done / job.bearings) if job.bearings else 0,
        "status": _status(job),
        "created_text": _when(job.created_at),
        "finished_text": _when(job.finished_at),
        "download": url_for("record.made_file", site_id=job.site_id, kind=job.kind)
        if job.state == "done"
        else None,
    }


def _status(job) -> str:
    """The progress in one sentence; the page and its script both show this one."""
    if job.state == "waiting":
        return f"Waiting for another {FILES[job.kind]['what']} to finish first…"
    if job.state != "making":
        return ""
    if not job.bearings:
        return "Reading the site…"
    if job.bearings_done >= job.bearings:
        rest = "the audit trail and the file" if job.kind == "pdf" else "the events and the file"
        return f"All {job.bearings} bearings done; writing {rest}…"
    last = (
        f", last done {job.current}"
        if job.bearings_done and job.current not in ("", "cover", "summary")
        else ""
    )
    what = "the site record" if job.kind == "pdf" else FILES[job.kind]["label"].lower()
    return f"Making {what}: {job.bearings_done} of {job.bearings} bearings{last}."


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
