"""The lab settings form."""
from __future__ import annotations

from zoneinfo import available_timezones

from wtforms import EmailField, IntegerField, SelectField, StringField
from wtforms.validators import DataRequired, Email, InputRequired, Length, NumberRange, Optional

from webapp.forms import LogbookForm


class LabForm(LogbookForm):
    """Name, time zone, display unit, due-soon window, safety officer's address."""

    lab_name = StringField("Lab name", validators=[DataRequired("Enter the lab's name."),
                                                   Length(max=200)])
    timezone = SelectField("Lab time zone", choices=sorted(available_timezones()),
                           description="Dose periods and due dates are counted in this zone.")
    display_unit = SelectField("Dose display unit", choices=[("mSv", "mSv"), ("mrem", "mrem")],
                               description="Doses are stored in mSv; 1 mSv = 100 mrem "
                                           "(10 CFR 20.1004).")
    due_soon_days = IntegerField("'Due soon' window (days)", validators=[
        InputRequired("Enter a number of days."),
        NumberRange(min=0, max=90, message="Between 0 and 90 days.")],
        render_kw={"min": 0, "max": 90}, description="Accepted: 0 to 90 days.")
    safety_officer_email = EmailField("Safety officer's e-mail", validators=[
        Optional(), Email("Enter a valid e-mail address.")],
        description="Alerts also go to every person holding the safety officer role.")
