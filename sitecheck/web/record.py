"""The site record: the page that offers it, the PDF, the data export (CSV in a zip, JSON),
and the drawing of a bearing that the review, result and bearing pages include.

Everyone on a site may export its record ('export'); anyone else gets 404, as for every
other page of the site.

Every PDF is made in the background (sitecheck.report.jobs), never inside a request: a
request that made one held a server thread and a core for seconds, and eight at once slowed
log-in for everyone. The record page starts it (or joins the making under way, or hands out
the last one while nothing on the site has changed), a progress page shows how many
bearings are done, refreshing itself without JavaScript and polling its .json with it, and
offers the file when it is ready. A person may start only so many makings an hour. The files
are kept under the app's folder.
"""

from __future__ import annotations

from datetime import UTC, datetime
from pathlib import Path

from flask import (
    Blueprint,
    Response,
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

from sitecheck import store, workflow
from sitecheck.bearing import InputError
from sitecheck.bearing.serial import as_built_input_dict
from sitecheck.report import export
from sitecheck.report.collect import collect
from sitecheck.report.drawing import bearing_svg, side_by_side_svg
from sitecheck.report.jobs import RecordJobs, TooManyRecords, site_record
from sitecheck.report.summary import DEFAULT_SIGN_OFF, covers_words
from sitecheck.web import get_db, photo_store
from sitecheck.web.access import site_for
from sitecheck.web.decision_forms import SignOffForm
from sitecheck.web.login import login_required
from sitecheck.web.pages import page_rule, render_page

bp = Blueprint("record", __name__)

# How often the progress page asks again, without JavaScript and with it.
REFRESH_SECONDS = 2

PDF_HINT = (
    "For the quality file: every bearing with its drawing, calculation, photos, decisions "
    "and release, and the audit trail."
)
DOWNLOADS = (
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


@bp.record_once
def _install_jobs(state) -> None:
    """One set of background jobs per app, their files beside the database and photos
    (``RECORD_DIR`` to put them elsewhere). ``RECORD_PDF_PER_HOUR``: how many makings one
    person may start in an hour."""
    app = state.app
    folder = app.config.get("RECORD_DIR") or Path(app.config["DB_PATH"]).parent / "records"
    app.extensions["record_jobs"] = RecordJobs(
        folder, app.config["DB_PATH"], per_user=app.config["RECORD_PDF_PER_HOUR"]
    )


def record_jobs() -> RecordJobs:
    return current_app.extensions["record_jobs"]


def safe_filename(name: str, suffix: str, when: datetime | None = None) -> str:
    """A file name any system accepts, made from the site's name and a date (today, unless
    `when` says); the PDF names the data export by the same rule."""
    return export.file_name(name, suffix, when)


def _download(data: bytes, mimetype: str, filename: str) -> Response:
    response = Response(data, mimetype=mimetype)
    response.headers["Content-Disposition"] = f'attachment; filename="{filename}"'
    return response


@page_rule(bp, "/sites/<site_id>/record")
@login_required
def site(site_id):
    found, role = site_for(site_id, "export")
    return _record_page(found, role)


def _record_page(found: dict, role: str, form: SignOffForm | None = None, status: int = 200):
    site_id = found["id"]
    db = get_db()
    bearings = store.list_bearings(db, site_id=site_id)
    jobs = record_jobs()
    may_sign = workflow.allowed(role, "sign-off")
    if may_sign and form is None:
        form = SignOffForm(formdata=None, engineer_name=g.user["name"], statement=DEFAULT_SIGN_OFF)
    return render_page(
        "record/site.html",
        status=status,
        sign_off=_sign_off_summary(db, site_id),
        would_cover=covers_words(
            store.site_extent(db, site_id=site_id), "the site record as it stands now"
        ),
        may_sign=may_sign,
        sign_off_form=form if may_sign else None,
        site={"id": found["id"], "name": found["name"], "address": found["address"]},
        role=role,
        bearing_count=len(bearings),
        pdf={
            "label": "Site record (PDF)",
            "hint": PDF_HINT,
            "make": url_for("record.make_pdf", site_id=site_id),
            "progress": url_for("record.pdf_progress", site_id=site_id),
        },
        making=_job_summary(db, jobs.latest(site_id)),
        # The last record made, if nothing on the site has changed since: no need to wait.
        current=_job_summary(db, jobs.current(site_id)),
        downloads=[
            {"kind": k, "label": label, "href": url_for(endpoint, site_id=site_id), "hint": hint}
            for k, label, endpoint, hint in DOWNLOADS
        ],
    )


@bp.post("/sites/<site_id>/record/sign-off")
@login_required
def sign_off(site_id):
    """The engineer signs the site record off as it stands now; the next PDF carries it."""
    found, role = site_for(site_id, "sign-off")
    form = SignOffForm()
    if not form.validate_on_submit():
        return _record_page(found, role, form, status=400)
    signed = store.add_sign_off(
        get_db(),
        site_id=site_id,
        engineer_id=g.user["id"],
        engineer_name=form.engineer_name.data,
        statement=form.statement.data,
    )
    flash(
        f"Signed off by {signed['engineer_name']}. The site record made from now on carries "
        "this sign-off on its first page."
    )
    return redirect(url_for("record.site", site_id=site_id))


def _sign_off_summary(db, site_id: str) -> dict | None:
    """The newest sign-off, what it covers in words, and how much changed since."""
    signed = store.latest_sign_off(db, site_id=site_id)
    if signed is None:
        return None
    return {
        "engineer_name": signed["engineer_name"],
        "statement": signed["statement"],
        "signed_at": signed["created_at"],
        "covers": covers_words(signed["covers"]),
        "changes_since": store.changes_since(
            db, site_id=site_id, event_id=signed["covers"].get("last_event_id")
        ),
    }


@bp.get("/sites/<site_id>/record.pdf")
@login_required
def pdf_file(site_id):
    """The site record made from the site as it is now, if one was made since the last
    change; otherwise the progress page, where it is made (a GET starts nothing)."""
    found, _role = site_for(site_id, "export")
    job = record_jobs().current(site_id)
    if job is None:
        flash(
            "Site records are made in the background: make one from what the site holds now, "
            "and download it when it is ready."
        )
        return redirect(url_for("record.pdf_progress", site_id=site_id))
    return _send_pdf(found, job)


@bp.post("/sites/<site_id>/record/pdf")
@login_required
def make_pdf(site_id):
    """Start making the site record in the background, join the making under way, or hand
    out the last one made if nothing on the site has changed since."""
    site_for(site_id, "export")
    try:
        job, how = record_jobs().start(
            site_id,
            user_id=g.user["id"],
            make=site_record(current_app.config["DB_PATH"], site_id, photo_store=photo_store()),
        )
    except TooManyRecords as refused:
        return _progress_page(site_id, message=str(refused), status=429, retry_at=refused.retry_at)
    if how == "joined":
        flash("The site record is already being made; its progress is below.")
    elif how == "reused":
        flash(
            f"Nothing on the site has changed since the site record made {_when(job.finished_at)}"
            "; it is ready below."
        )
    return redirect(url_for("record.pdf_progress", site_id=site_id))


@page_rule(bp, "/sites/<site_id>/record/pdf")
@login_required
def pdf_progress(site_id):
    return _progress_page(site_id)


def _progress_page(site_id, *, message=None, status=200, retry_at=None):
    found, _role = site_for(site_id, "export")
    jobs = record_jobs()
    db = get_db()
    job = _job_summary(db, jobs.latest(site_id))
    made = _job_summary(db, jobs.latest_done(site_id))
    response = render_page(
        "record/pdf.html",
        status=status,
        site={"id": found["id"], "name": found["name"]},
        job=job,
        made=made,
        message=message,
        make=url_for("record.make_pdf", site_id=site_id),
        refresh_seconds=REFRESH_SECONDS if job and job["running"] else None,
    )
    if retry_at is not None:
        response = make_response(response)
        wait = datetime.fromisoformat(retry_at.replace("Z", "+00:00")) - datetime.now(UTC)
        response.headers["Retry-After"] = str(max(1, int(wait.total_seconds()) + 1))
    return response


@bp.get("/sites/<site_id>/record/pdf/file")
@login_required
def made_pdf(site_id):
    """The newest site record made in the background; none yet, and the page says so."""
    found, _role = site_for(site_id, "export")
    job = record_jobs().latest_done(site_id)
    if job is None:
        flash("No site record has been made here yet: make one first.")
        return redirect(url_for("record.pdf_progress", site_id=site_id))
    return _send_pdf(found, job)


def _send_pdf(found: dict, job) -> Response:
    made = datetime.fromisoformat((job.finished_at or job.created_at).replace("Z", "+00:00"))
    return send_file(
        record_jobs().pdf_path(job),
        mimetype="application/pdf",
        as_attachment=True,
        download_name=safe_filename(found["name"], "-site-record.pdf", made),
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
        "download": url_for("record.made_pdf", site_id=job.site_id)
        if job.state == "done"
        else None,
    }


def _status(job) -> str:
    """The progress in one sentence; the page and its script both show this one."""
    if job.state == "waiting":
        return "Waiting for another site record to finish first…"
    if job.state != "making":
        return ""
    if not job.bearings:
        return "Reading the site…"
    if job.bearings_done >= job.bearings:
        return f"All {job.bearings} bearings done; writing the audit trail and the file…"
    last = (
        f", last done {job.current}"
        if job.bearings_done and job.current not in ("", "cover", "summary")
        else ""
    )
    return f"Making the site record: {job.bearings_done} of {job.bearings} bearings{last}."


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
    b = store.get_bearing(db, site_id=site["id"], bearing_id=bearing_id, with_result=True)
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
