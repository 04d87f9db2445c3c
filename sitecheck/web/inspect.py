"""The inspector's job: the bearings to measure, the as-built form, the server's verdict,
and the photos.

Views only parse, call the core, services, store and photos, and render. A record is stored
once per client-made UUID: a second send of the same form shows the first result.
"""

from __future__ import annotations

from flask import (
    Blueprint,
    Response,
    abort,
    current_app,
    flash,
    g,
    redirect,
    render_template,
    request,
    url_for,
)
from werkzeug.exceptions import RequestEntityTooLarge

from sitecheck import services, store, workflow
from sitecheck.bearing import input_errors
from sitecheck.bearing.errors import InputError
from sitecheck.bearing.review import (
    UNMEASURABLE,
    Measurements,
    as_built_input,
    could_not_measure,
    missing_measurements,
)
from sitecheck.bearing.serial import checklist_from_dict, measurements_from_dict
from sitecheck.photos import (
    IngestedPhoto,
    PhotoLimits,
    PhotoRejected,
    PhotosBusy,
    ingest_photo,
)
from sitecheck.web import get_db, photo_store
from sitecheck.web.access import bearing_for, site_for
from sitecheck.web.login import login_required
from sitecheck.web.pages import (
    listing,
    looked_now,
    page_rule,
    render_page,
    search_words,
    wants_json,
)
from sitecheck.web.record_form import (
    GROUPS,
    MAX_PHOTOS,
    SPECS,
    RecordForm,
    checklist_rows,
    comparison,
    designed_text,
    when_text,
)
from sitecheck.web.review import engineer_words

bp = Blueprint("inspect", __name__)

PHOTO_SIZES = ("display", "thumb")
# Measuring first: a bearing nobody has measured, or one that needs measuring again after
# remedial work, is what the inspector came for. A bearing whose design fails is not for
# survey at all: its design is being revised. The phone ranks them the same way
# (static/js/survey.js), from the state it last heard of.
SURVEY_RANK = {workflow.AWAITING_SURVEY: 0, workflow.REMEDIAL: 1}
OTHER_RANK, DESIGN_FAILS_RANK = 2, 3
NEXT_OFFERED = 12  # bearings after this one the form page names, for "next to measure"


def survey_rank(bearing: dict) -> int:
    if not bearing["design_passed"]:
        return DESIGN_FAILS_RANK
    return SURVEY_RANK.get(bearing["state"], OTHER_RANK)


# The same ranks for SQL: the survey list is put in order and searched by the store.
SURVEY_RANKS = store.SurveyRanks(
    first=SURVEY_RANK, other=OTHER_RANK, design_fails=DESIGN_FAILS_RANK
)


def survey_order(rows: list[dict]) -> list[dict]:
    """The bearings in survey order, each with ``order``: its place by reference alone,
    which the phone keeps to rank them again as states change. ``rows`` come by reference
    (as the store lists them), so references that read alike keep that order, as they do in
    the store's survey list (store.survey_page)."""
    by_reference = sorted(rows, key=lambda b: store.reference_order_key(b["reference"]))
    for n, b in enumerate(by_reference):
        b["order"] = n
    return sorted(by_reference, key=lambda b: (survey_rank(b), b["order"]))


SURVEY_PAGE = 50  # bearings the online survey list shows at once


@page_rule(bp, "/sites/<site_id>/inspect")
@login_required
def bearings(site_id):
    site, _role = site_for(site_id, "record")
    # One page of the matches, put in survey order and searched in SQL: the page reads its
    # own lines only. The phone's offline list has them all (the site pack).
    query, words = search_words()
    db = get_db()
    with store.read_snapshot(db):
        counts = store.survey_counts(db, site_id=site["id"], ranks=SURVEY_RANKS, words=words)
        page = listing(counts.found, SURVEY_PAGE)
        lines = store.survey_lines(
            db,
            site_id=site["id"],
            ranks=SURVEY_RANKS,
            words=words,
            limit=page.size,
            offset=page.offset,
        )
    items = [
        {
            "id": b["id"],
            "reference": b["reference"],
            "location": b["location"],
            "state": b["state"],
            "revision": b["revision"],
            "order": b["order"],
            "design_passed": bool(b["design_passed"]),
            "record_url": url_for("inspect.record_form", site_id=site["id"], bearing_id=b["id"]),
            "latest_record_url": (
                url_for("inspect.result", site_id=site["id"], record_uuid=b["latest_record_uuid"])
                if b["latest_record_uuid"]
                else None
            ),
        }
        for b in lines
    ]
    looked_now([site["id"]])
    return render_page(
        "inspect/bearings.html",
        site=_site_summary(site),
        bearings=items,
        to_survey=counts.to_survey,
        query=query,
        shown=counts.found,
        total=counts.total,
        listing=page,
        design_fails=counts.design_fails,
    )


@bp.route("/sites/<site_id>/bearings/<bearing_id>/record", methods=["GET", "POST"])
@login_required
def record_form(site_id: str, bearing_id: str):
    site, _role = site_for(site_id, "record")
    bearing = bearing_for(site, bearing_id)
    form = RecordForm()
    if request.method == "GET":
        form.start(bearing)
        return _form_page(site, bearing, form)

    db = get_db()
    general: list[str] = []
    form.validate()
    if form.record_uuid.errors:
        form.renew_uuid()
    else:
        record_uuid = form.record_uuid.data
        assert record_uuid is not None  # validate_record_uuid made it a UUID's text
        existing = store.get_record(db, site_id=site["id"], uuid=record_uuid)
        if existing is not None:
            if existing["bearing_id"] == bearing["id"] and existing["inspector_id"] == g.user["id"]:
                # The same form sent again (a double tap, a retry after a lost answer).
                flash("This as-built record was already stored; it was not stored twice.")
                return redirect(_result_url(site, existing["uuid"]))
            form.renew_uuid()
            general.append(
                "This form's record id belongs to another record. It has been renewed: "
                "check the values and send again."
            )

    revision = _posted_revision(form, bearing)
    chosen = _chosen_photos(form)
    photos = _check_photos(form, chosen)

    if revision is not None:
        # Fields that did not parse are left out (the design stands in), so the core can
        # still point at every other field in the same answer.
        general += form.add_core_errors(
            _core_problems(site, bearing, form), bearing["design_input"]
        )

    if general or _has_errors(form):
        if chosen:
            form.photos.errors = [
                *form.photos.errors,
                "Choose the photos again before sending: a browser cannot keep them when "
                "the form comes back.",
            ]
        return _form_page(site, bearing, form, general=general, status=400)

    try:
        stored = _store(db, site, bearing, form, revision, photos)
    except InputError as error:
        general = form.add_core_errors([error], bearing["design_input"])
        return _form_page(site, bearing, form, general=general, status=400)
    except store.UuidInUse:
        form.renew_uuid()
        general = [
            "This form's record id was used by another record meanwhile. It has been "
            "renewed: choose the photos again and send."
        ]
        return _form_page(site, bearing, form, general=general, status=400)
    if stored.created:
        flash("As-built record stored and re-checked by the server.")
    else:
        flash("This as-built record was already stored; it was not stored twice.")
    return redirect(_result_url(site, stored.row["uuid"]))


@page_rule(bp, "/sites/<site_id>/records/<record_uuid>")
@login_required
def result(site_id, record_uuid):
    site, _role = site_for(site_id, "view")
    db = get_db()
    record = store.get_record(db, site_id=site["id"], uuid=record_uuid)
    if record is None:
        abort(404, description="There is no such as-built record on this site.")
    bearing = store.get_bearing(db, site_id=site["id"], bearing_id=record["bearing_id"])
    design_input = _design_at(db, site, bearing, record["design_revision"])
    inspector = store.get_user_by_id(db, record["inspector_id"])
    photos = [
        {
            "uuid": p["uuid"],
            "width": p["width"],
            "height": p["height"],
            "captured_at": p["captured_at"],
            "display_url": url_for(
                "inspect.photo", site_id=site["id"], photo_uuid=p["uuid"], size="display"
            ),
            "thumb_url": url_for(
                "inspect.photo", site_id=site["id"], photo_uuid=p["uuid"], size="thumb"
            ),
        }
        for p in store.photos_for_record(db, site_id=site["id"], record_uuid=record["uuid"])
    ]
    return render_page(
        "inspect/result.html",
        site=_site_summary(site),
        bearing=_bearing_summary(bearing),
        record={
            "uuid": record["uuid"],
            "design_revision": record["design_revision"],
            "measured_at": record["measured_at"],
            "received_at": record["received_at"],
            "measured_text": when_text(record["measured_at"]),
            "received_text": when_text(record["received_at"]),
            "kind": record["kind"],
            "inspector": inspector["name"] if inspector else "unknown",
            "notes": record["notes"],
            "measurements": record["measurements"],
            "checklist": record["checklist"],
        },
        result=record["result"],
        reasons=record["reasons"],
        blocking=record["blocking"],
        flags={
            "older_revision": bool(record["older_revision"]),
            "late": bool(record["late"]),
            "sets_state": bearing["latest_record_uuid"] == record["uuid"],
        },
        not_measured=dict(UNMEASURABLE).get(record["why_not_measured"]),
        comparison=comparison(design_input, record["measurements"]),
        checklist=checklist_rows(record["checklist"]),
        photos=photos,
        record_again_url=(
            url_for("inspect.record_form", site_id=site["id"], bearing_id=bearing["id"])
            if workflow.allowed(g.role, "record")
            else None
        ),
    )


@bp.get("/sites/<site_id>/photos/<photo_uuid>/<size>")
@login_required
def photo(site_id, photo_uuid, size):
    site, _role = site_for(site_id, "view")
    if size not in PHOTO_SIZES:
        abort(404)
    row = store.get_photo(get_db(), site_id=site["id"], uuid=photo_uuid)
    if row is None:
        abort(404, description="There is no such photo on this site.")
    sha = row["sha256"] if size == "display" else (row["thumb_sha256"] or row["sha256"])
    try:
        data = photo_store().open(sha)
    except FileNotFoundError:
        abort(404, description="This photo's file is missing from the photo store.")
    response = Response(data, mimetype="image/jpeg")
    response.headers["Content-Disposition"] = f'inline; filename="{row["uuid"]}.jpg"'
    response.headers["X-Content-Type-Options"] = "nosniff"
    # Stored by content hash and never changed, so a phone may keep it for good; private
    # because it is one site's photo behind a log-in.
    response.headers["Cache-Control"] = "private, max-age=31536000, immutable"
    return response


@bp.errorhandler(RequestEntityTooLarge)
def too_large(error):
    limit_mb = (current_app.config.get("MAX_CONTENT_LENGTH") or 0) / (1024 * 1024)
    description = (
        f"What was sent is larger than {limit_mb:g} MB, the most one as-built record may carry "
        "with its photos. Nothing was saved. Go back, choose fewer photos or lower the camera's "
        "resolution, and send again."
    )
    if wants_json():
        return {"error": description, "status": 413}, 413
    back = None
    args = request.view_args or {}
    if request.endpoint == "inspect.record_form":
        back = url_for(
            "inspect.record_form", site_id=args["site_id"], bearing_id=args["bearing_id"]
        )
    return render_template("inspect/too_large.html", description=description, back=back), 413


# --- helpers -----------------------------------------------------------------------------------


def _form_page(site, bearing, form, *, general=(), status=200):
    design_input = bearing["design_input"]
    design = services.design_of(bearing)
    # With nothing measured yet, the fields the review would call "not measured" are the
    # ones a record needs to go straight to 'within design'.
    needed = set(missing_measurements(design, Measurements(), services.settings_for(site)))
    # The next bearings to measure after this one, in survey order, for the phone to offer
    # once this record is kept (it skips any it already holds unsent).
    upcoming = [
        {
            "id": b["id"],
            "reference": b["reference"],
            "url": url_for("inspect.record_form", site_id=site["id"], bearing_id=b["id"]),
        }
        for b in store.survey_next(
            get_db(),
            site_id=site["id"],
            bearing_id=bearing["id"],
            ranks=SURVEY_RANKS,
            limit=NEXT_OFFERED,
        )
    ]
    return render_page(
        "inspect/record_form.html",
        status=status,
        site=_site_summary(site),
        bearing=_bearing_summary(bearing),
        form=form,
        groups=GROUPS,
        specs=SPECS,
        designed={name: designed_text(design_input, name) for name in SPECS},
        needed=needed,
        released=bearing["state"] == workflow.RELEASED,
        general=list(general),
        max_photos=MAX_PHOTOS,
        photo_mb=PhotoLimits().max_bytes // 1_000_000,
        total_mb=(current_app.config.get("MAX_CONTENT_LENGTH") or 0) // (1024 * 1024),
        older_form=_older_form(form, bearing),
        design_fails=not bearing["design_passed"],
        verdict_context=services.mirror_context(site, design_input),
        capture={
            "site_id": site["id"],
            "site_name": site["name"],
            "bearing_id": bearing["id"],
            "reference": bearing["reference"],
            "revision": bearing["revision"],
            "survey_url": url_for("inspect.bearings", site_id=site["id"]),
            "next": upcoming,
        },
        engineer_words=_engineer_words(site, bearing),
    )


def _engineer_words(site, bearing) -> dict | None:
    """What the engineer asked for on this bearing, if it still stands (measure again,
    remedial work), to show above the form."""
    decision = store.latest_decisions(get_db(), site_id=site["id"], bearing_id=bearing["id"])
    return engineer_words(workflow.standing_decision(bearing["state"], decision.get(bearing["id"])))


def _core_problems(site, bearing, form) -> list[InputError]:
    """What the core refuses in the typed values, as the server's re-check would meet it."""
    try:
        measured = measurements_from_dict(form.measurements())
        if form.why:
            could_not_measure(form.why, measured, checklist_from_dict(form.checklist()))
            return []
        built = as_built_input(services.design_of(bearing), measured)
        return list(input_errors(built, services.basis_for(site)))
    except InputError as error:
        return [error]


def _has_errors(form) -> bool:
    return any(field.errors for field in form)


def _posted_revision(form, bearing) -> int | None:
    """The design revision the form was opened against; older ones are kept and flagged."""
    try:
        revision = int(form.design_revision.data)
    except (TypeError, ValueError):
        revision = None
    if revision is None or not 1 <= revision <= bearing["revision"]:
        form.design_revision.data = str(bearing["revision"])
        form.design_revision.errors = [
            "This form does not say which design revision it was opened against. It now "
            f"shows revision {bearing['revision']}: check the designed values and send again."
        ]
        return None
    return revision


def _older_form(form, bearing) -> bool:
    try:
        return int(form.design_revision.data) < bearing["revision"]
    except (TypeError, ValueError):
        return False


def _chosen_photos(form) -> list:
    # An empty file input still sends one part, with no file name.
    return [f for f in (form.photos.data or []) if getattr(f, "filename", None)]


def _check_photos(form, chosen) -> list[IngestedPhoto]:
    """Check every photo in memory before anything is stored; all or none are kept."""
    if len(chosen) > MAX_PHOTOS:
        form.photos.errors = [
            *form.photos.errors,
            f"Photos: at most {MAX_PHOTOS} for one as-built record; you chose {len(chosen)}.",
        ]
        return []
    accepted = []
    for number, upload in enumerate(chosen, start=1):
        name = (upload.filename or "")[:60]
        try:
            accepted.append(ingest_photo(upload.read()))
        except PhotoRejected as rejected:
            form.photos.errors = [
                *form.photos.errors,
                f"Photo {number} ({name}): {rejected.message}",
            ]
        except PhotosBusy:
            form.photos.errors = [
                *form.photos.errors,
                "The server is busy with other photos just now; nothing was stored. Send "
                "the form again in a minute.",
            ]
            break
    return accepted


def _store(db, site, bearing, form, revision, photos):
    """The record and its photos in one transaction, files included (see services)."""
    return services.record_as_built_with_photos(
        db,
        photos_store=photo_store(),
        photos=photos,
        max_photos=MAX_PHOTOS,
        site=site,
        bearing=bearing,
        uuid=form.record_uuid.data,
        measured_at=form.measured_at_utc,
        design_revision=revision,
        measurements=form.measurements(),
        checklist=form.checklist(),
        notes=form.notes.data or "",
        inspector_id=g.user["id"],
        provisional=form.provisional_verdict(),
        why_not_measured=form.why,
    )


def _design_at(db, site, bearing, revision: int) -> dict:
    if revision == bearing["revision"]:
        return bearing["design_input"]
    for row in store.bearing_revisions(db, site_id=site["id"], bearing_id=bearing["id"]):
        if row["revision"] == revision:
            return row["design_input"]
    return bearing["design_input"]


def _result_url(site, record_uuid):
    return url_for("inspect.result", site_id=site["id"], record_uuid=record_uuid)


def _site_summary(site) -> dict:
    return {"id": site["id"], "name": site["name"]}


def _bearing_summary(bearing) -> dict:
    return {
        "id": bearing["id"],
        "reference": bearing["reference"],
        "location": bearing["location"],
        "state": bearing["state"],
        "revision": bearing["revision"],
    }
