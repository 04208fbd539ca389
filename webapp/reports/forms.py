"""The filter form shared by the export page, the CSV links and the command line."""
from __future__ import annotations

from datetime import date

from wtforms import DateField
from wtforms.validators import Optional, ValidationError

from models.reports.export_ops import Filters
from webapp.forms import LogbookForm

FIRST_DAY, LAST_DAY = date(1950, 1, 1), date(2100, 12, 31)


class ExportForm(LogbookForm):
    """From and to (lab dates, both inclusive), read from the query string."""

    class Meta:
        csrf = False

    first = DateField("From", name="from", validators=[Optional()])
    last = DateField("To", name="to", validators=[Optional()])

    def validate_first(self, field):
        """Dates outside 1950-2100 are typing errors, not records."""
        if field.data and not FIRST_DAY <= field.data <= LAST_DAY:
            raise ValidationError("Give a date between 1950 and 2100.")

    def validate_last(self, field):
        """Within 1950-2100 and not before the first day."""
        self.validate_first(field)
        if field.data and self.first.data and field.data < self.first.data:
            raise ValidationError("The last day is before the first.")

    def filters(self, instrument_id: int | None = None, person_id: int | None = None) -> Filters:
        """The form's dates with any list filters."""
        return Filters(self.first.data, self.last.data, instrument_id, person_id)
