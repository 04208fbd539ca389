"""Forms for sessions and authorisations."""
from __future__ import annotations

from wtforms import (
    BooleanField,
    DateField,
    DateTimeLocalField,
    FloatField,
    SelectChoice,
    SelectField,
    StringField,
    TextAreaField,
)
from wtforms.validators import InputRequired, Length, Optional

from models.instruments.tables import AuthorisationLevel
from models.sessions.session_ops import TEXT_LIMITS
from webapp.formatting import from_local
from webapp.forms import CheckboxesField, LogbookForm

NUMBER = "Enter a number."
WHEN = "Enter a date and time."


def optional_id(value: str | None) -> int | None:
    """A select's value as an id, or None for the empty choice (or anything not an id)."""
    text = str(value or "")
    # Nine digits fit every database's integer column; anything else is no id at all.
    return int(text) if text.isascii() and text.isdigit() and len(text) <= 9 else None


class StartForm(LogbookForm):
    """Settings and confirmations for a session that starts now."""

    kv = FloatField("Tube voltage (kV)", validators=[InputRequired(NUMBER)])
    ma = FloatField("Tube current (mA)", validators=[InputRequired(NUMBER)])
    purpose = StringField("Purpose or sample", validators=[Length(max=TEXT_LIMITS["purpose"])],
                          description=f"At most {TEXT_LIMITS['purpose']} characters.",
                          render_kw={"maxlength": TEXT_LIMITS["purpose"]})
    pre_use_checks_confirmed = BooleanField(
        "I saw the warning light and the shutter indicators working before starting")
    dosimeter_worn = BooleanField("I am wearing the dosimeters ticked below")
    dosimeter_ids = CheckboxesField("Which dosimeters", choices=[], validate_choice=False,
                                    description="Whole body, and a ring on each hand near the "
                                                "beam where the local rules ask for rings.")
    supervisor_id = SelectField("Supervised by", choices=[SelectChoice("", "—")], validate_choice=False,
                                description="Someone independently authorised on this instrument.")
    alignment = BooleanField("This is alignment work")
    configuration_changed = BooleanField("I changed the configuration")
    configuration_change = TextAreaField("What changed", validators=[Length(max=5000)],
                                         description="Optics, slits, shielding, sample stage…")
    notes = TextAreaField("Notes", validators=[Length(max=5000)])
    caution_acknowledged = BooleanField("I have read the caution above")

    def values(self) -> dict:
        """The submitted values as the session rules take them."""
        return {
            "kv": self.kv.data, "ma": self.ma.data, "purpose": self.purpose.data,
            "pre_use_checks_confirmed": self.pre_use_checks_confirmed.data,
            "dosimeter_worn": self.dosimeter_worn.data,
            "dosimeter_ids": [i for i in map(optional_id, (self.dosimeter_ids.data or [])[:50])
                              if i is not None],
            "supervisor_id": optional_id(self.supervisor_id.data),
            "alignment": self.alignment.data,
            "configuration_changed": self.configuration_changed.data,
            "configuration_change": self.configuration_change.data, "notes": self.notes.data,
            "caution_acknowledged": self.caution_acknowledged.data,
        }


class LogForm(StartForm):
    """A session written up after it ended."""

    instrument = SelectField("Instrument", choices=[], validate_choice=False)
    started_at = DateTimeLocalField("Started", format="%Y-%m-%dT%H:%M",
                                    validators=[InputRequired(WHEN)])
    ended_at = DateTimeLocalField("Ended", format="%Y-%m-%dT%H:%M",
                                  validators=[InputRequired(WHEN)])
    beam_on_minutes = FloatField("Beam-on time (min)", validators=[Optional()],
                                 description="Leave empty if the beam was on the whole session.")
    pre_use_checks_confirmed = BooleanField(
        "I saw the warning light and the shutter indicators working before the session")
    dosimeter_worn = BooleanField("I wore the dosimeters ticked below")

    def values(self) -> dict:
        """Adds the times, converted from the lab's time to UTC."""
        return {**super().values(), "started_at": from_local(self.started_at.data),
                "ended_at": from_local(self.ended_at.data),
                "beam_on_minutes": self.beam_on_minutes.data}


class EndForm(LogbookForm):
    """Beam-on time, asked when a session ends."""

    beam_on_minutes = FloatField("Beam-on time (min)", validators=[Optional()],
                                 description="Leave empty if the beam was on the whole session.")


class AuthoriseForm(LogbookForm):
    """The safety officer authorises a person on an instrument."""

    person_id = SelectField("Person", choices=[], validate_choice=False)
    level = SelectField("Level", choices=[SelectChoice(AuthorisationLevel.SUPERVISED.value, "Supervised"),
                                          SelectChoice(AuthorisationLevel.INDEPENDENT.value, "Independent")])
    trained_on = DateField("Trained on", validators=[InputRequired("Enter the training date.")])
    refresher_due = DateField("Refresher due", validators=[Optional()],
                              description="Leave empty for 12 months after training "
                                          "(common practice).")


class RevokeForm(LogbookForm):
    """Why an authorisation is withdrawn."""

    reason = TextAreaField("Reason", validators=[InputRequired("Say why."), Length(max=1000)])
