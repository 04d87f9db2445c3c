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
    request,
    send_file,
    url_for,
)
from flask_wtf import FlaskForm
from markupsafe import Markup
from wtforms import DateField, SelectMultipleField, StringField, ValidationError, widgets
from wtforms.fields.choices import SelectChoice
from wtforms.validators import Length, Optional

from sitecheck import services, store, workflow
from sitecheck.bearing import InputError
from sitecheck.bearing.serial import as_built_input_dict
from sitecheck.report import export
from sitecheck.report.collect import selection_words
from sitecheck.report.drawing import bearing_svg, side_by_side_svg
from sitecheck.report.jobs import KINDS, RecordJobs, TooManyRecords, data_export, site_record
from sitecheck.report.summary import DEFAULT_SIGN_OFF, covers_words
from sitecheck.web import get_db, photo_store
from sitecheck.web.access import site_for
from sitecheck.web.decision_forms import SignOffForm
from sitecheck.web.login import login_required
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


WORDS_MAX = 100


def _strip(value):
    return value.strip() if isinstance(value, str) else value


class PartForm(FlaskForm):
    """Which part of the site a site record (PDF) holds; every field may be left empty (the
    whole site). The same fields, in a page's address, name the part on its pages."""

    words = StringField(
        "Level or area: a word of the bearings' reference or location",
        filters=[_strip],
        validators=[
            Optional(),
            Length(max=WORDS_MAX, message=f"Keep it under {WORDS_MAX} characters."),
        ],
    )
    state = SelectMultipleField(
        "In these states",
        choices=[SelectChoice(s, s) for s in workflow.STATES],
        option_widget=widgets.CheckboxInput(),
        widget=widgets.ListWidget(prefix_label=False),
    )
    since = DateField(
        "From (a day, UTC)",
        validators=[Optional()],
        render_kw={"inputmode": "numeric"},
    )
    until = DateField("To (a day, UTC)", validators=[Optional()])

    def validate_until(self, field):
        if field.data and self.since.data and field.data < self.since.data:
            raise ValidationError(
                f"The last day, {field.data.isoformat()}, is before the first, "
                f"{self.since.data.isoformat()}: swap them or change one."
            )

    def selection(self) -> store.Selection:
        return store.Selection(
            words=self.words.data or None,
            states=tuple(self.state.data or ()),
            since=self.since.data,
            until=self.until.data,
        )


def _date_message(form: PartForm) -> None:
    # WTForms' own words for a date it cannot read are "Not a valid date value."
    for field in (form.since, form.until):
        if field.errors and field.data is None and field.raw_data and field.raw_data[0]:
            field.errors[:] = [
                f"{field.label.text}: “{field.raw_data[0][:40]}” is not a day; write it as "
                "2026-03-01."
            ]


def part_from(values) -> tuple[store.Selection | None, PartForm]:
    """The part a page's address names (its query), or None if it names none that can be
    read; and the form, with its errors."""
    form = PartForm(formdata=values, meta={"csrf": False})
    if not form.validate():
        _date_message(form)
        return None, form
    return form.selection(), form


def part_args(selection: store.Selection | None) -> dict:
    """A part as a page address's query, so the part's pages link to one another."""
    if selection is None or selection.whole:
        return {}
    args: dict = {}
    if selection.words:
        args["words"] = selection.words
    if selection.states:
        args["state"] = list(selection.states)
    if selection.since:
        args["since"] = selection.since.isoformat()
    if selection.until:
        args["until"] = selection.until.isoformat()
    return args


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
    `when` says); the PDF names the data export by the same rule."""
    return export.file_name(name, suffix, when)


@page_rule(bp, "/sites/<site_id>/record")
@login_required
def site(site_id):
    found, role = site_for(site_id, "export")
    return _record_page(found, role)


def _record_page(
    found: dict,
    role: str,
    *,
    sign_off_form=None,
    part_form: PartForm | None = None,
    status: int = 200,
):
    site_id = found["id"]
    db = get_db()
    jobs = record_jobs()
    may_sign = workflow.allowed(role, "sign-off")
    if may_sign and sign_off_form is None:
        sign_off_form = SignOffForm(
            formdata=None, engineer_name=g.user["name"], statement=DEFAULT_SIGN_OFF
        )
    return render_page(
        "record/site.html",
        status=status,
        sign_off=_sign_off_summary(db, site_id),
        would_cover=covers_words(
            store.site_extent(db, site_id=site_id), "the site record as it stands now"
        ),
        may_sign=may_sign,
        sign_off_form=sign_off_form if may_sign else None,
        site={"id": found["id"], "name": found["name"], "address": found["address"]},
        role=role,
        bearing_count=store.count_bearings(db, site_id=site_id),
        files=[_file_card(db, jobs, site_id, kind) for kind in KINDS],
        part_form=part_form or PartForm(formdata=None),
        part_make=url_for("record.make_file", site_id=site_id, kind="pdf"),
    )


@bp.post("/sites/<site_id>/record/sign-off")
@login_required
def sign_off(site_id):
    """The engineer signs the site record off as it stands now; the next PDF carries it."""
    found, role = site_for(site_id, "sign-off")
    form = SignOffForm()
    if not form.validate_on_submit():
        return _record_page(found, role, sign_off_form=form, status=400)
    signed = services.sign_off(
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
    last one made if nothing on the site has changed since. A PDF may be of part of the
    site (PartForm's fields); refused with the record page and its errors if they cannot be
    read, keeping what was typed."""
    found, role = site_for(site_id, "export")
    db_path = current_app.config["DB_PATH"]
    selection = None
    if kind == "pdf":
        form = PartForm()
        if not form.validate_on_submit():
            _date_message(form)
            return _record_page(found, role, part_form=form, status=400)
        selection = form.selection()
        if selection.whole:
            selection = None
    make = (
        site_record(db_path, site_id, photo_store=photo_store(), selection=selection)
        if kind == "pdf"
        else data_export(db_path, site_id, kind)
    )
    key = selection.key() if selection else ""
    try:
        job, how = record_jobs().start(
            site_id, user_id=g.user["id"], make=make, kind=kind, selection=key
        )
    except TooManyRecords as refused:
        return _progress_page(
            site_id,
            kind,
            selection,
            message=str(refused),
            status=429,
            retry_at=refused.retry_at,
        )
    what = FILES[kind]["what"]
    if how == "joined":
        flash(f"The {what} is already being made; its progress is below.")
    elif how == "reused":
        flash(
            f"Nothing on the site has changed since the {what} made {_when(job.finished_at)}"
            "; it is ready below."
        )
    return redirect(url_for("record.progress", site_id=site_id, kind=kind, **part_args(selection)))


def _asked_part(kind: str) -> store.Selection | None:
    """The part of the site a page's address names (a PDF's only); 400 if it cannot be read."""
    if kind != "pdf" or not request.args:
        return None
    selection, form = part_from(request.args)
    if selection is None:
        problems = "; ".join(e for f in form for e in f.errors)
        abort(400, description=f"The part of the site asked for cannot be read: {problems}")
    return None if selection.whole else selection


@page_rule(bp, f"/sites/<site_id>/record/{KIND_RULE}")
@login_required
def progress(site_id, kind):
    site_for(site_id, "export")
    return _progress_page(site_id, kind, _asked_part(kind))


def _progress_page(site_id, kind, selection=None, *, message=None, status=200, retry_at=None):
    found, _role = site_for(site_id, "export")
    jobs = record_jobs()
    db = get_db()
    key = selection.key() if selection else ""
    job = _job_summary(db, jobs.latest(site_id, kind, key))
    made = _job_summary(db, jobs.latest_done(site_id, kind, key))
    args = part_args(selection)
    response = render_page(
        "record/progress.html",
        status=status,
        site={"id": found["id"], "name": found["name"]},
        kind=kind,
        label=FILES[kind]["label"],
        make_label=FILES[kind]["make_label"],
        download_label=FILES[kind]["download_label"],
        part=selection_words(selection) if selection else None,
        part_fields=[
            (name, value)
            for name, values in args.items()
            for value in (values if isinstance(values, list) else [values])
        ],
        job=job,
        made=made,
        message=message,
        make=url_for("record.make_file", site_id=site_id, kind=kind),
        poll=url_for("record.progress_json", site_id=site_id, kind=kind, **args),
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
    """The newest file of the kind (and part) made in the background; none yet, and the page
    says so."""
    found, _role = site_for(site_id, "export")
    selection = _asked_part(kind)
    job = record_jobs().latest_done(site_id, kind, selection.key() if selection else "")
    if job is None:
        flash(f"No {FILES[kind]['what']} has been made here yet: make one first.")
        return redirect(
            url_for("record.progress", site_id=site_id, kind=kind, **part_args(selection))
        )
    return _send(found, job)


def _send(found: dict, job) -> Response:
    if job.kind not in FILES:
        abort(404)
    made = datetime.fromisoformat((job.finished_at or job.created_at).replace("Z", "+00:00"))
    suffix = FILES[job.kind]["suffix"]
    if job.selection:
        suffix = suffix.replace(".", "-part.", 1)
    return send_file(
        record_jobs().file_path(job),
        mimetype=FILES[job.kind]["mimetype"],
        as_attachment=True,
        download_name=safe_filename(found["name"], suffix, made),
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
        "download": url_for(
            "record.made_file",
            site_id=job.site_id,
            kind=job.kind,
            **part_args(store.Selection.from_key(job.selection)),
        )
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
