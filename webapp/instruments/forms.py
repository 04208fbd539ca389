"""Forms for describing instruments."""
from __future__ import annotations

from wtforms import FloatField, IntegerField, SelectChoice, SelectField, StringField, TextAreaField
from wtforms.validators import DataRequired, InputRequired, Length

from models.core.bounds import range_text
from models.instruments.instrument_ops import RANGES
from models.instruments.tables import (
    ENCLOSED_SURFACE_ACTION_LEVEL_USV_H,
    HOUSING_LEAKAGE_ACTION_LEVEL_USV_H,
    KIND_LABELS,
    Enclosure,
    InstrumentKind,
)
from webapp.forms import LogbookForm, choices

NUMBER = "Enter a number."


def _accepted(key: str) -> dict:
    """The accepted range of a number, said on the form and set on the input."""
    low, high, unit = RANGES[key]
    return {"render_kw": {"min": low, "max": high}, "description": f"Accepted: {range_text(low, high, unit)}."}


def _with_range(key: str, description: str) -> dict:
    """A field's description followed by its accepted range."""
    accepted = _accepted(key)
    return {**accepted, "description": f"{description} {accepted['description']}"}


class InstrumentForm(LogbookForm):
    """What the instrument is, its tube ratings and its safety schedule."""

    name = StringField("Name", validators=[DataRequired("Enter the instrument's name."),
                                           Length(max=120)])
    kind = SelectField("Kind", choices=choices(InstrumentKind, KIND_LABELS))
    room = StringField("Room", validators=[Length(max=120)])
    registration_number = StringField("Registration number", validators=[Length(max=120)])
    anode = StringField("Anode element", validators=[DataRequired("Enter the anode element."),
                                                     Length(max=3)],
                        description="Element symbol of the tube target, e.g. Cu, Mo, Ag.")
    max_kv = FloatField("Maximum tube voltage (kV)", validators=[InputRequired(NUMBER)], **_accepted("max_kv"))
    max_ma = FloatField("Maximum tube current (mA)", validators=[InputRequired(NUMBER)], **_accepted("max_ma"))
    max_power_w = FloatField("Maximum power (W)", validators=[InputRequired(NUMBER)],
                             **_accepted("max_power_w"))
    enclosure = SelectField("Enclosure", choices=[SelectChoice(Enclosure.ENCLOSED.value, "Enclosed beam"),
                                                  SelectChoice(Enclosure.OPEN_BEAM.value, "Open beam")])
    check_interval_days = IntegerField(
        "Safety-device check interval (days)", default=30, validators=[InputRequired(NUMBER)],
        **_with_range("check_interval_days",
                      "30 days is a common local rule; published outer bounds are 6 months "
                      "(ANSI N43.2, as quoted in DOE-HDBK-1109-97) and 12 months (25 Pa. Code 227a.20)."))
    survey_interval_days = IntegerField(
        "Survey interval (days)", default=365, validators=[InputRequired(NUMBER)],
        **_with_range("survey_interval_days", "At least yearly, and after changes (25 Pa. Code 227a)."))
    surface_action_level_usv_h = FloatField(
        "Survey action level, outer surface (µSv/h at 5 cm)",
        default=ENCLOSED_SURFACE_ACTION_LEVEL_USV_H, validators=[InputRequired(NUMBER)],
        **_with_range("surface_action_level_usv_h", "2.5 µSv/h at 5 cm for an enclosed system (ANSI N43.2, "
                      "as quoted in DOE-HDBK-1109-97)."))
    housing_action_level_usv_h = FloatField(
        "Survey action level, tube housing (µSv/h at 5 cm)",
        default=HOUSING_LEAKAGE_ACTION_LEVEL_USV_H, validators=[InputRequired(NUMBER)],
        **_with_range("housing_action_level_usv_h",
                      "25 µSv/h at 5 cm with shutters closed (25 Pa. Code 227a.13(b))."))

    def values(self) -> dict:
        """The submitted values as the domain takes them."""
        data = {name: self[name].data for name in (
            "name", "room", "registration_number", "max_kv", "max_ma", "max_power_w",
            "check_interval_days", "survey_interval_days", "surface_action_level_usv_h",
            "housing_action_level_usv_h")}
        data["anode"] = (self.anode.data or "").strip().capitalize()
        data["kind"] = InstrumentKind(self.kind.data)
        data["enclosure"] = Enclosure(self.enclosure.data)
        return data


class ServiceForm(LogbookForm):
    """Why an instrument is taken out of service."""

    reason = TextAreaField("Reason", validators=[DataRequired("Say why."), Length(max=1000)])
