"""Recording surveys: points, net readings, pass or fail, and the survey tasks they complete."""
from __future__ import annotations

from dataclasses import dataclass
from datetime import date, datetime

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.base import utcnow
from models.core.errors import Invalid
from models.core.units import RATE_UNITS, unit_source, usv_h_per_unit
from models.instruments.instrument_ops import (
    SURVEY_STEP,
    note_commissioning_pass,
    set_out_of_service,
)
from models.instruments.tables import Instrument
from models.people.tables import Person
from models.surveys.meter_ops import validate_meter_usable
from models.surveys.tables import BypassPermit, PointLevel, Survey, SurveyMeter, SurveyPoint, SurveyTask, SurveyTrigger

# Both action levels are defined at 5 cm (REFERENCE.md, "Analytical X-ray equipment").
REFERENCE_DISTANCE_CM = 5.0

# Everyone sees survey tasks, so one asked for after a dose rise says who asked and nothing about
# whose dose, which level or when.
SURVEY_ASKED = "Asked for by the radiation safety officer. Survey the instrument."

TRIGGER_LABELS = {
    SurveyTrigger.INSTALLATION: "Installation",
    SurveyTrigger.PERIODIC: "Periodic",
    SurveyTrigger.AFTER_MAINTENANCE: "After maintenance",
    SurveyTrigger.AFTER_ALIGNMENT: "After alignment",
    SurveyTrigger.AFTER_BYPASS: "After a bypass",
    # Shown to everyone: it says who asked, never that someone's dose rose.
    SurveyTrigger.DOSE_RISE: "Asked for by the radiation safety officer",
    SurveyTrigger.OTHER: "Other",
}


def net_rate(reading_usv_h: float, background_usv_h: float, correction_factor: float) -> float:
    """(reading - background) x the meter's correction factor, never below zero."""
    return max(0.0, (reading_usv_h - background_usv_h) * correction_factor)


def action_level(instrument: Instrument, level: PointLevel) -> float:
    """The instrument's action level for a kind of point, uSv/h at 5 cm."""
    if level is PointLevel.HOUSING:
        return instrument.housing_action_level_usv_h
    return instrument.surface_action_level_usv_h


def off_reference_distance(distance_cm: float) -> bool:
    """True when a point was not read at the 5 cm the action levels are defined at."""
    # Readings are never scaled to 5 cm: the geometry near a leak is unknown.
    return abs(distance_cm - REFERENCE_DISTANCE_CM) > 1e-9


@dataclass(frozen=True)
class PointInput:
    """One point as entered: readings in the survey's unit of entry."""

    location: str
    reading: float | None
    background: float | None = 0.0
    distance_cm: float | None = REFERENCE_DISTANCE_CM
    level: PointLevel = PointLevel.SURFACE


@dataclass(frozen=True)
class SurveyInput:
    """A survey as entered; `survey_date` is performed_at's date in the lab's time zone."""

    instrument: Instrument | None
    performed_at: datetime | None
    survey_date: date | None
    performed_by: Person
    trigger: SurveyTrigger
    kv: float | None
    ma: float | None
    meter: SurveyMeter | None
    unit: str
    points: list[PointInput]
    notes: str | None = None


def validate_survey(values: SurveyInput, now: datetime) -> None:
    """Refuse, by field, every rule a survey breaks; point errors are keyed points-<i>-<field>."""
    errors = {}
    instrument = values.instrument
    if instrument is None:
        errors["instrument_id"] = "Choose the instrument surveyed."
    elif instrument.retired:
        errors["instrument_id"] = f"{instrument.name} is retired."
    if values.performed_at is None:
        errors["performed_at"] = "Enter when the survey was made."
    elif values.performed_at > now:
        errors["performed_at"] = "The survey time is in the future; record a survey once it is made."
    if instrument is not None:
        errors.update(_setting_errors(instrument, values.kv, values.ma))
    if values.survey_date is not None:
        try:
            validate_meter_usable(values.meter, values.survey_date)
        except Invalid as error:
            errors.update(error.errors)
    if values.unit not in RATE_UNITS:
        errors["unit"] = f"Choose a unit: {', '.join(RATE_UNITS)}."
    errors.update(_point_errors(values.points))
    if errors:
        raise Invalid(errors)


def _setting_errors(instrument: Instrument, kv: float | None, ma: float | None) -> dict:
    """Tube settings outside the instrument's ratings."""
    errors = {}
    if kv is None or not kv > 0:
        errors["kv"] = "Enter the tube voltage during the survey (above 0 kV)."
    elif kv > instrument.max_kv:
        errors["kv"] = (f"Tube voltage {kv:g} kV is above this instrument's rating of "
                        f"{instrument.max_kv:g} kV.")
    if ma is None or not ma > 0:
        errors["ma"] = "Enter the tube current during the survey (above 0 mA): survey with the beam on."
    elif ma > instrument.max_ma:
        errors["ma"] = (f"Tube current {ma:g} mA is above this instrument's rating of "
                        f"{instrument.max_ma:g} mA.")
    elif "kv" not in errors and kv * ma > instrument.max_power_w:
        errors["ma"] = (f"{kv:g} kV x {ma:g} mA = {kv * ma:g} W is above this instrument's "
                        f"power rating of {instrument.max_power_w:g} W.")
    return errors


def _point_errors(points: list[PointInput]) -> dict:
    """Missing or impossible values in the points."""
    if not points:
        return {"points": "Enter at least one survey point (where, and the reading)."}
    errors = {}
    for i, point in enumerate(points):
        if not point.location.strip():
            errors[f"points-{i}-location"] = "Say where this reading was taken."
        if point.reading is None or not point.reading >= 0:
            errors[f"points-{i}-reading"] = "Enter the reading (zero or more)."
        if point.background is None or not point.background >= 0:
            errors[f"points-{i}-background"] = "The background must be zero or more."
        if point.distance_cm is None or not point.distance_cm > 0:
            errors[f"points-{i}-distance_cm"] = "The distance must be more than 0 cm."
    return errors


def record_survey(session: Session, values: SurveyInput, now: datetime | None = None) -> Survey:
    """Save a survey; a fail puts the instrument out of service, a pass completes open tasks."""
    now = now or utcnow()
    validate_survey(values, now)
    instrument, meter = values.instrument, values.meter
    factor = usv_h_per_unit(values.unit, values.kv)
    points = [_point(instrument, meter, values.unit, factor, p) for p in values.points]
    worst = max(points, key=lambda p: p.net_usv_h / p.action_level_usv_h)
    survey = Survey(
        instrument=instrument, performed_at=values.performed_at, performed_by=values.performed_by,
        trigger=values.trigger, kv=values.kv, ma=values.ma, meter=meter,
        action_level_usv_h=worst.action_level_usv_h,
        max_net_usv_h=max(p.net_usv_h for p in points),
        passed=all(p.net_usv_h <= p.action_level_usv_h for p in points),
        notes=(values.notes or "").strip() or None, points=points)
    session.add(survey)
    session.flush()
    if survey.passed:
        for task in open_survey_tasks(session, instrument):
            task.survey_id, task.done_at = survey.id, now
        note_commissioning_pass(session, instrument, SURVEY_STEP, values.performed_at)
    else:
        set_out_of_service(session, instrument, failure_text(survey, values.survey_date))
        if not open_survey_tasks(session, instrument):
            raise_survey_task(session, instrument, SurveyTrigger.OTHER,
                              f"Survey again once the cause of the failed survey of "
                              f"{values.survey_date} is found and fixed.")
    session.flush()
    return survey


def _point(instrument: Instrument, meter: SurveyMeter, unit: str, factor: float,
           p: PointInput) -> SurveyPoint:
    """A stored point: readings in uSv/h at the unit's factor, its net value and its level."""
    reading, background = p.reading * factor, p.background * factor
    return SurveyPoint(location=p.location.strip(), distance_cm=p.distance_cm,
                       reading_usv_h=reading, background_usv_h=background,
                       net_usv_h=net_rate(reading, background, meter.correction_factor),
                       entered_unit=unit, usv_h_per_unit=factor, level=p.level,
                       action_level_usv_h=action_level(instrument, p.level))


def unit_conversions(survey: Survey) -> list[tuple[str, float, str]]:
    """Each unit other than uSv/h the survey's points were entered in: code, factor used, its source."""
    seen = {}
    for p in survey.points:
        if p.entered_unit != "uSv/h" and p.entered_unit not in seen:
            current = p.entered_unit in RATE_UNITS and abs(
                usv_h_per_unit(p.entered_unit, survey.kv) - p.usv_h_per_unit) < 1e-9
            source = (unit_source(p.entered_unit, survey.kv) if current
                      else "the factor in use when this survey was recorded")
            seen[p.entered_unit] = (p.entered_unit, p.usv_h_per_unit, source)
    return list(seen.values())


def failing_points(survey: Survey) -> list[SurveyPoint]:
    """The points whose net reading is over their action level."""
    return [p for p in survey.points if p.net_usv_h > p.action_level_usv_h]


def failure_text(survey: Survey, survey_date: date | None) -> str:
    """Why a survey failed, naming each point over its level."""
    over = "; ".join(f"{p.net_usv_h:.3g} µSv/h net at '{p.location}' is over the {p.level.value} "
                     f"action level of {p.action_level_usv_h:g} µSv/h" for p in failing_points(survey))
    return f"Survey of {survey_date} failed: {over}."


def shown_reason(task: SurveyTask) -> str:
    """A task's reason as shared pages show it (older dose-rise tasks named the level reached)."""
    return SURVEY_ASKED if task.trigger == SurveyTrigger.DOSE_RISE else task.reason


def raise_survey_task(session: Session, instrument: Instrument, trigger: SurveyTrigger,
                      reason: str, permit: BypassPermit | None = None) -> SurveyTask:
    """Ask for a survey of an instrument; the next passing survey of it completes the task."""
    if not reason.strip():
        raise Invalid.one("reason", "Say why a survey is needed.")
    task = SurveyTask(instrument=instrument, trigger=trigger, reason=reason.strip(),
                      bypass_permit_id=permit.id if permit is not None else None)
    session.add(task)
    session.flush()
    return task


def ask_for_survey(session: Session, instrument: Instrument, trigger: SurveyTrigger,
                   reason: str) -> SurveyTask:
    """Ask for a survey unless one for the same cause is already waiting; the open task either way."""
    waiting = session.scalar(sa.select(SurveyTask).where(
        SurveyTask.instrument_id == instrument.id, SurveyTask.trigger == trigger,
        SurveyTask.done_at.is_(None)).limit(1))
    return waiting or raise_survey_task(session, instrument, trigger, reason)


def open_survey_tasks(session: Session, instrument: Instrument | None = None) -> list[SurveyTask]:
    """Survey tasks not yet done, oldest first; for one instrument or all."""
    query = sa.select(SurveyTask).where(SurveyTask.done_at.is_(None))
    if instrument is not None:
        query = query.where(SurveyTask.instrument_id == instrument.id)
    return list(session.scalars(query.order_by(SurveyTask.raised_at, SurveyTask.id)))


def surveys_of(session: Session, instrument: Instrument | None = None, limit: int = 50) -> list[Survey]:
    """Latest surveys first; for one instrument or all."""
    query = sa.select(Survey)
    if instrument is not None:
        query = query.where(Survey.instrument_id == instrument.id)
    return list(session.scalars(query.order_by(Survey.performed_at.desc(), Survey.id.desc())
                                .limit(limit)))


def latest_failed_surveys(session: Session) -> list[Survey]:
    """For each instrument whose latest survey failed, that survey."""
    latest = (sa.select(Survey.instrument_id, sa.func.max(Survey.performed_at).label("at"))
              .group_by(Survey.instrument_id).subquery())
    return list(session.scalars(
        sa.select(Survey).join(latest, sa.and_(Survey.instrument_id == latest.c.instrument_id,
                                               Survey.performed_at == latest.c.at))
        .where(Survey.passed.is_(False)).order_by(Survey.performed_at)))
