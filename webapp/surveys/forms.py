"""Forms for survey meters, surveys and bypass permits."""
from __future__ import annotations

from datetime import UTC

from wtforms import (
    BooleanField,
    DateField,
    DateTimeLocalField,
    FieldList,
    FloatField,
    Form,
    FormField,
    IntegerField,
    SelectChoice,
    SelectField,
    StringField,
    TextAreaField,
)
from wtforms.validators import DataRequired, InputRequired, Length, Optional

from models.core.bounds import range_text
from models.core.due_dates import METER_CALIBRATION_MONTHS
from models.core.units import RATE_UNITS
from models.surveys.meter_ops import CALIBRATION_MONTHS_RANGE
from models.surveys.permit_ops import RING_RULE
from models.surveys.survey_ops import REFERENCE_DISTANCE_CM, TRIGGER_LABELS, PointInput
from models.surveys.tables import PointLevel, SurveyTrigger
from webapp.formatting import lab_zone
from webapp.forms import LogbookForm, choices

NUMBER = "Enter a number."
# Empty rows are ignored, so a fixed set of rows serves surveys of any size.
POINT_ROWS = 8
LOCAL_TIME = "%Y-%m-%dT%H:%M"


class LocalTimeField(DateTimeLocalField):
    """A date and time typed in the lab's time zone; left empty it is missing, not malformed."""

    def process_formdata(self, valuelist):
        """Read the input; an empty one gives no value, so the field's own message applies."""
        if valuelist and not valuelist[0].strip():
            self.data = None
            return
        super().process_formdata(valuelist)


def local_time_field(label: str, **kwargs) -> LocalTimeField:
    """A date and time typed in the lab's time zone."""
    return LocalTimeField(label, format=LOCAL_TIME, tz=lab_zone, description="Lab time.", **kwargs)


def utc(field: DateTimeLocalField):
    """A local time field's value as aware UTC."""
    return field.data.astimezone(UTC) if field.data else None


class MeterForm(LogbookForm):
    """What the meter is and its calibration."""

    serial = StringField("Serial number", validators=[DataRequired("Enter the meter's serial number."),
                                                      Length(max=120)])
    model = StringField("Model", validators=[Length(max=200)])
    detector_type = StringField("Detector type", validators=[Length(max=120)],
                                description="e.g. thin-window Geiger-Müller, ionisation chamber, scintillator.")
    calibrated_on = DateField("Calibrated on", validators=[InputRequired("Enter a date.")])
    calibration_interval_months = IntegerField(
        "Calibration interval (months)", default=METER_CALIBRATION_MONTHS,
        validators=[InputRequired(NUMBER)], render_kw={"min": 1, "max": CALIBRATION_MONTHS_RANGE[1]},
        description="12 months, and after any repair: a common state rule "
                    "(e.g. N.D. Admin. Code 33.1-10-15-08). "
                    f"Accepted: {range_text(*CALIBRATION_MONTHS_RANGE, 'months')}.")
    correction_factor = FloatField(
        "Low-energy correction factor", default=1.0, validators=[InputRequired(NUMBER)],
        description="Multiplies (reading - background) to give the net dose rate; from the "
                    "meter's calibration at the energies of your tubes.")
    energy_response_notes = TextAreaField("Notes on energy response", validators=[Length(max=2000)])

    def values(self) -> dict:
        """The submitted values as the domain takes them."""
        return {name: self[name].data for name in (
            "serial", "model", "detector_type", "calibrated_on", "calibration_interval_months",
            "correction_factor", "energy_response_notes")}


class CalibrationForm(LogbookForm):
    """A new calibration of a meter."""

    calibrated_on = DateField("New calibration date", validators=[InputRequired("Enter a date.")])
    calibration_interval_months = IntegerField(
        "Calibration interval (months)", default=METER_CALIBRATION_MONTHS,
        validators=[InputRequired(NUMBER)], render_kw={"min": 1, "max": CALIBRATION_MONTHS_RANGE[1]},
        description=f"Accepted: {range_text(*CALIBRATION_MONTHS_RANGE, 'months')}.")
    note = StringField("Certificate or note", validators=[Length(max=300)],
                       description="Kept in the audit log with the change.")


class ReasonForm(LogbookForm):
    """Why a record is switched off."""

    reason = TextAreaField("Reason", validators=[DataRequired("Say why."), Length(max=1000)])


class PointForm(Form):
    """One survey point; a row with neither place nor reading is ignored."""

    location = StringField("Where", validators=[Optional(), Length(max=200)])
    level = SelectField("Held to", choices=[SelectChoice(PointLevel.SURFACE.value, "Outer surface"),
                                            SelectChoice(PointLevel.HOUSING.value, "Tube housing, shutters closed")],
                        default=PointLevel.SURFACE.value)
    distance_cm = FloatField("Distance (cm)", default=REFERENCE_DISTANCE_CM,
                             validators=[Optional()])
    reading = FloatField("Reading", validators=[Optional()])
    background = FloatField("Background", default=0.0, validators=[Optional()])

    def is_blank(self) -> bool:
        """No place and no reading: a spare row."""
        return not (self.location.data or "").strip() and self.reading.data is None \
            and not self.reading.errors

    def value(self) -> PointInput:
        """The row as the domain takes it."""
        return PointInput(location=self.location.data or "", reading=self.reading.data,
                          background=self.background.data if self.background.data is not None else 0.0,
                          distance_cm=self.distance_cm.data, level=PointLevel(self.level.data))


class SurveyForm(LogbookForm):
    """A survey of one instrument with its points."""

    instrument_id = SelectField("Instrument", coerce=int, validate_choice=False)
    performed_at = local_time_field("When", validators=[InputRequired("Enter when the survey was made.")])
    trigger = SelectField("Reason for the survey", choices=choices(SurveyTrigger, TRIGGER_LABELS))
    kv = FloatField("Tube voltage during the survey (kV)", validators=[InputRequired(NUMBER)])
    ma = FloatField("Tube current during the survey (mA)", validators=[InputRequired(NUMBER)])
    meter_id = SelectField("Survey meter", coerce=int, validate_choice=False,
                           description="Must be within its calibration on the survey date.")
    unit = SelectField("Unit of the readings", choices=[SelectChoice(u.code, u.label) for u in RATE_UNITS.values()],
                       description="Readings and backgrounds are converted to µSv/h:")
    points = FieldList(FormField(PointForm), min_entries=POINT_ROWS, max_entries=50)
    notes = TextAreaField("Notes", validators=[Length(max=2000)])

    def point_values(self) -> list[PointInput]:
        """The filled-in rows."""
        return [row.form.value() for row in self.points if not row.form.is_blank()]

    def filled_rows(self) -> list:
        """The rows behind point_values, in the same order (to put errors beside them)."""
        return [row.form for row in self.points if not row.form.is_blank()]


class PermitForm(LogbookForm):
    """A request to bypass safety devices for a window."""

    instrument_id = SelectField("Instrument", coerce=int, validate_choice=False)
    devices = TextAreaField("Safety device(s) to bypass", validators=[Length(max=1000)],
                            description="e.g. door interlock of the front enclosure panel.")
    reason = TextAreaField("Reason", validators=[Length(max=2000)])
    window_start = local_time_field("Start")
    window_end = local_time_field("End")
    ring_dosimetry_confirmed = BooleanField("Ring dosimeters will be worn", description=RING_RULE)


class DecisionForm(LogbookForm):
    """The safety officer's note on approving or refusing."""

    note = TextAreaField("Note", validators=[Length(max=2000)],
                         description="Conditions of approval, or why the permit is refused "
                                     "(required to refuse).")
