"""Log-in, log-out and who is asking: server-side sessions that stop working at once."""

from __future__ import annotations

from datetime import datetime
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

from sitecheck import credentials, store
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
    db = get_db()
    sid = credentials.session_id_for(token)
    user = store.get_session_user(db, sid)
    if user is None:
        session.pop(SESSION_KEY, None)
        return
    # Given when it was last marked, the store writes only once a minute, not every request.
    store.touch_session(db, sid, seen_at=user.pop("session_seen_at"))
    g.user = user


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
        cred = store.login_credentials(db, g.user["email"])
        if not credentials.verify_login(cred["password_hash"] if cred else None, form.current.data):
            form.current.errors.append("That is not your password now. Nothing was changed.")
        elif form.new.data != form.again.data:
            form.again.errors.append("The two new passwords differ. Type the same one twice.")
        elif form.new.data == form.current.data:
            form.new.errors.append("Choose a password other than the one you have now.")
        elif problem := credentials.password_problem(form.new.data, email=g.user["email"]):
            form.new.errors.append(problem)
        else:
            # Every session of the account ends (a stolen one too); this one starts afresh.
            store.set_password_hash(
                db,
                user_id=g.user["id"],
                password_hash=credentials.hash_password(form.new.data),
                by_user_id=g.user["id"],
            )
            token = credentials.new_session_token()
            store.create_session(db, session_id=token.session_id, user_id=g.user["id"])
            session.clear()
            session[SESSION_KEY] = token.token
            session.permanent = True
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
        with store.transaction(db):
            used = store.use_link(db, token_hash=token_hash, purpose=store.INVITATION)
            if used is None:  # used by a second request a moment ago
                raise store.NotFound("link used")
            user = store.create_user(
                db,
                email=used["email"],
                name=form.name.data.strip(),
                password_hash=credentials.hash_password(form.new.data),
            )
    except store.NotFound:
        return _join_page(None, None, 410)
    except store.DuplicateEmail:
        return _join_page(link, invitation, 409, has_account=True)
    session_token = credentials.new_session_token()
    store.create_session(db, session_id=session_token.session_id, user_id=user["id"])
    store.add_event(db, kind="log-in", user_id=user["id"], detail={"by": "invitation link"})
    session.clear()
    session[SESSION_KEY] = session_token.token
    session.permanent = True
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
        db = get_db()
        email = form.email.data.strip().lower()
        # The client's address as the trusted proxies give it (SITECHECK_TRUSTED_PROXIES).
        remote = request.remote_addr or "-"
        wait = _log_in_wait(db, email, remote)
        if wait:
            store.add_event(
                db, kind="log-in throttled", detail={"email": email, "remote_addr": remote}
            )
            body = render_template(
                "login.html",
                form=form,
                error=(
                    "Too many failed log-ins from here. Wait "
                    f"{credentials.wait_words(wait)}, then try again; each further failure "
                    "makes the wait longer."
                ),
            )
            return body, 429, {"Retry-After": str(wait)}
        cred = store.login_credentials(db, email)
        ok = credentials.verify_login(cred["password_hash"] if cred else None, form.password.data)
        if ok and cred and cred["disabled"]:
            ok = False
        store.record_login_attempt(db, email=email, remote_addr=remote, ok=ok)
        if not ok:
            store.add_event(
                db, kind="log-in failed", detail={"email": email, "remote_addr": remote}
            )
            return render_template(
                "login.html",
                form=form,
                error="That e-mail and password do not match an active account.",
            ), 401
        token = credentials.new_session_token()
        store.create_session(db, session_id=token.session_id, user_id=cred["id"])
        store.add_event(db, kind="log-in", user_id=cred["id"], detail={"remote_addr": remote})
        session.clear()  # a fresh cookie at log-in: no fixation
        session[SESSION_KEY] = token.token
        session.permanent = True
        return redirect(
            credentials.same_site_path(request.args.get("next")) or url_for("pages.home")
        )
    status = 400 if form.errors else 200
    return render_template("login.html", form=form, error=None), status


def _log_in_wait(db, email: str, remote: str) -> int:
    """Seconds before this account may be tried again from this address (0: now)."""
    window = current_app.config["LOGIN_FAILURE_WINDOW_S"]
    now = store.utc_now()
    store.prune_login_attempts(db, older_than_s=window, now=now)
    waits = [0]
    for failed, rule in zip(
        store.failed_log_ins(db, email=email, remote_addr=remote, window_s=window, now=now),
        (current_app.config["LOG_IN_RULE_ACCOUNT"], current_app.config["LOG_IN_RULE_ADDRESS"]),
        strict=True,
    ):
        if failed.last_at is not None:
            since = (now - datetime.fromisoformat(failed.last_at)).total_seconds()
            waits.append(credentials.throttle_wait(failed.count, since, rule))
    return max(waits)


@bp.post("/logout")
def logout():
    token = session.get(SESSION_KEY)
    if token:
        db = get_db()
        store.revoke_session(db, credentials.session_id_for(token))
        if g.user is not None:
            store.add_event(db, kind="log-out", user_id=g.user["id"])
    session.clear()
    flash("You are logged out.")
    response = redirect(url_for("auth.login"))
    # Tell the browser to drop what this user left in it (the phone's unsent records are
    # warned about before the log-out form is sent).
    response.headers["Clear-Site-Data"] = '"cache", "storage"'
    return response
