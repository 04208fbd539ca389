"""Forms for dosimeters, dose records, report imports and pregnancy declarations."""
from __future__ import annotations

from flask_wtf.file import FileField, FileRequired
from wtforms import DateField, FloatField, SelectChoice, SelectField, StringField, TextAreaField
from wtforms.validators import DataRequired, InputRequired, Length, Optional

from models.core.codes import Location, Quantity, Result
from models.core.labels import LOCATION_LABELS, RESULT_LABELS
from models.core.units import DOSE_UNITS
from models.doses.import_ops import FIELD_LABELS, FIELDS, ISO_DATE
from models.doses.record_ops import DoseEntry
from models.doses.tables import SOURCE_LABELS, DoseSource, DosimeterKind, ExchangeCycle, Hand
from webapp.forms import LogbookForm, choices

# Kind and hand in one choice, since a ring always names its hand.
WORN_CHOICES = [SelectChoice("whole_body", "Whole body"), SelectChoice("ring_left", "Ring, left hand"),
                SelectChoice("ring_right", "Ring, right hand"), SelectChoice("eye", "Eye (lens)"),
                SelectChoice("abdomen", "Abdomen")]


def worn_to_kind(worn: str) -> tuple[DosimeterKind, Hand | None]:
    """The dosimeter kind and hand of a 'worn' choice."""
    if worn.startswith("ring_"):
        return DosimeterKind.RING, Hand(worn.removeprefix("ring_"))
    return DosimeterKind(worn), None


def _member(cls, value):
    """The enum member for a submitted value, or None when it is not one."""
    try:
        return cls(value)
    except ValueError:
        return None


class DoseForm(LogbookForm):
    """One dose result."""

    person = SelectField("Person", coerce=int, validators=[InputRequired("Choose whose dose this is.")])
    dosimeter = SelectField("Dosimeter", coerce=lambda v: int(v) if v else None, validate_choice=False,
                            description="Optional; it must be issued to this person.")
    wear_start = DateField("Wear period start", validators=[InputRequired("Enter the first day.")])
    wear_end = DateField("Wear period end", validators=[InputRequired("Enter the last day.")],
                         description="Both days count: 1 to 31 January is a 31-day wear period.")
    quantity = SelectField("Quantity", choices=choices(Quantity, {q: q.value for q in Quantity}))
    location = SelectField("Location", choices=choices(Location, LOCATION_LABELS))
    result = SelectField("Result", choices=choices(Result, RESULT_LABELS))
    value = FloatField("Value", validators=[Optional()],
                       description="Leave empty for a lost or not-returned dosimeter.")
    unit = SelectField("Unit", choices=[SelectChoice(u, u) for u in DOSE_UNITS],
                       description="1 mrem = 0.01 mSv; stored in mSv.")
    mrd = FloatField("Minimum reportable dose (MRD)", validators=[Optional()],
                     description="In the same unit as the value; needed for a result below the MRD.")
    source = SelectField("Source", choices=choices(DoseSource, SOURCE_LABELS))
    basis = TextAreaField("Basis of the estimate", validators=[Length(max=4000)],
                          description="For an estimate: how the dose was worked out.")

    def entry(self, person_id: int | None = None) -> DoseEntry:
        """The entry the form describes (for `person_id` when given); the fields must have passed."""
        return DoseEntry(person_id=person_id or self.person.data, dosimeter_id=self.dosimeter.data,
                         wear_start=self.wear_start.data, wear_end=self.wear_end.data,
                         quantity=Quantity(self.quantity.data), location=Location(self.location.data),
                         result=Result(self.result.data), value=self.value.data, unit=self.unit.data,
                         mrd=self.mrd.data, source=DoseSource(self.source.data), basis=self.basis.data)


class AmendForm(DoseForm):
    """A correction: the new content and why."""

    reason = TextAreaField("Reason for the correction", validators=[Length(max=2000)],
                           description="Kept with the new version; the earlier version stays as it was.")


class IssueForm(LogbookForm):
    """Issue a dosimeter to a wearer."""

    wearer = SelectField("Wearer", coerce=int, validators=[InputRequired("Choose the wearer.")])
    serial = StringField("Serial number", validators=[DataRequired("Enter the serial number."),
                                                      Length(max=120)])
    worn = SelectField("Worn on", choices=WORN_CHOICES)
    issued_on = DateField("Issued on", validators=[InputRequired("Enter the issue date.")])
    exchange_cycle = SelectField("Exchange cycle", choices=choices(ExchangeCycle),
                                 description="Wear periods follow calendar months or quarters.")


class ReturnForm(LogbookForm):
    """The day a dosimeter came back for good."""

    returned_on = DateField("Returned on", validators=[InputRequired("Enter the return date.")])


class UploadForm(LogbookForm):
    """A dosimetry report and the layout to read it with."""

    file = FileField("Report (CSV)", validators=[FileRequired("Choose the CSV file.")])
    layout = SelectField("Columns", description="How to read the file's columns.")


class MappingForm(LogbookForm):
    """Which of the file's columns gives each field."""

    name = StringField("Name of this mapping", validators=[Length(max=120)],
                       description="For example the dosimetry service's name; it is kept for later files.")
    date_format = StringField("Date format", default="%d.%m.%Y",
                              description=f"Codes: %d day, %m month, %Y year (e.g. %d/%m/%Y); "
                                          f"'{ISO_DATE}' for 2026-01-31.")
    default_unit = SelectField("Unit when the file gives none", choices=[SelectChoice(u, u) for u in DOSE_UNITS])


for _name in FIELDS:
    setattr(MappingForm, _name, SelectField(FIELD_LABELS[_name], validate_choice=False))


class DeclareForm(LogbookForm):
    """The date of a pregnancy declaration."""

    declared_on = DateField("Date of the declaration", validators=[
        InputRequired("Enter the date of the declaration.")])
    conception_on = DateField("Estimated date of conception", validators=[Optional()],
                              description="Optional; as confidential as the declaration.")
    expected_end_on = DateField("Expected end of the pregnancy", validators=[Optional()],
                                description="Optional; the fetal dose is projected to this date.")


class EndForm(LogbookForm):
    """The day a declaration stops applying."""

    ended_on = DateField("Date", validators=[InputRequired("Enter the date.")])
