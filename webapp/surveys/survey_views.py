"""Surveys: the list, recording one (authorised operator or safety officer), and one survey."""
from __future__ import annotations

from flask import abort, flash, redirect, render_template, request, url_for
from flask_login import current_user, login_required
from wtforms import SelectChoice

from models.core.base import utcnow
from models.core.errors import Invalid, errors_of
from models.core.units import RATE_UNITS, usv_h_per_unit
from models.instruments.authorisation_ops import authorised_for, instruments_for
from models.instruments.tables import Instrument
from models.people.tables import Role
from models.surveys.level_sources import FAMILY_LABELS, level_sources
from models.surveys.meter_ops import active_meters, calibration_on
from models.surveys.shielding import ASSUMPTIONS
from models.surveys.survey_ops import (
    SurveyInput,
    failing_points,
    off_reference_distance,
    open_survey_tasks,
    record_survey,
    surveys_of,
    unit_conversions,
    validate_survey,
)
from models.surveys.tables import Survey, SurveyMeter, SurveyTrigger
from webapp.access import roles_required
from webapp.extensions import db
from webapp.formatting import lab_today, settings
from webapp.forms import query_int, validate_with
from webapp.mail import link, tell_safety_officer
from webapp.shielding.setup import over_level_estimates
from webapp.surveys import bp
from webapp.surveys.forms import SurveyForm, utc
from webapp.surveys.sources import source_family


@bp.route("/surveys/")
@login_required
def surveys():
    """Latest surveys and the surveys asked for."""
    return render_template("surveys/surveys.html", surveys=surveys_of(db.session),
                           tasks=open_survey_tasks(db.session))


@bp.route("/surveys/<int:survey_id>")
@login_required
def survey(survey_id: int):
    """One survey with its points."""
    survey = db.session.get(Survey, survey_id) or abort(404)
    return render_template("surveys/survey.html", survey=survey, units=RATE_UNITS,
                           conversions=unit_conversions(survey), level_sources=level_sources(source_family()),
                           what_it_takes=over_level_estimates(failing_points(survey)), assumptions=ASSUMPTIONS,
                           failing=failing_points(survey), off_distance=off_reference_distance,
                           any_off_distance=any(off_reference_distance(p.distance_cm)
                                                for p in survey.points))


@bp.route("/surveys/new", methods=["GET", "POST"])
@roles_required(Role.OPERATOR, Role.SAFETY_OFFICER)
def new_survey():
    """Record a survey; a fail puts the instrument out of service and alerts the safety officer."""
    form = SurveyForm()
    today = lab_today()
    form.instrument_id.choices = [SelectChoice(i.id, i.name) for i in instruments_for(db.session, current_user, today)]
    form.meter_id.choices = [SelectChoice(0, "Choose a meter")] + [
        SelectChoice(m.id, _meter_label(m, calibration_on(m, today, settings().due_soon_days)))
        for m in active_meters(db.session)]
    if not form.is_submitted():
        form.instrument_id.data = query_int("instrument_id")
        form.trigger.data = request.args.get("trigger", SurveyTrigger.PERIODIC.value)
    if validate_with(form, lambda f: _validate(f, today)):
        survey = record_survey(db.session, _values(form))
        if not survey.passed:
            tell_safety_officer(f"Survey failed: {survey.instrument.name} is out of service",
                                f"{survey.instrument.out_of_service_reason}\nRecorded by "
                                f"{current_user.name}.\n{link('surveys.survey', survey_id=survey.id)}")
        db.session.commit()
        if survey.passed:
            flash(f"Survey recorded: passed (highest net {survey.max_net_usv_h:.3g} µSv/h).", "info")
        else:
            flash(f"Survey failed: {survey.instrument.name} is now out of service.", "error")
        return redirect(url_for("surveys.survey", survey_id=survey.id))
    return render_template("surveys/survey_new.html", form=form,
                           level_sources=level_sources(source_family()), units=RATE_UNITS,
                           family_label=FAMILY_LABELS.get(source_family()), mr_factors=_mr_factors())


def _mr_factors() -> list[tuple[float, float]]:
    """uSv/h per mR/h at a few tube voltages, for the form's note."""
    return [(kv, usv_h_per_unit("mR/h", kv)) for kv in (30.0, 40.0, 50.0, 60.0)]


def _meter_label(meter: SurveyMeter, calibration) -> str:
    """A meter in the choice list, saying whether it may be used today."""
    if not calibration.valid:
        return (f"{meter.serial} {meter.model} (out of calibration: last valid day "
                f"{calibration.last_valid})")
    return f"{meter.serial} {meter.model} (calibration valid until {calibration.last_valid})"


def _values(form: SurveyForm) -> SurveyInput:
    """The form as the domain takes it."""
    local = form.performed_at.data
    return SurveyInput(
        instrument=db.session.get(Instrument, form.instrument_id.data or 0),
        performed_at=utc(form.performed_at), survey_date=local.date() if local else None,
        performed_by=current_user._get_current_object(), trigger=SurveyTrigger(form.trigger.data),
        kv=form.kv.data, ma=form.ma.data, meter=db.session.get(SurveyMeter, form.meter_id.data or 0),
        unit=form.unit.data, points=form.point_values(), notes=form.notes.data)


def _validate(form: SurveyForm, today) -> None:
    """Domain checks, with each point's errors put beside its own cell."""
    values = _values(form)
    errors = {}
    if values.instrument is not None and not authorised_for(db.session, current_user,
                                                            values.instrument, today):
        errors["instrument_id"] = (f"You hold no current authorisation on {values.instrument.name}; "
                                   "an authorised operator or the safety officer records its surveys.")
    errors = {**errors_of(lambda: validate_survey(values, utcnow())), **errors}
    rows = form.filled_rows()
    if "points" in errors:  # no row filled in: say so beside the first row
        form.points[0].form.reading.errors = [errors.pop("points")]
    for key in [k for k in errors if k.startswith("points-")]:
        _, index, name = key.split("-", 2)
        rows[int(index)][name].errors = [errors.pop(key)]
    if errors or any(field.errors for row in form.points for field in row.form):
        raise Invalid(errors)
