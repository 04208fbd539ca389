"""Forms for limit sets, the counting policies (each change with a reason) and investigations."""
from __future__ import annotations

from wtforms import (
    DateField,
    FloatField,
    IntegerField,
    SelectChoice,
    SelectField,
    StringField,
    SubmitField,
    TextAreaField,
)
from wtforms.validators import DataRequired, InputRequired, Length, Optional

from models.core.codes import LensSource, LevelKind, MrdPolicy, PeriodKind, Proration, Series, WorkerCategory
from models.exposure.limit_set_ops import RULE_COLUMNS
from webapp.exposure import labels
from webapp.forms import LogbookForm, choices


def _reason() -> TextAreaField:
    """The reason the audit trail keeps with the change."""
    return TextAreaField("Reason for the change", validators=[
        DataRequired("Say why; the audit trail keeps the reason."), Length(max=500)])


def _from_on() -> DateField:
    """The first lab date a change of the rules applies to (today when left empty)."""
    return DateField("Applies from", validators=[Optional()],
                     description="The first day (lab date) these rules apply to; empty for today. "
                                 "Figures for earlier dates keep the rules that stood then.")


class ReasonForm(LogbookForm):
    """Only a reason: removing a rule."""

    reason = _reason()


class ChooseSetForm(LogbookForm):
    """The limit set in force."""

    limit_set_id = SelectField("Limit set in force", coerce=int,
                               validators=[InputRequired("Choose a limit set.")])
    from_on = _from_on()
    reason = _reason()


class PoliciesForm(LogbookForm):
    """How records are counted."""

    proration = SelectField("Wear periods that cross a period boundary",
                            choices=choices(Proration, labels.PRORATION))
    mrd_policy = SelectField("Results below the minimum reportable dose (MRD)",
                             choices=choices(MrdPolicy, labels.MRD))
    lens_source = SelectField("Lens of the eye without an Hp(3) dosimeter",
                              choices=choices(LensSource, labels.LENS))
    five_year_first_year = IntegerField(
        "First year of the five-year blocks",
        validators=[InputRequired("Enter a year.")],
        description="Blocks run five calendar years from this year (ICRP 'defined periods').")
    from_on = _from_on()
    reason = _reason()


class CopyForm(LogbookForm):
    """A name for an editable copy."""

    name = StringField("Name of the copy", validators=[DataRequired("Name the copy."),
                                                       Length(max=120)])


class RuleForm(LogbookForm):
    """One rule of a copied set: limit, investigation levels and their source."""

    category = SelectField("Worker category", choices=choices(WorkerCategory, labels.CATEGORY))
    series = SelectField("Dose series", choices=choices(Series, labels.SERIES))
    period = SelectField("Period", choices=choices(PeriodKind, labels.PERIOD))
    limit_msv = FloatField("Limit (mSv)", validators=[Optional()], description="Empty: no limit, "
                           "investigation levels only.")
    level1_kind = SelectField("Level I given as", choices=[SelectChoice("", "not set")]
                              + choices(LevelKind, labels.LEVEL_KIND))
    level1_value = FloatField("Level I", validators=[Optional()],
                              description="A fraction (0.25 = 25 % of the limit) or mSv.")
    level2_kind = SelectField("Level II given as", choices=[SelectChoice("", "not set")]
                              + choices(LevelKind, labels.LEVEL_KIND))
    level2_value = FloatField("Level II", validators=[Optional()])
    clause = StringField("Source (clause)", validators=[Length(max=300)],
                         description="The regulation's clause, or 'local rule'.")
    reason = _reason()

    def values(self) -> dict:
        """The rule's values as the domain check takes them."""
        return {name: self[name].data for name in RULE_COLUMNS}


NOTE_LENGTH = 5000


class ReviewForm(LogbookForm):
    """The safety officer's review of an investigation: what was asked, found and done."""

    questions = TextAreaField("Questions asked", validators=[Length(max=NOTE_LENGTH)],
                              description="Whom you asked what: work done, dosimeter handling, "
                                          "incidents, instruments used.")
    findings = TextAreaField("Findings", validators=[Length(max=NOTE_LENGTH)],
                             description="What explains the dose, or that nothing does.")
    actions = TextAreaField("Actions", validators=[Length(max=NOTE_LENGTH)],
                            description="What was changed or decided; 'none needed' if so.")
    save = SubmitField("Save the review")
    sign = SubmitField("Save and sign off")
