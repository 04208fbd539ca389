"""Forms for reporting incidents and following them up."""
from __future__ import annotations

from wtforms import DateField, DateTimeLocalField, FloatField, SelectChoice, SelectField, TextAreaField
from wtforms.validators import InputRequired, Length

from models.core.codes import Location, Quantity
from models.incidents.incident_ops import TYPE_LABELS
from models.incidents.tables import IncidentType
from webapp.forms import CheckboxesField, LogbookForm, choices


class ReportForm(LogbookForm):
    """What happened, where, to whom, and what was done at once."""

    type = SelectField("What kind of incident", choices=[SelectChoice("", "—")] + choices(IncidentType, TYPE_LABELS),
                       validate_choice=False)
    instrument = SelectField("Instrument", choices=[], validate_choice=False)
    occurred_at = DateTimeLocalField("When it happened", format="%Y-%m-%dT%H:%M",
                                     validators=[InputRequired("Enter when it happened.")])
    people = CheckboxesField("People involved", choices=[], validate_choice=False)
    description = TextAreaField("What happened", validators=[Length(max=10000)])
    immediate_actions = TextAreaField("What was done at once", validators=[Length(max=10000)],
                                      description="E.g. generator switched off, instrument "
                                                  "secured, dosimeters kept, RSO telephoned.")


class NoteForm(LogbookForm):
    """A follow-up note."""

    text = TextAreaField("Note", validators=[Length(max=10000)])


class StopForm(LogbookForm):
    """Why the instrument goes out of service."""

    reason = TextAreaField("Reason", validators=[Length(max=1000)])


class DoseForm(LogbookForm):
    """The safety officer's dose estimate for one person."""

    person_id = SelectField("Person", choices=[], validate_choice=False)
    quantity = SelectField("Quantity", choices=[SelectChoice(q.value, q.value) for q in Quantity])
    location = SelectField("Where", choices=choices(Location))
    wear_start = DateField("Period from", validators=[InputRequired("Enter the first day.")])
    wear_end = DateField("Period to", validators=[InputRequired("Enter the last day.")],
                         description="Usually the day of the incident for both.")
    value = FloatField("Estimated dose", validators=[InputRequired("Enter a number.")])
    unit = SelectField("Unit", choices=[SelectChoice("mSv", "mSv"), SelectChoice("mrem", "mrem")])
    basis = TextAreaField("Basis of the estimate", validators=[Length(max=10000)],
                          description="How it was worked out: dose rate, distance, time, "
                                      "reconstruction, dosimeter read-out.")


class CloseForm(LogbookForm):
    """What was found and done."""

    closing_note = TextAreaField("Closing note", validators=[Length(max=10000)])
