"""Each person's own notices page: which kinds come by e-mail, and how the last ones went.

The kinds offered are those of the roles the person holds on any of their sites; what a
notice holds and when it goes is :mod:`sitecheck.notices`.
"""

from __future__ import annotations

from flask import Blueprint, current_app, flash, g, redirect, render_template, url_for
from flask_wtf import FlaskForm
from wtforms import SelectMultipleField

from sitecheck import notices, store
from sitecheck.web import get_db
from sitecheck.web.login import login_required

bp = Blueprint("notices", __name__)


class NoticeForm(FlaskForm):
    # The kinds left on; checked against the person's own kinds in the view.
    on = SelectMultipleField("Send me by e-mail", choices=[], validate_choice=False)


@bp.route(notices.SETTINGS_PATH, methods=["GET", "POST"])
@login_required
def settings():
    db = get_db()
    kinds = notices.kinds_for_person(db, g.user["id"])
    form = NoticeForm()
    if form.validate_on_submit():
        notices.keep_choices(db, user_id=g.user["id"], on=form.on.data or [])
        flash("Your notice choices are kept.")
        return redirect(url_for("notices.settings"))
    off = store.notice_kinds_off(db, user_id=g.user["id"])
    recent = [
        {
            "site_name": n["site_name"],
            "reference": n["reference"],
            "kind": notices.KINDS[n["kind"]].heading if n["kind"] in notices.KINDS else n["kind"],
            "at": n["created_at"],
            "how": _how_it_went(n),
        }
        for n in store.notices_of(db, user_id=g.user["id"], limit=20)
    ]
    return render_template(
        "notices.html",
        form=form,
        kinds=[{"code": k.code, "setting": k.setting, "on": k.code not in off} for k in kinds],
        mail_on=current_app.config["MAIL"] is not None,
        quiet_minutes=store.QUIET_S // 60,
        recent=recent,
    )


def _how_it_went(n: dict) -> str:
    if n["dropped_at"]:
        return "not sent: the bearing had moved on before the message went"
    if n["sent_at"]:
        return "sent"
    if n["gave_up_at"]:
        return f"not sent: the mail server kept refusing it ({n['last_error']})"
    if n["mailed_at"]:
        return "in a message waiting to be sent"
    return "waiting for the next message"
