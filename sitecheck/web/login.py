"""Log-in, log-out and who is asking: server-side sessions that stop working at once."""

from __future__ import annotations

from functools import wraps

from flask import (
    Blueprint,
    abort,
    current_app,
    flash,
    g,
    make_response,
    redirect,
    render_template,
    request,
    session,
    url_for,
)
from flask_wtf import FlaskForm
from wtforms import EmailField, PasswordField, StringField
from wtforms.validators import DataRequired, Length, Regexp

from sitecheck import credentials, invitations, sessions, store
from sitecheck.web import get_db

bp = Blueprint("auth", __name__)

SESSION_KEY = "token"


class LoginForm(FlaskForm):
    # A shape check only: the account lookup is the real test of an address.
    email = EmailField(
        "E-mail",
        validators=[
            DataRequired(),
            Length(max=254),
            Regexp(
                r"^[^@\s]+@[^@\s]+$", message="Enter an e-mail address such as name@firm.example."
            ),
        ],
    )
    password = PasswordField("Password", validators=[DataRequired(), Length(max=256)])


def load_user() -> None:
    """Before every request: the user behind the cookie, or None. A revoked, expired or
    disabled session gives None straight away (the cookie alone proves nothing)."""
    g.user = None
    token = session.get(SESSION_KEY)
    if not token or request.path.startswith("/static/"):
        return
    user = sessions.user_for_token(get_db(), token)
    if user is None:
        session.pop(SESSION_KEY, None)
        return
    g.user = user


def begin_session(token: credentials.SessionToken) -> None:
    """A fresh cookie for a session just begun: never one that was there before (fixation)."""
    session.clear()
    session[SESSION_KEY] = token.token
    session.permanent = True


def login_required(view):
    @wraps(view)
    def wrapped(*args, **kwargs):
        api = request.path.endswith(".json") or request.path.startswith("/api/")
        if g.user is None:
            if api:
                abort(401)
            return redirect(
                url_for("auth.login", next=request.full_path if request.method == "GET" else None)
            )
        # A password someone else set is changed before anything else. The phone's outbox
        # (the API) still sends: nothing may wait on it.
        if g.user.get("must_change_password") and not api:
            flash("Choose your own password before going on: someone else knows this one.")
            return redirect(url_for("auth.change_password"))
        return view(*args, **kwargs)

    return wrapped


class PasswordForm(FlaskForm):
    current = PasswordField("Password now", validators=[DataRequired(), Length(max=256)])
    new = PasswordField("New password", validators=[DataRequired(), Length(max=256)])
    again = PasswordField("New password again", validators=[DataRequired(), Length(max=256)])


@bp.route("/account/password", methods=["GET", "POST"])
def change_password():
    # Not behind login_required: that sends a person who must change here, and would loop.
    if g.user is None:
        return redirect(url_for("auth.login", next=url_for("auth.change_password")))
    form = PasswordForm()
    if form.validate_on_submit():
        db = get_db()
        if not sessions.is_password(db, email=g.user["email"], password=form.current.data):
            form.current.errors.append("That is not your password now. Nothing was changed.")
        elif form.new.data != form.again.data:
            form.again.errors.append("The two new passwords differ. Type the same one twice.")
        elif form.new.data == form.current.data:
            form.new.errors.append("Choose a password other than the one you have now.")
        elif problem := credentials.password_problem(form.new.data, email=g.user["email"]):
            form.new.errors.append(problem)
        else:
            begin_session(sessions.new_password(db, user_id=g.user["id"], password=form.new.data))
            flash("Password changed. Other phones and browsers logged in as you are logged out.")
            return redirect(url_for("pages.home"))
    status = 400 if request.method == "POST" else 200
    return render_template(
        "password.html",
        form=form,
        must=bool(g.user.get("must_change_password")),
        min_length=credentials.PASSWORD_MIN,
    ), status


class JoinForm(FlaskForm):
    name = StringField("Your name", validators=[DataRequired("Enter your name."), Length(max=120)])
    new = PasswordField("Choose a password", validators=[DataRequired(), Length(max=256)])
    again = PasswordField("The password again", validators=[DataRequired(), Length(max=256)])


@bp.route("/join/<token>", methods=["GET", "POST"])
def join(token):
    """A single-use invitation link: a new address makes its account here (proving the
    address, since the link went to it); an address that has an account logs in instead."""
    db = get_db()
    token_hash = credentials.link_token_hash(token)
    link = store.open_link(db, token_hash=token_hash, purpose=store.INVITATION)
    if link is None:
        return _join_page(None, None, 410)
    invitation = store.get_invitation(db, link["invitation_id"]) if link["invitation_id"] else None
    if store.get_user_by_email(db, link["email"]) is not None:
        return _join_page(link, invitation, 200, has_account=True)
    form = JoinForm()
    if not form.validate_on_submit():
        return _join_page(link, invitation, 400 if form.errors else 200, form=form)
    if form.new.data != form.again.data:
        form.again.errors.append("The two passwords differ. Type the same one twice.")
    elif problem := credentials.password_problem(form.new.data, email=link["email"]):
        form.new.errors.append(problem)
    if form.errors.get("new") or form.again.errors:
        return _join_page(link, invitation, 400, form=form)
    try:
        user = invitations.make_account(
            db, token_hash=token_hash, name=form.name.data, password=form.new.data
        )
    except store.NotFound:  # used by a second request a moment ago
        return _join_page(None, None, 410)
    except store.DuplicateEmail:
        return _join_page(link, invitation, 409, has_account=True)
    begin_session(sessions.begin_session(db, user_id=user["id"], how={"by": "invitation link"}))
    flash("Your account is ready. Accept or decline the invitation below.")
    return redirect(url_for("pages.home"))


def _join_page(link, invitation, status: int, *, form=None, has_account=False):
    response = make_response(
        render_template(
            "join.html",
            link=link,
            invitation=invitation,
            form=form,
            has_account=has_account,
            min_length=credentials.PASSWORD_MIN,
        ),
        status,
    )
    # The link's token is in this page's address: keep it out of caches and Referer headers.
    response.headers["Cache-Control"] = "no-store"
    response.headers["Referrer-Policy"] = "no-referrer"
    return response


@bp.route("/login", methods=["GET", "POST"])
def login():
    form = LoginForm()
    if form.validate_on_submit():
        email = form.email.data.strip().lower()
        # The client's address as the trusted proxies give it (SITECHECK_TRUSTED_PROXIES).
        remote = request.remote_addr or "-"
        config = current_app.config
        tried = sessions.log_in(
            get_db(),
            email=email,
            password=form.password.data,
            remote_addr=remote,
            window_s=config["LOGIN_FAILURE_WINDOW_S"],
            rules=(config["LOG_IN_RULE_ACCOUNT"], config["LOG_IN_RULE_ADDRESS"]),
        )
        if tried.wait:
            body = render_template(
                "login.html",
                form=form,
                error=(
                    "Too many failed log-ins from here. Wait "
                    f"{credentials.wait_words(tried.wait)}, then try again; each further "
                    "failure makes the wait longer."
                ),
            )
            return body, 429, {"Retry-After": str(tried.wait)}
        if tried.token is None:
            return render_template(
                "login.html",
                form=form,
                error="That e-mail and password do not match an active account.",
            ), 401
        begin_session(tried.token)
        return redirect(
            credentials.same_site_path(request.args.get("next")) or url_for("pages.home")
        )
    status = 400 if form.errors else 200
    return render_template("login.html", form=form, error=None), status


@bp.post("/logout")
def logout():
    token = session.get(SESSION_KEY)
    if token:
        sessions.log_out(get_db(), token=token, user_id=g.user["id"] if g.user else None)
    session.clear()
    flash("You are logged out.")
    response = redirect(url_for("auth.login"))
    # Tell the browser to drop what this user left in it (the phone's unsent records are
    # warned about before the log-out form is sent).
    response.headers["Clear-Site-Data"] = '"cache", "storage"'
    return response
