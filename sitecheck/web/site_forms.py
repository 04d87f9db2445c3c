"""The forms of a site as a whole: a new site, the schedule import and the members."""

from __future__ import annotations

from flask_wtf import FlaskForm
from flask_wtf.file import FileField
from wtforms import (
    BooleanField,
    EmailField,
    SelectField,
    StringField,
    TextAreaField,
)
from wtforms.validators import DataRequired, Length, Optional, Regexp

from sitecheck import workflow
from sitecheck.bearing import (
    BASES,
)
from sitecheck.web.form_fields import options

# --- a new site --------------------------------------------------------------------------------


class SiteForm(FlaskForm):
    name = StringField(
        "Site name",
        validators=[DataRequired("Give the site a name."), Length(max=120)],
        description="As the engineer and the site know it, e.g. the job name and block.",
    )
    address = StringField("Address", validators=[Optional(), Length(max=300)])
    basis = SelectField(
        "Code basis",
        choices=options((b, b) for b in BASES),
        default=BASES[0],
        description="EC6 + UK NA for new work; BS 5628-1 for checking existing buildings.",
    )


# --- the schedule import -----------------------------------------------------------------------


class ImportForm(FlaskForm):
    file = FileField("Schedule file (CSV)")
    text = TextAreaField(
        "…or paste the schedule",
        description="Cells copied from a spreadsheet, or CSV text; header row first.",
        render_kw={"rows": 8, "spellcheck": "false"},
    )
    keep_good_rows = BooleanField("Import the good rows anyway")


# --- members -----------------------------------------------------------------------------------

ROLE_CHOICES = [(r, r) for r in workflow.ROLES]


class InviteForm(FlaskForm):
    email = EmailField(
        "E-mail",
        validators=[
            DataRequired("Enter their e-mail address."),
            Length(max=254),
            Regexp(
                r"^[^@\s]+@[^@\s]+\.[^@\s]+$",
                message="Enter an e-mail address such as name@firm.example.",
            ),
        ],
    )
    role = SelectField(
        "Role on this site", choices=options(ROLE_CHOICES), default=workflow.INSPECTOR
    )


class RoleForm(FlaskForm):
    role = SelectField("Role", choices=options(ROLE_CHOICES))


class RemoveForm(FlaskForm):
    pass
