"""The lab settings form."""
from __future__ import annotations

from zoneinfo import available_timezones

from wtforms import EmailField, IntegerField, SelectChoice, SelectField, StringField
from wtforms.validators import DataRequired, Email, InputRequired, Length, NumberRange, Optional

from models.core.settings import IDLE_TIMEOUT_RANGE, SESSION_LIFETIME_RANGE
from webapp.forms import LogbookForm


class LabForm(LogbookForm):
    """Name, time zone, display unit, due-soon window, safety officer's address."""

    lab_name = StringField("Lab name", validators=[DataRequired("Enter the lab's name."),
                                                   Length(max=200)])
    timezone = SelectField("Lab time zone", choices=sorted(available_timezones()),
                           description="Dose periods and due dates are counted in this zone.")
    display_unit = SelectField("Dose display unit", choices=[SelectChoice("mSv", "mSv"), SelectChoice("mrem", "mrem")],
                               description="Doses are stored in mSv; 1 mSv = 100 mrem "
                                           "(10 CFR 20.1004).")
    due_soon_days = IntegerField("'Due soon' window (days)", validators=[
        InputRequired("Enter a number of days."),
        NumberRange(min=0, max=90, message="Between 0 and 90 days.")],
        render_kw={"min": 0, "max": 90}, description="Accepted: 0 to 90 days.")
    safety_officer_email = EmailField("Safety officer's e-mail", validators=[
        Optional(), Email("Enter a valid e-mail address.")],
        description="Alerts also go to every person holding the safety officer role. Only a "
                    "radiation safety officer changes it.")
    idle_timeout_minutes = IntegerField("Log out after this long without use (minutes)", validators=[
        InputRequired("Enter a number of minutes."),
        NumberRange(*IDLE_TIMEOUT_RANGE, message="Between %(min)s and %(max)s minutes.")],
        description=f"Between {IDLE_TIMEOUT_RANGE[0]} and {IDLE_TIMEOUT_RANGE[1]} minutes; "
                    "default 480, a working day.")
    session_lifetime_hours = IntegerField("Log out this long after logging in, at the latest (hours)",
                                          validators=[
        InputRequired("Enter a number of hours."),
        NumberRange(*SESSION_LIFETIME_RANGE, message="Between %(min)s and %(max)s hours.")],
        description=f"Between {SESSION_LIFETIME_RANGE[0]} and {SESSION_LIFETIME_RANGE[1]} hours; "
                    "default 168, a week.")
    public_authorisation = SelectField(
        "Members of the public", choices=[SelectChoice("supervised", "may be authorised as supervised only"),
                                          SelectChoice("none", "may not be authorised on any instrument")])
    late_check_policy = SelectField(
        "Safety-device check overdue", choices=[SelectChoice("warn", "warn at Start"),
                                                SelectChoice("refuse", "refuse sessions until a check passes")])
    investigation_policy = SelectField(
        "Open investigation at or above a level",
        choices=[SelectChoice("tell", "tell the person at Start to see the safety officer"),
                 SelectChoice("clearance", "refuse sessions until the safety officer signs it off")])
