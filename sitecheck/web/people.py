"""Accounts, for an account that may make sites: the people on its sites, disabling and
enabling them, and a new-password link; and the page that link opens.

The same as ``sitecheck users`` on the command line, limited to the people one shares a
site with (anyone else reads as absent, as on "Who may make sites").
"""

from __future__ import annotations

from flask import (
    Blueprint,
    current_app,
    flash,
    g,
    make_response,
    redirect,
    render_template,
    request,
    url_for,
)
from flask_wtf import FlaskForm
from wtforms import PasswordField
from wtforms.validators import DataRequired, Length

from sitecheck import credentials, sessions, store
from sitecheck.resets import ResetRefused, finish_reset, start_reset
from sitecheck.web import get_db
from sitecheck.web.access import require_may_make_sites
from sitecheck.web.login import begin_session, login_required
from sitecheck.web.sites import wake_mail_sender

bp = Blueprint("people", __name__)


class NewPasswordForm(FlaskForm):
    new = PasswordField("New password", validators=[DataRequired(), Length(max=256)])
    again = PasswordField("New password again", validators=[DataRequired(), Length(max=256)])


@bp.route("/new-password/<token>", methods=["GET", "POST"])
def new_password(token):
    """A single-use link from a reset: choose a new password, and every session ends."""
    db = get_db()
    token_hash = credentials.link_token_hash(token)
    link = store.open_link(db, token_hash=token_hash, purpose=store.PASSWORD_RESET)
    user = store.get_user_by_email(db, link["email"]) if link else None
    if link is None or user is None or user["disabled"]:
        return _new_password_page(None, 410)
    form = NewPasswordForm()
    if not form.validate_on_submit():
        return _new_password_page(link, 400 if form.errors else 200, form=form)
    if form.new.data != form.again.data:
        form.again.errors.append("The two passwords differ. Type the same one twice.")
    elif problem := credentials.password_problem(form.new.data, email=user["email"]):
        form.new.errors.append(problem)
    if form.new.errors or form.again.errors:
        return _new_password_page(link, 400, form=form)
    fresh = finish_reset(db, token_hash=token_hash, user_id=user["id"], password=form.new.data)
    if fresh is None:
        return _new_password_page(None, 410)  # used by another request a moment ago
    begin_session(fresh)
    flash("Your new password is set. Anywhere else you were logged in, you are logged out.")
    return redirect(url_for("pages.home"))


def _new_password_page(link, status: int, *, form=None):
    response = make_response(
        render_template(
            "new_password.html", link=link, form=form, min_length=credentials.PASSWORD_MIN
        ),
        status,
    )
    # The link's token is in this page's address: keep it out of caches and Referer headers.
    response.headers["Cache-Control"] = "no-store"
    response.headers["Referrer-Policy"] = "no-referrer"
    return response


@bp.get("/people")
@login_required
def people():
    require_may_make_sites()
    return _people_page(200)


@bp.post("/people/<int:user_id>/<any(disable, enable, 'new-password'):action>")
@login_required
def act(user_id, action):
    require_may_make_sites()
    db = get_db()
    person = next(
        (p for p in store.people_sharing_sites(db, g.user["id"]) if p["id"] == user_id), None
    )
    if person is None:
        return _people_page(404, error="That person is not on any of your sites.")
    if not FlaskForm().validate():
        return _people_page(400, error="Send the form again from this page.")
    name = person["name"] or "That person"
    if action in ("disable", "enable"):
        if user_id == g.user["id"]:
            return _people_page(409, error="You cannot disable or enable your own account here.")
        disable = action == "disable"
        sessions.set_disabled(db, user_id=user_id, disabled=disable, by_user_id=g.user["id"])
        flash(
            f"{name} can no longer log in; they were logged out everywhere."
            if disable
            else f"{name} may log in again."
        )
        return redirect(url_for("people.people"))
    user = store.get_user_by_id(db, user_id)
    mail = current_app.config.get("MAIL")
    try:
        started = start_reset(
            db, user=user, by_user_id=g.user["id"], mail=mail, base_url=request.host_url
        )
    except ResetRefused:
        return _people_page(409, error=f"{name}'s account is disabled; enable it first.")
    if started.mail_id is not None:
        wake_mail_sender()
        flash(
            f"A link to choose a new password is on its way to {name}'s e-mail address. It "
            "works once, for a day."
        )
        return redirect(url_for("people.people"))
    # No mail: the link is shown once, here, to hand over in person; never kept in a page
    # that could be cached or sent on in a Referer.
    return _people_page(200, handover={"name": name, "link": started.handover_link})


def _people_page(status: int, *, error: str | None = None, handover: dict | None = None):
    response = make_response(
        render_template(
            "people.html",
            people=store.people_sharing_sites(get_db(), g.user["id"]),
            error=error,
            handover=handover,
        ),
        status,
    )
    if handover:
        response.headers["Cache-Control"] = "no-store"
        response.headers["Referrer-Policy"] = "no-referrer"
    return response
