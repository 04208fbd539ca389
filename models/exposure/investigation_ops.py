"""Investigations: raised when a dose crosses a level, reviewed and signed off by the safety officer.

Decisions:
- One investigation per person x quantity x location x period x period start x level, at the
  level reached (a jump straight to level II raises level II only). A crossing already covered
  by an investigation at the same or a higher level is not raised again.
- Rolling windows start on a new day every day, so for them "the same window" means an
  overlapping one: a crossing is new only once the earlier investigation's window has rolled out.
- The worst hand is one of the two hands, so its crossing is raised as that hand's. The lens
  assessed from Hp(0.07) whole body reads the skin's records but has its own limit, so each
  keeps its own series.
- A rise at level I or above for a person authorised on an instrument asks for a survey of every
  instrument they used in the window of the crossing. The survey task names the level reached
  but neither the person nor a dose figure, since operators see survey tasks.
"""
from __future__ import annotations

from dataclasses import dataclass
from datetime import date, datetime, time, timedelta
from zoneinfo import ZoneInfo

import numpy as np
import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.base import utcnow
from models.core.codes import Level, Location, PeriodKind, Quantity, Series, code, decode
from models.core.errors import Invalid
from models.core.labels import LEVEL_LABELS, shared_row_label
from models.core.settings import lab_zone
from models.exposure.figures_ops import lab_evaluation
from models.exposure.lab_ops import LabEvaluation
from models.exposure.tables import Investigation
from models.instruments.tables import Authorisation, Instrument
from models.people.tables import Person
from models.sessions.tables import InstrumentSession
from models.surveys.survey_ops import SURVEY_ASKED, raise_survey_task
from models.surveys.tables import SurveyTask, SurveyTrigger

ROLLING = {PeriodKind.ROLLING_12_MONTHS, PeriodKind.ROLLING_FIVE_YEARS}


@dataclass(frozen=True)
class Crossing:
    """A person x quantity x location x period window at level I or above on the evaluation date."""

    person_id: int
    series: Series
    quantity: Quantity
    location: Location
    period: PeriodKind
    period_start: date
    window_days: int
    level: Level
    dose_msv: float


_HAND_SERIES = np.array([code(Series.LEFT_HAND), code(Series.RIGHT_HAND)])


def crossings(lab: LabEvaluation) -> list[Crossing]:
    """Every row at level I or above, one per investigation key, selected from the arrays at once."""
    evaluation = lab.evaluation
    totals = evaluation.totals
    windows = totals.windows
    p, s, t = np.nonzero(evaluation.level >= code(Level.LEVEL_1))
    # Highest level first, so the key's first occurrence below is the level reached.
    order = np.argsort(-evaluation.level[p, s, t], kind="stable")
    p, s, t = p[order], s[order], t[order]
    location = totals.location[p, s, t]
    # The worst hand's row is raised as the row of the hand it reads.
    series = np.where(s == code(Series.WORST_HAND),
                      _HAND_SERIES[(location == code(Location.RIGHT_HAND)).astype(int)], s)
    start = windows.start[p, t]
    _, first = np.unique(np.stack([p, series, t, start.view(np.int64)], axis=1), axis=0,
                         return_index=True)
    p, s, t, series, start = p[first], s[first], t[first], series[first], start[first]
    return [
        Crossing(int(lab.person_ids[i]), series_, quantity, location_, period, start_day,
                 int(days), level, float(dose))
        for i, series_, quantity, location_, period, start_day, days, level, dose in zip(
            p, decode(Series, series), decode(Quantity, totals.quantity[p, s]),
            decode(Location, totals.location[p, s, t]), decode(PeriodKind, t),
            start.astype(object), windows.total_days[p, t],
            decode(Level, evaluation.level[p, s, t]), totals.dose[p, s, t])
    ]


def covered(crossing: Crossing, earlier: list[Investigation]) -> bool:
    """Whether an existing investigation already covers this crossing (see module docstring)."""
    order = list(Level)
    for investigation in earlier:
        if order.index(investigation.level) < order.index(crossing.level):
            continue
        if crossing.period in ROLLING:
            gap = abs((investigation.period_start - crossing.period_start).days)
            if gap < crossing.window_days:
                return True
        elif investigation.period_start == crossing.period_start:
            return True
    return False


def raise_investigations(session: Session, lab: LabEvaluation) -> list[Investigation]:
    """Add an investigation for every crossing not yet covered; returns the new ones only."""
    found = crossings(lab)
    if not found:
        return []
    existing: dict[tuple, list[Investigation]] = {}
    for investigation in session.scalars(sa.select(Investigation).where(
            Investigation.person_id.in_(sorted({c.person_id for c in found})))):
        key = (investigation.person_id, investigation.series, investigation.period)
        existing.setdefault(key, []).append(investigation)
    new = [
        Investigation(person_id=c.person_id, series=c.series, quantity=c.quantity,
                      location=c.location,
                      period=c.period, period_start=c.period_start, level=c.level,
                      dose_msv=c.dose_msv)
        for c in found
        if not covered(c, existing.get((c.person_id, c.series, c.period), []))
    ]
    session.add_all(new)
    session.flush()
    return new


def _row_of(investigation: Investigation) -> str:
    """'Hp(10) whole body, calendar quarter' for an investigation (a fetal row stays confidential)."""
    return shared_row_label(investigation.series, investigation.quantity, investigation.location,
                            investigation.period)


def investigation_label(investigation: Investigation) -> str:
    """'Hp(10) whole body, quarter from 2026-10-01, level I'."""
    return (f"{_row_of(investigation)} from {investigation.period_start.isoformat()}, "
            f"{LEVEL_LABELS[Level(investigation.level)]}")


def _utc_bounds(first: date, last: date, zone: ZoneInfo) -> tuple[datetime, datetime]:
    """The UTC instants where lab-local day `first` begins and the day after `last` begins."""
    start = datetime.combine(first, time(), zone)
    end = datetime.combine(last + timedelta(days=1), time(), zone)
    return start.astimezone(ZoneInfo("UTC")), end.astimezone(ZoneInfo("UTC"))


def raise_survey_tasks(session: Session, new: list[Investigation], on: date,
                       zone: ZoneInfo) -> list[SurveyTask]:
    """Ask for a survey of each instrument an authorised person used in the window of a crossing.

    An instrument that already has an open dose-rise survey task gets no second one.
    """
    tasks: dict[int, SurveyTask] = {}
    open_already = set(session.scalars(sa.select(SurveyTask.instrument_id).where(
        SurveyTask.trigger == SurveyTrigger.DOSE_RISE, SurveyTask.done_at.is_(None))))
    authorised = set(session.scalars(sa.select(Authorisation.person_id).where(
        Authorisation.person_id.in_(sorted({i.person_id for i in new})),
        Authorisation.revoked_at.is_(None))))
    for investigation in new:
        if investigation.person_id not in authorised:
            continue
        start, end = _utc_bounds(investigation.period_start, on, zone)
        used = session.scalars(sa.select(InstrumentSession.instrument_id).distinct().where(
            InstrumentSession.operator_id == investigation.person_id,
            InstrumentSession.started_at < end,
            sa.func.coalesce(InstrumentSession.ended_at, InstrumentSession.started_at) >= start))
        for instrument_id in used:
            if instrument_id in open_already or instrument_id in tasks:
                continue
            tasks[instrument_id] = raise_survey_task(
                session, session.get(Instrument, instrument_id), SurveyTrigger.DOSE_RISE,
                SURVEY_ASKED)
    return list(tasks.values())


def review_after_dose_change(session: Session, on: date) -> list[Investigation]:
    """Evaluate the lab on `on`, raise investigations for new crossings and ask for surveys.

    Returns the investigations raised, so the caller can tell people after it commits. Run after
    any change to dose inputs (records, declarations, limit sets) and daily, because a date change
    alone can reveal a crossing (a rolling window or a pregnancy).
    """
    lab = lab_evaluation(session, on)
    new = raise_investigations(session, lab)
    raise_survey_tasks(session, new, on, lab_zone(session))
    return new


def validate_review(investigation: Investigation, signing: bool, findings: str | None,
                 actions: str | None) -> None:
    """A review changes only an open investigation; a sign-off also needs findings and actions."""
    if investigation.signed_off_at is not None:
        raise Invalid.one("investigation",
                          "This investigation is signed off and can no longer change.")
    errors = {}
    if signing and not (findings or "").strip():
        errors["findings"] = "Write the findings before signing off."
    if signing and not (actions or "").strip():
        errors["actions"] = "Write the actions taken (or 'none needed') before signing off."
    if errors:
        raise Invalid(errors)


def record_review(session: Session, investigation: Investigation, *, questions: str | None,
                  findings: str | None, actions: str | None) -> Investigation:
    """Save the safety officer's review notes on an open investigation."""
    validate_review(investigation, False, findings, actions)
    investigation.questions = (questions or "").strip() or None
    investigation.findings = (findings or "").strip() or None
    investigation.actions = (actions or "").strip() or None
    session.flush()
    return investigation


def sign_off(session: Session, investigation: Investigation, by: Person) -> Investigation:
    """Close the investigation; from now on it is read-only."""
    validate_review(investigation, True, investigation.findings, investigation.actions)
    investigation.signed_off_by_id = by.id
    investigation.signed_off_at = utcnow()
    session.flush()
    return investigation


def reviewed(session: Session, found: list[Crossing]) -> list[bool]:
    """Per crossing: a signed-off investigation covers it (same window, same or higher level)."""
    signed: dict[tuple, list[Investigation]] = {}
    for investigation in session.scalars(sa.select(Investigation).where(
            Investigation.signed_off_at.is_not(None),
            Investigation.person_id.in_(sorted({c.person_id for c in found})))):
        signed.setdefault((investigation.person_id, investigation.series, investigation.period),
                          []).append(investigation)
    return [covered(c, signed.get((c.person_id, c.series, c.period), [])) for c in found]


def open_investigations(session: Session) -> list[tuple[Investigation, str]]:
    """Investigations not yet signed off with the person's name, oldest first."""
    return list(session.execute(
        sa.select(Investigation, Person.name).join(Person, Person.id == Investigation.person_id)
        .where(Investigation.signed_off_at.is_(None))
        .order_by(Investigation.raised_at, Investigation.id)).all())
