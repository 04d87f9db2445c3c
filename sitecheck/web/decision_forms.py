"""The forms behind the engineer's decision, the reopening, keeping a release after later
evidence, and the release for closing up.

Every one of these acts stays on the record for good, so each asks for words a reader can
follow later: a reason long enough to say something, a name that signs the release.
"""

from __future__ import annotations

from flask_wtf import FlaskForm
from wtforms import BooleanField, HiddenField, SelectMultipleField, StringField, TextAreaField
from wtforms.validators import AnyOf, DataRequired, InputRequired, Length, Regexp, ValidationError

from sitecheck import workflow

REASON_MIN = 10
REASON_MAX = 4000
NAME_MAX = 200
STATEMENT_MAX = 2000

DECISION_LABELS = workflow.DECISION_LABELS
DECISION_HINTS = {
    "accept": "The bearing may be closed up as it is.",
    "remedial": "Work is needed; a new as-built record must follow.",
    "measure-again": "The values cannot be trusted; the bearing goes back to awaiting survey.",
}
assert tuple(DECISION_LABELS) == workflow.DECISION_KINDS, "a decision kind has no words"

DEFAULT_STATEMENT = "The bearing has been inspected and may be closed up."

_UUID = r"^[0-9a-fA-F]{8}-[0-9a-fA-F]{4}-[0-9a-fA-F]{4}-[0-9a-fA-F]{4}-[0-9a-fA-F]{12}$"
_STALE_FORM = "This form is out of date; reload the page and look again."


def _strip(value):
    return value.strip() if isinstance(value, str) else value


def written_reason(what: str):
    """A reason of REASON_MIN..REASON_MAX characters, with a sentence for each way it fails."""

    def check(form, field):
        text = field.data or ""
        if not text:
            raise ValidationError(f"Write the reason for {what}; it stays on the record.")
        if len(text) < REASON_MIN:
            raise ValidationError(
                f"Write at least {REASON_MIN} characters for the reason (you wrote {len(text)}), "
                "so that anyone reading the record later can follow it."
            )
        if len(text) > REASON_MAX:
            raise ValidationError(
                f"Keep the reason under {REASON_MAX} characters (you wrote {len(text)})."
            )

    return check


class DecisionForm(FlaskForm):
    # The record and state the engineer looked at travel with the form, so a record that
    # arrived meanwhile makes the store refuse the decision instead of silently covering it.
    record_uuid = HiddenField(validators=[DataRequired(_STALE_FORM), Regexp(_UUID, 0, _STALE_FORM)])
    seen_state = HiddenField(
        validators=[DataRequired(_STALE_FORM), AnyOf(workflow.STATES, _STALE_FORM)]
    )
    # Drawn as radio buttons by the template, with a hint under each choice.
    kind = StringField(
        "Decision",
        validators=[
            InputRequired("Choose a decision: accept as built, remedial work or measure again."),
            AnyOf(
                workflow.DECISION_KINDS,
                "Choose a decision: accept as built, remedial work or measure again.",
            ),
        ],
    )
    reason = TextAreaField("Reason", filters=[_strip], validators=[written_reason("your decision")])
    # Asked only when the latest record fails as built and the decision is to accept it;
    # the page's label names the failing check and its utilisation.
    confirm_failing = BooleanField("I accept this bearing although it fails as built")

    @property
    def hidden_errors(self) -> list[str]:
        return sorted({e for f in (self.record_uuid, self.seen_state) for e in f.errors})


class ReopenForm(FlaskForm):
    reason = TextAreaField(
        "Reason for reopening", filters=[_strip], validators=[written_reason("reopening")]
    )


class KeepReleaseForm(FlaskForm):
    # The newest evidence the engineer saw travels with the form: anything recorded after it
    # makes the store refuse, so a release is never kept over what nobody looked at.
    seen_up_to = HiddenField(
        validators=[DataRequired(_STALE_FORM), Regexp(r"^[0-9]{1,18}$", 0, _STALE_FORM)]
    )
    reason = TextAreaField(
        "Reason for keeping the release",
        filters=[_strip],
        validators=[written_reason("keeping the release")],
    )


def _at_least_one(form, field):
    if not [v for v in field.data or [] if v]:
        raise ValidationError("Tick at least one bearing to release.")


class ReleaseForm(FlaskForm):
    # The ids are checked against the site in the view (another site's id answers 404), so
    # the field takes any value rather than a fixed list of choices.
    bearings = SelectMultipleField(
        "Bearings", choices=[], validate_choice=False, validators=[_at_least_one]
    )
    contractor_name = StringField(
        "Your name, as you sign",
        filters=[_strip],
        validators=[
            DataRequired("Write your name: the release is signed with it."),
            Length(max=NAME_MAX, message=f"Keep the name under {NAME_MAX} characters."),
        ],
    )
    statement = TextAreaField(
        "Statement",
        default=DEFAULT_STATEMENT,
        filters=[_strip],
        validators=[
            DataRequired("Write the statement you are signing."),
            Length(
                max=STATEMENT_MAX, message=f"Keep the statement under {STATEMENT_MAX} characters."
            ),
        ],
    )
    # "yes" once the contractor has seen the filled-in release on its confirmation step;
    # a first sending of a complete form only shows that step.
    confirmed = HiddenField()


class SignOffForm(FlaskForm):
    """The engineer's sign-off of the site record: the name it is signed with and the
    statement; what it covers is taken by the server at the moment of signing."""

    engineer_name = StringField(
        "Your name, as you sign",
        filters=[_strip],
        validators=[
            DataRequired("Write your name: the sign-off is signed with it."),
            Length(max=NAME_MAX, message=f"Keep the name under {NAME_MAX} characters."),
        ],
    )
    statement = TextAreaField(
        "Statement",
        filters=[_strip],
        validators=[
            DataRequired("Write the statement you are signing."),
            Length(
                max=STATEMENT_MAX, message=f"Keep the statement under {STATEMENT_MAX} characters."
            ),
        ],
    )
