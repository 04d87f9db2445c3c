"""The engineer's jobs: sites, their settings, the bearing schedule and who is on a site.

Thin views: forms parse what was typed (``bearing_form``, ``settings_form``,
``site_forms``), ``services`` runs the design check and stores, the store answers reads. Access is decided by ``site_for`` alone.
"""

from __future__ import annotations

import csv
import io
from typing import Any

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
from flask_wtf import FlaskForm
from werkzeug.exceptions import RequestEntityTooLarge
from wtforms import HiddenField
from wtforms.validators import AnyOf

from sitecheck import invitations, services, store, workflow
from sitecheck.bearing import InputError
from sitecheck.bearing.inputs import MATERIALS
from sitecheck.schedule import DESIGN_COLUMNS, REQUIRED_COLUMNS
from sitecheck.settings_words import (
    BASIS_GROUPS,
    CREEP_TABLES,
    GAMMA_M_BS_ROWS,
    GAMMA_M_EC6_ROWS,
    K_MORTARS,
    source_tag,
)
from sitecheck.web import get_db
from sitecheck.web.access import bearing_for, require_may_make_sites, site_for
from sitecheck.web.bearing_form import (
    SECTIONS,
    BearingForm,
    ReviseForm,
    design_from_form,
    form_data_from_design,
    put_core_error,
)
from sitecheck.web.form_fields import add_error
from sitecheck.web.login import login_required
from sitecheck.web.pages import (
    listing,
    looked_now,
    page_rule,
    render_page,
    search_words,
    since_you_looked,
)
from sitecheck.web.present import design_summary, utc_text
from sitecheck.web.settings_form import (
    BASIS_SCALARS,
    K_ROWS,
    REVIEW_FIELDS,
    SettingsForm,
    basis_rows,
    creep_field_name,
    gamma_field_name,
    k_field_name,
    settings_form_data,
    settings_from_form,
)
from sitecheck.web.site_forms import ImportForm, InviteForm, RemoveForm, RoleForm, SiteForm

bp = Blueprint("sites", __name__)

IMPORT_LIMIT = 2 * 1024 * 1024  # bytes: a schedule of thousands of rows is far smaller
IMPORT_LIMIT_WORDS = "2 MB"


@bp.app_template_filter("utc")
def _utc_filter(value):
    return utc_text(value)


# --- a new site --------------------------------------------------------------------------------


@bp.route("/sites/new", methods=["GET", "POST"])
@login_required
def new():
    require_may_make_sites()
    form = SiteForm()
    if form.validate_on_submit():
        site = services.make_site(
            get_db(),
            name=form.name.data,
            address=form.address.data or "",
            basis_name=form.basis.data,
            by_user_id=g.user["id"],
        )
        flash(f"Site “{site['name']}” created; you are its engineer.")
        return redirect(url_for("sites.show", site_id=site["id"]))
    return render_template("sites/new.html", form=form), 400 if form.errors else 200


# --- who may make sites ------------------------------------------------------------------------


class SiteMakerForm(FlaskForm):
    allowed = HiddenField(validators=[AnyOf(("yes", "no"))])


@bp.get("/may-make-sites")
@login_required
def site_makers():
    require_may_make_sites()
    return _site_makers_page(200)


@bp.post("/may-make-sites/<int:user_id>")
@login_required
def set_site_maker(user_id):
    require_may_make_sites()
    db = get_db()
    # Only people one shares a site with: the page lists no one else, and the answer for
    # any other id is the same as for an id that does not exist.
    person = next(
        (p for p in store.people_sharing_sites(db, g.user["id"]) if p["id"] == user_id), None
    )
    if person is None:
        return _site_makers_page(404, error="That person is not on any of your sites.")
    form = SiteMakerForm()
    if not form.validate():
        return _site_makers_page(400, error="Send the form again from this page.")
    allowed = form.allowed.data == "yes"
    if user_id == g.user["id"] and not allowed:
        return _site_makers_page(
            409,
            error="You cannot take this from yourself; ask another account that may make "
            "sites, so that one always remains.",
        )
    services.let_make_sites(db, user_id=user_id, allowed=allowed, by_user_id=g.user["id"])
    name = person["name"] or "They"
    flash(f"{name} may now make sites." if allowed else f"{name} may no longer make sites.")
    return redirect(url_for("sites.site_makers"))


def _site_makers_page(status: int, error: str | None = None):
    people = store.people_sharing_sites(get_db(), g.user["id"])
    return render_template(
        "sites/makers.html", people=people, error=error, form=SiteMakerForm(formdata=None)
    ), status


# --- the site and its bearing schedule ----------------------------------------------------------


SCHEDULE_PAGE = 100  # rows of the bearing schedule a page shows


@page_rule(bp, "/sites/<site_id>")
@login_required
def show(site_id):
    site, role = site_for(site_id, "view")
    db = get_db()
    counted = store.bearing_counts(db, site_id=site_id)
    # A site of thousands of bearings is listed a page at a time, by state and by search,
    # all worked out by the store: no row of another page is read.
    state = request.args.get("state")
    states = [state] if state in workflow.STATES else None
    query, words = search_words()
    matching = (
        sum(counted["states"].values())
        if states is None and not words
        else store.count_bearing_lines(db, site_id=site_id, states=states, words=words)
    )
    page = listing(matching, SCHEDULE_PAGE)
    rows = [
        _schedule_row(b)
        for b in store.bearing_lines(
            db,
            site_id=site_id,
            states=states,
            words=words,
            with_latest=True,
            limit=page.size,
            offset=page.offset,
        )
    ]
    since = since_you_looked(store.since_last_looked(db, user_id=g.user["id"], site_id=site_id))
    looked_now([site_id])
    return render_page(
        "sites/show.html",
        site=_site_summary(site),
        role=role,
        bearings=rows,
        counts=counted["states"],
        failing_at_design=counted["failing_at_design"],
        listing=page,
        chosen={"state": states[0] if states else None, "q": query},
        since=since.get(site_id, []),
        next_for_you=_next_for(site_id, role, counted["states"]),
    )


# Where each role acts on the bearings waiting for it.
_ACT_PAGES = {
    workflow.ENGINEER: ("review.queue", "to decide"),
    workflow.INSPECTOR: ("inspect.bearings", "to measure"),
    workflow.CONTRACTOR: ("release.site", "may be closed up"),
}


def _next_for(site_id: str, role: str, counts: dict) -> dict | None:
    """How many of this site's bearings wait for the person's role, and where to act."""
    if role not in _ACT_PAGES:
        return None
    waiting = sum(n for state, n in counts.items() if workflow.who_acts(state)[0] == role)
    endpoint, words = _ACT_PAGES[role]
    args: dict[str, Any] = {"site": site_id} if endpoint == "review.queue" else {"site_id": site_id}
    return {
        "count": waiting,
        "words": f"{waiting} bearing{'' if waiting == 1 else 's'} {words}",
        "url": url_for(endpoint, **args),
    }


def _site_summary(site: dict) -> dict:
    return {
        "id": site["id"],
        "name": site["name"],
        "address": site["address"],
        "basis": (site.get("code_basis") or {}).get("name"),
        "created_at": site["created_at"],
    }


def _schedule_row(line: dict) -> dict:
    """One row of the schedule from the store's line of a bearing (no trace is read)."""
    return {
        "id": line["id"],
        "reference": line["reference"],
        "location": line["location"],
        "state": line["state"],
        "revision": line["revision"],
        "design_utilisation": line["design_utilisation"],
        "design_passed": line["design_passed"],
        "governing": line["design_governing"],
        "governing_title": line["design_governing_title"],
        "latest": None
        if line["latest_record_uuid"] is None
        else {
            "uuid": line["latest_record_uuid"],
            "measured_at": line["latest_measured_at"],
            "utilisation": line["latest_utilisation"],
            "passed": line["latest_passed"],
            "blocking": line["latest_blocking"],
            "older_revision": line["latest_older_revision"],
        },
    }


# --- one bearing -------------------------------------------------------------------------------


@page_rule(bp, "/sites/<site_id>/bearings/<bearing_id>")
@login_required
def bearing(site_id, bearing_id):
    site, role = site_for(site_id, "view")
    b = bearing_for(site, bearing_id, with_result=True)
    db = get_db()
    names = _Names(db)
    records = [
        {
            "uuid": r["uuid"],
            "measured_at": r["measured_at"],
            "received_at": r["received_at"],
            "inspector": names(r["inspector_id"]),
            "design_revision": r["design_revision"],
            "utilisation": r["utilisation"],
            "passed": r["passed"],
            "blocking": r["blocking"],
            "older_revision": r["older_revision"],
            "late": r["late"],
            "latest": r["uuid"] == b["latest_record_uuid"],
        }
        for r in store.records_for_bearing(db, site_id=site_id, bearing_id=bearing_id)
    ]
    decisions = [
        {**d, "engineer": names(d["engineer_id"])}
        for d in store.decisions_for(db, site_id=site_id, bearing_id=bearing_id)
    ]
    releases = [
        {**r, "contractor": names(r["contractor_id"])}
        for r in store.releases_for(db, site_id=site_id, bearing_id=bearing_id)
    ]
    reopenings = [
        {**r, "engineer": names(r["engineer_id"])}
        for r in store.reopenings_for(db, site_id=site_id, bearing_id=bearing_id)
    ]
    events = [
        {
            "at": e["at"],
            "kind": e["kind"],
            "by": names(e["user_id"]),
            "detail": e["detail"],
            "summary": _event_summary(e["detail"] or {}),
        }
        for e in store.events_for(db, site_id=site_id, bearing_id=bearing_id)
    ]
    return render_page(
        "sites/bearing.html",
        site=_site_summary(site),
        role=role,
        bearing={k: v for k, v in b.items() if k != "site_id"},
        design=design_summary(b["design_input"]),
        result=b["design_result"],
        records=records,
        decisions=decisions,
        releases=releases,
        reopenings=reopenings,
        events=events,
    )


class _Names:
    """Who a user id is, looked up once per page (people removed from a site still show)."""

    def __init__(self, db):
        self.db, self.known = db, {}

    def __call__(self, user_id):
        if user_id is None:
            return "sitecheck"
        if user_id not in self.known:
            user = store.get_user_by_id(self.db, user_id)
            self.known[user_id] = (user["name"] or user["email"]) if user else f"user {user_id}"
        return self.known[user_id]


def _event_summary(detail: dict) -> str:
    """What changed, in a few words, from an event's before and after."""
    parts = []
    before, after = detail.get("before") or {}, detail.get("after") or {}
    if isinstance(before, dict) and isinstance(after, dict):
        if "state" in after and before.get("state") != after.get("state"):
            parts.append(f"{before.get('state') or '—'} → {after['state']}")
        elif "state" in after and not before:
            parts.append(after["state"])
    revision = detail.get("revision")
    if isinstance(revision, dict):
        parts.append(f"revision {revision.get('before')} → {revision.get('after')}")
    if detail.get("kind"):
        parts.append(str(detail["kind"]))
    for key in ("reason", "statement", "action"):
        if detail.get(key):
            parts.append(f"{key}: {detail[key]}")
    return "; ".join(parts)


# --- adding and revising a bearing by form -------------------------------------------------------


@bp.route("/sites/<site_id>/bearings/new", methods=["GET", "POST"])
@login_required
def add_bearing(site_id):
    site, _role = site_for(site_id, "edit-schedule")
    form = BearingForm()
    if form.is_submitted():
        form.validate()
        design = design_from_form(form, services.basis_for(site))
        if design is not None and not form.errors:
            db = get_db()
            try:
                added = services.add_bearing(
                    db,
                    site=site,
                    reference=form.reference.data.strip(),
                    location=form.location.data or "",
                    design=design,
                    user_id=g.user["id"],
                )
            except InputError as e:
                put_core_error(form, e)
            except store.DuplicateReference as e:
                add_error(form.reference, str(e))
            else:
                flash(f"Bearing {added['reference']} added and checked.")
                return redirect(url_for("sites.bearing", site_id=site_id, bearing_id=added["id"]))
        return _bearing_form(site, form, None, 400)
    return _bearing_form(site, form, None, 200)


@bp.route("/sites/<site_id>/bearings/<bearing_id>/revise", methods=["GET", "POST"])
@login_required
def revise_bearing(site_id, bearing_id):
    site, _role = site_for(site_id, "edit-schedule")
    current = bearing_for(site, bearing_id)
    if request.method != "POST":
        form = ReviseForm(
            data=form_data_from_design(
                current["design_input"], current["location"], current["revision"]
            )
        )
        return _bearing_form(site, form, current, 200)
    form = ReviseForm()
    form.validate()
    design = design_from_form(form, services.basis_for(site))
    if design is None or form.errors:
        return _bearing_form(site, form, current, 400)
    if form.revision.data and form.revision.data != str(current["revision"]):
        form.form_errors.append(
            f"Bearing {current['reference']} was revised by someone else while this form was "
            f"open (it is now at revision {current['revision']}). Nothing was saved: reload "
            "the form to see the new design, then make your change again."
        )
        return _bearing_form(site, form, current, 409)
    try:
        revised = services.revise_bearing(
            get_db(),
            site=site,
            bearing=current,
            design=design,
            location=form.location.data or "",
            user_id=g.user["id"],
        )
    except InputError as e:
        put_core_error(form, e)
        return _bearing_form(site, form, current, 400)
    except (workflow.WorkflowError, store.StoreError) as e:
        form.form_errors.append(f"Nothing was saved: {e}")
        return _bearing_form(site, form, current, 409)
    flash(f"Bearing {revised['reference']} revised (revision {revised['revision']}) and checked.")
    return redirect(url_for("sites.bearing", site_id=site_id, bearing_id=bearing_id))


def _bearing_form(site: dict, form, current: dict | None, status: int):
    return (
        render_template(
            "sites/bearing_form.html",
            site=site,
            form=form,
            current=current,
            sections=SECTIONS,
            locked=current is not None and current["state"] == workflow.RELEASED,
        ),
        status,
    )


# --- the schedule import -----------------------------------------------------------------------


@bp.route("/sites/<site_id>/import", methods=["GET", "POST"])
@login_required
def import_schedule(site_id):
    site, _role = site_for(site_id, "edit-schedule")
    form = ImportForm()
    report, status = None, 200
    if form.is_submitted():
        schedule, status = _schedule_given(form)
        if schedule is not None:
            report = services.import_schedule(
                get_db(),
                site=site,
                text=schedule,
                user_id=g.user["id"],
                keep_good_rows=bool(form.keep_good_rows.data),
            )
            status = 400 if report.errors and not report.added else 200
    return _import_page(site, form, report, status)


def _schedule_given(form) -> tuple[str | bytes | None, int]:
    """The uploaded file's bytes (read by the schedule's own reader, as the command line
    reads a file) or the pasted text; or None with a field error."""
    if not form.validate():
        return None, 400
    upload = form.file.data
    pasted = form.text.data or ""
    has_file = upload is not None and bool(getattr(upload, "filename", ""))
    if has_file and pasted.strip():
        add_error(form.text, "Give a file or pasted text, not both: clear one of them.")
        return None, 400
    if not has_file:
        if not pasted.strip():
            add_error(form.file, "Choose a CSV file, or paste the schedule below.")
            return None, 400
        if len(pasted.encode("utf-8")) > IMPORT_LIMIT:
            add_error(form.text, _too_large_words("The pasted text"))
            return None, 413
        # Cells pasted from a spreadsheet are tab-separated: trailing tabs are empty cells
        # of the last row, so only blank lines around the text are taken off.
        return pasted.strip("\r\n") + "\n", 200
    raw = upload.stream.read(IMPORT_LIMIT + 1)
    if len(raw) > IMPORT_LIMIT:
        add_error(form.file, _too_large_words("The file"))
        return None, 413
    return raw, 200


def _too_large_words(what: str) -> str:
    return (
        f"{what} is larger than {IMPORT_LIMIT_WORDS}, the most one import takes. Split the "
        "schedule into smaller files and import each; nothing was imported."
    )


def _import_page(site: dict, form, report, status: int):
    return (
        render_template(
            "sites/import.html",
            site=site,
            form=form,
            report=report,
            columns=DESIGN_COLUMNS,
            required=REQUIRED_COLUMNS,
            limit=IMPORT_LIMIT_WORDS,
        ),
        status,
    )


@bp.get("/sites/<site_id>/import/template.csv")
@login_required
def import_template(site_id):
    site_for(site_id, "edit-schedule")
    out = io.StringIO()
    # Design columns only: the import checks as-built columns but keeps no record of them,
    # so offering them would invite values that are never stored.
    csv.writer(out, lineterminator="\r\n").writerow(list(DESIGN_COLUMNS))
    return Response(
        out.getvalue(),
        mimetype="text/csv",
        headers={"Content-Disposition": 'attachment; filename="bearing-schedule.csv"'},
    )


def _too_large(error):
    """A body over the server's limits is refused before the view runs; say which limit."""
    if request.endpoint == "sites.import_schedule":
        description = (
            f"The schedule is too large to import: files may be up to {IMPORT_LIMIT_WORDS} "
            "and pasted text up to 1 MB. Split it into smaller files and import each; "
            "nothing was imported."
        )
        return render_template("error.html", code=413, description=description), 413
    from sitecheck.web.pages import error_page

    return error_page(error)


bp.register_error_handler(RequestEntityTooLarge, _too_large)


# --- site settings -----------------------------------------------------------------------------


@page_rule(bp, "/sites/<site_id>/settings")
@login_required
def settings(site_id):
    site, _role = site_for(site_id, "edit-site")
    basis, review = services.basis_for(site), services.settings_for(site)
    form = SettingsForm(data=settings_form_data(site, basis, review))
    return _settings_page(site, form, 200)


@bp.post("/sites/<site_id>/settings")
@login_required
def save_settings(site_id):
    site, _role = site_for(site_id, "edit-site")
    basis, review = services.basis_for(site), services.settings_for(site)
    form = SettingsForm()
    form.validate()
    parsed = settings_from_form(form, basis, review)
    if parsed is None or form.errors:
        return _settings_page(site, form, 400)
    code_basis, review_settings = parsed
    try:
        services.save_site_settings(
            get_db(),
            site_id=site_id,
            by_user_id=g.user["id"],
            name=form.name.data,
            address=form.address.data or "",
            code_basis=code_basis,
            review_settings=review_settings,
        )
    except (InputError, TypeError, ValueError) as e:
        form.form_errors.append(f"Nothing was saved: {e}")
        return _settings_page(site, form, 400)
    flash(
        "Settings saved. They apply to bearings added or revised from now on and to every "
        "re-check; design results already stored keep the values they were checked with."
    )
    return redirect(url_for("sites.settings", site_id=site_id))


def _settings_page(site: dict, form, status: int):
    basis, review = services.basis_for(site), services.settings_for(site)
    return render_page(
        "sites/settings.html",
        status=status,
        site=_site_summary(site),
        code_basis=basis.to_dict(),
        review_settings=review.as_dict(),
        sources=basis_rows(basis),
        review_sources={
            name: {"source": spec[4], "tag": source_tag(spec[4])}
            for name, spec in REVIEW_FIELDS.items()
        },
        form=form,
        basis_groups=BASIS_GROUPS,
        basis_scalars=BASIS_SCALARS,
        k_rows=K_ROWS,
        k_mortars=K_MORTARS,
        k_field_name=k_field_name,
        gamma_field_name=gamma_field_name,
        gamma_M_ec6_rows=GAMMA_M_EC6_ROWS,
        gamma_m_bs_rows=GAMMA_M_BS_ROWS,
        creep_tables=CREEP_TABLES,
        creep_field_name=creep_field_name,
        materials=MATERIALS,
        review_fields=REVIEW_FIELDS,
    )


# --- members -----------------------------------------------------------------------------------


@page_rule(bp, "/sites/<site_id>/members")
@login_required
def members(site_id):
    site, _role = site_for(site_id, "view")
    return _members_page(site, InviteForm(), 200)


@bp.post("/sites/<site_id>/members/invite")
@login_required
def invite(site_id):
    site, _role = site_for(site_id, "invite")
    form = InviteForm()
    if not form.validate():
        return _members_page(site, form, 400)
    db = get_db()
    email = store.normalise_email(form.email.data)
    # Members' addresses are on this page for whoever may invite, so saying that one is
    # already here tells nothing new; whether an address has an account elsewhere is never
    # said (the answers below are the same either way).
    member = next((m for m in store.members_of(db, site_id=site_id) if m["email"] == email), None)
    if member is not None:
        add_error(
            form.email,
            f"{email} is already on this site as {member['role']}; change their role in the "
            "list instead.",
        )
        return _members_page(site, form, 409)
    mail = current_app.config["MAIL"]
    invited = invitations.invite(
        db,
        site=site,
        email=email,
        role=form.role.data,
        inviter=g.user,
        mail=mail,
        base_url=request.host_url,
    )
    until = invitations.utc_words(invited.invitation["expires_at"])
    if mail is not None:
        wake_mail_sender()
        flash(
            f"Invitation made for {email} as {form.role.data}. An e-mail telling them what to "
            f"do next is on its way; the invitation waits for their answer until {until}."
        )
        return redirect(url_for("sites.members", site_id=site_id))
    handover = {
        "email": email,
        "role": form.role.data,
        "link": invited.handover_link,
        "until": until,
    }
    return _members_page(site, InviteForm(formdata=None), 201, handover=handover)


@bp.post("/sites/<site_id>/invitations/<invitation_id>/withdraw")
@login_required
def withdraw_invitation(site_id, invitation_id):
    site, _role = site_for(site_id, "invite")
    form = RemoveForm()
    if not form.validate():
        return _member_refusal(site, 400, "Send the form again.")
    if not invitations.withdraw(
        get_db(), invitation_id=invitation_id, site_id=site_id, by_user_id=g.user["id"]
    ):
        return _member_refusal(site, 404, "That invitation is not open on this site.")
    flash("Invitation withdrawn; its link no longer works.")
    return redirect(url_for("sites.members", site_id=site_id))


def wake_mail_sender() -> None:
    sender = current_app.extensions.get("mail_sender")
    if sender is not None:
        sender.wake()


# --- invitations, as the invited person sees them -----------------------------------------------


@bp.post("/invitations/<invitation_id>/<answer>")
@login_required
def answer_invitation(invitation_id, answer):
    if answer not in ("accept", "decline"):
        abort(404)
    form = RemoveForm()
    if not form.validate():
        flash("Send your answer again from this page; nothing was changed.")
        return redirect(url_for("pages.home"))
    try:
        invitation = invitations.answer(
            get_db(), invitation_id=invitation_id, user=g.user, accept=answer == "accept"
        )
    except store.NotFound as closed:
        abort(404, description=str(closed))
    if answer == "decline":
        flash(f"Invitation to {invitation['site_name']} declined.")
        return redirect(url_for("pages.home"))
    flash(f"You are on {invitation['site_name']} as {invitation['role']}.")
    return redirect(url_for("sites.show", site_id=invitation["site_id"]))


def _member_refusal(site: dict, status: int, message: str):
    """The members page again, with why the change to a membership was refused."""
    return _members_page(site, InviteForm(formdata=None), status, error=message)


@bp.post("/sites/<site_id>/members/<int:user_id>/role")
@login_required
def change_role(site_id, user_id):
    site, _role = site_for(site_id, "invite")
    form = RoleForm()
    db = get_db()
    current = store.role_of(db, user_id=user_id, site_id=site_id)
    if current is None:
        return _member_refusal(site, 404, "That person is not on this site.")
    if not form.validate():
        return _member_refusal(
            site,
            400,
            "Choose a role: " + ", ".join(workflow.ROLES) + ".",
        )
    new_role = form.role.data
    if new_role == current:
        flash("Their role is unchanged.")
        return redirect(url_for("sites.members", site_id=site_id))
    try:
        services.change_role(
            db, site_id=site_id, user_id=user_id, role=new_role, by_user_id=g.user["id"]
        )
    except store.LastEngineer as refusal:
        return _member_refusal(site, 409, str(refusal))
    flash(f"Role changed from {current} to {new_role}.")
    if user_id == g.user["id"] and not workflow.allowed(new_role, "invite"):
        return redirect(url_for("sites.show", site_id=site_id))
    return redirect(url_for("sites.members", site_id=site_id))


@bp.post("/sites/<site_id>/members/<int:user_id>/remove")
@login_required
def remove_member(site_id, user_id):
    site, _role = site_for(site_id, "invite")
    form = RemoveForm()
    db = get_db()
    current = store.role_of(db, user_id=user_id, site_id=site_id)
    if current is None:
        return _member_refusal(site, 404, "That person is not on this site.")
    if not form.validate():
        return _member_refusal(site, 400, "Send the form again.")
    try:
        services.remove_member(db, site_id=site_id, user_id=user_id, by_user_id=g.user["id"])
    except store.LastEngineer as refusal:
        return _member_refusal(site, 409, str(refusal))
    flash("Removed from this site. Their records stay on the site record.")
    if user_id == g.user["id"]:
        return redirect(url_for("pages.home"))
    return redirect(url_for("sites.members", site_id=site_id))


def _members_page(site: dict, invite_form, status: int, handover=None, error=None):
    db = get_db()
    may_invite = workflow.allowed(g.role, "invite")
    people = [
        {
            "id": m["id"],
            "name": m["name"],
            "email": m["email"],
            "role": m["role"],
            "disabled": m["disabled"],
            "since": m["created_at"],
            "you": m["id"] == g.user["id"],
        }
        for m in store.members_of(db, site_id=site["id"])
    ]
    pending = (
        [
            {
                "id": i["id"],
                "email": i["email"],
                "role": i["role"],
                "invited_by": i["invited_by_name"],
                "made_at": i["created_at"],
                "expires_at": i["expires_at"],
                "mail": _mail_words(i),
            }
            for i in store.open_invitations_for_site(db, site_id=site["id"])
        ]
        if may_invite
        else []
    )
    return render_page(
        "sites/members.html",
        status=status,
        site=_site_summary(site),
        members=people,
        invitations=pending,
        may_invite=may_invite,
        invite_form=invite_form,
        roles=list(workflow.ROLES),
        handover=handover,
        error=error,
    )


def _mail_words(invitation: dict) -> str:
    """How the invitation's e-mail went, in words for the inviter."""
    if invitation["mail_id"] is None:
        return "no e-mail: the link was handed over"
    if invitation["mail_sent_at"]:
        return "e-mail sent"
    if invitation["mail_gave_up_at"]:
        return f"e-mail could not be sent ({invitation['mail_error']}); invite them again"
    if invitation["mail_attempts"]:
        tries = invitation["mail_attempts"]
        return (
            f"e-mail not sent yet: {tries} tr{'y' if tries == 1 else 'ies'} failed "
            f"({invitation['mail_error']}); trying again"
        )
    return "e-mail waiting to be sent"
