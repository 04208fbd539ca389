"""What is due, for the whole lab or for one person, built from the due-date rules in models.due.

Each kind of task has a pure builder taking plain dates (tested with tables) and one query layer
that feeds them from the records. A task that was never done is dated from when its subject
appeared (the instrument was added) and counts its days late from then, so that a new instrument
never checked sorts among the late ones.
"""
from __future__ import annotations

from dataclasses import dataclass
from datetime import date, datetime, timedelta

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.checks.tables import SafetyCheck
from models.core import due_dates
from models.core.settings import lab_date, lab_settings
from models.doses.dosimeter_ops import calendar_period, wear_period
from models.doses.tables import Dosimeter, ExchangeCycle
from models.instruments.tables import Authorisation, Instrument
from models.people.tables import Person, Role
from models.surveys.tables import BypassPermit, PermitStatus, Survey, SurveyMeter, SurveyTask

CHECK = "check"
SURVEY = "survey"
CALIBRATION = "calibration"
REFRESHER = "refresher"
PERMIT = "permit"
DOSIMETER = "dosimeter"

KIND_LABELS = {
    CHECK: "Safety-device check",
    SURVEY: "Radiation survey",
    CALIBRATION: "Survey meter calibration",
    REFRESHER: "Refresher training",
    PERMIT: "Bypass permit ends",
    DOSIMETER: "Dosimeter exchange",
}

STATE_LABELS = {
    due_dates.OK: "on time",
    due_dates.DUE_SOON: "due soon",
    due_dates.OVERDUE: "late",
    due_dates.NEVER_DONE: "never done",
}

PENDING_STATES = frozenset({due_dates.DUE_SOON, due_dates.OVERDUE, due_dates.NEVER_DONE})



@dataclass(frozen=True)
class DueItem:
    """One dated task: what, about whom or what, when, how late, and where to act."""

    kind: str
    subject: str
    due: date
    state: str
    days_late: int
    target_kind: str
    target_id: int
    source_id: int
    person_id: int | None = None
    instrument_id: int | None = None

    @property
    def what(self) -> str:
        """The task in words."""
        return KIND_LABELS[self.kind]

    @property
    def state_label(self) -> str:
        """The state in words."""
        return STATE_LABELS[self.state]

    @property
    def pending(self) -> bool:
        """Due soon, late or never done."""
        return self.state in PENDING_STATES

    @property
    def key(self) -> str:
        """Stable name of this task until its due date moves (calendar UID, reminder key)."""
        return f"{self.kind}-{self.source_id}-{self.due.isoformat()}"


def _dated(kind: str, due_date: date, today: date, soon_days: int, never: bool, **where) -> DueItem:
    """An item with its state and lateness worked out."""
    state = due_dates.NEVER_DONE if never else due_dates.due_state(due_date, today, soon_days)
    return DueItem(kind=kind, due=due_date, state=state,
                   days_late=due_dates.days_overdue(due_date, today), **where)


def check_item(instrument_id: int, name: str, last_pass: date | None, interval_days: int,
               added_on: date, today: date, soon_days: int) -> DueItem:
    """The next safety-device check of an instrument."""
    due_date = due_dates.check_due(last_pass, interval_days)
    return _dated(CHECK, due_date or added_on, today, soon_days, due_date is None,
                  subject=name, target_kind="instrument", target_id=instrument_id,
                  source_id=instrument_id, instrument_id=instrument_id)


def survey_item(instrument_id: int, name: str, last_pass: date | None, interval_days: int,
                survey_asked: bool, added_on: date, today: date, soon_days: int) -> DueItem:
    """The next radiation survey of an instrument; an open survey task makes it due today."""
    due_date = due_dates.survey_due(last_pass, interval_days, survey_asked, today)
    return _dated(SURVEY, due_date or added_on, today, soon_days, due_date is None,
                  subject=name, target_kind="instrument", target_id=instrument_id,
                  source_id=instrument_id, instrument_id=instrument_id)


def calibration_item(meter_id: int, serial: str, calibrated_on: date, interval_months: int,
                     today: date, soon_days: int) -> DueItem:
    """A survey meter's calibration, dated on its last valid day."""
    # calibration_valid_on runs through the day before the anniversary, so that day is the
    # deadline: the meter is late (unusable) from the anniversary on.
    last_valid = due_dates.calibration_due(calibrated_on, interval_months) - timedelta(days=1)
    return _dated(CALIBRATION, last_valid, today, soon_days, False, subject=f"Meter {serial}",
                  target_kind="meter", target_id=meter_id, source_id=meter_id)


def refresher_item(authorisation_id: int, person_id: int, person_name: str, instrument_id: int,
                   instrument_name: str, refresher_due: date, today: date, soon_days: int) -> DueItem:
    """An operator's refresher training for one instrument."""
    return _dated(REFRESHER, refresher_due, today, soon_days, False,
                  subject=f"{person_name} on {instrument_name}", target_kind="instrument",
                  target_id=instrument_id, source_id=authorisation_id, person_id=person_id,
                  instrument_id=instrument_id)


def permit_item(permit_id: int, requester_id: int, instrument_id: int, instrument_name: str,
                window_start: datetime, window_end: datetime, end_date: date, now: datetime,
                today: date, soon_days: int) -> DueItem:
    """An approved bypass permit that must be closed by the end of its window."""
    item = _dated(PERMIT, end_date, today, soon_days, False, subject=instrument_name,
                  target_kind="permit", target_id=permit_id, source_id=permit_id,
                  person_id=requester_id, instrument_id=instrument_id)
    if due_dates.permit_state(window_start, window_end, now) == due_dates.EXPIRED and item.state != due_dates.OVERDUE:
        # The window ended earlier today: already late, though the calendar day is not over.
        return DueItem(**{**item.__dict__, "state": due_dates.OVERDUE})
    return item


def dosimeter_item(dosimeter_id: int, wearer_id: int, serial: str, exchange_on: date,
                   today: date, soon_days: int) -> DueItem:
    """The exchange of a dosimeter still being worn, at the end of its current wear period.

    A result that never came back is the dosimetry area's 'not returned' line, not a late exchange.
    """
    return _dated(DOSIMETER, exchange_on, today, soon_days, False, subject=f"Dosimeter {serial}", target_kind="dosimeter",
                  target_id=dosimeter_id, source_id=dosimeter_id, person_id=wearer_id)


def by_lateness(items: list[DueItem]) -> list[DueItem]:
    """Latest first, then by due date."""
    return sorted(items, key=lambda i: (-i.days_late, i.due, i.what, i.subject))


# --- queries ---------------------------------------------------------------------------------


@dataclass(frozen=True)
class Horizon:
    """When the list is drawn up: now, the lab's today, and the due-soon window."""

    now: datetime
    today: date
    soon_days: int


def horizon(session: Session, now: datetime) -> Horizon:
    """The lab's today and due-soon window at a moment."""
    return Horizon(now, lab_date(session, now), lab_settings(session).due_soon_days)


def _last_passes(session: Session, model, instrument_ids: list[int]) -> dict[int, datetime]:
    """The time of the last passing check (or survey) per instrument."""
    rows = session.execute(
        sa.select(model.instrument_id, sa.func.max(model.performed_at))
        .where(model.passed.is_(True), model.instrument_id.in_(instrument_ids))
        .group_by(model.instrument_id)
    ).all()
    # max() keeps its column's type, so the times come back aware UTC.
    return dict(rows)


def instrument_items(session: Session, instruments: list[Instrument], h: Horizon) -> list[DueItem]:
    """Check and survey items of the given instruments (retired ones skipped)."""
    instruments = [i for i in instruments if not i.retired]
    ids = [i.id for i in instruments]
    if not ids:
        return []
    checks = _last_passes(session, SafetyCheck, ids)
    surveys = _last_passes(session, Survey, ids)
    asked = set(session.scalars(
        sa.select(SurveyTask.instrument_id).where(SurveyTask.done_at.is_(None),
                                                  SurveyTask.instrument_id.in_(ids))))
    items = []
    for inst in instruments:
        added = lab_date(session, inst.created_at)
        last_check = checks.get(inst.id)
        last_survey = surveys.get(inst.id)
        items.append(check_item(inst.id, inst.name,
                                lab_date(session, last_check) if last_check else None,
                                inst.check_interval_days, added, h.today, h.soon_days))
        items.append(survey_item(inst.id, inst.name,
                                 lab_date(session, last_survey) if last_survey else None,
                                 inst.survey_interval_days, inst.id in asked, added, h.today,
                                 h.soon_days))
    return items


def _soon_end(h: Horizon) -> date:
    """The last due date that is still pending (due soon) as seen on the horizon's today."""
    return h.today + timedelta(days=h.soon_days)


def _authorisations(person_id: int | None):
    """Authorisations not revoked, of active people on instruments in use (a query, no rows)."""
    query = (sa.select(Authorisation.id, Authorisation.person_id, Person.name, Authorisation.instrument_id,
                       Instrument.name.label("instrument_name"), Authorisation.refresher_due)
             .join(Person, Person.id == Authorisation.person_id)
             .join(Instrument, Instrument.id == Authorisation.instrument_id)
             .where(Authorisation.revoked_at.is_(None), Person.active.is_(True),
                    Instrument.retired_at.is_(None)))
    return query if person_id is None else query.where(Authorisation.person_id == person_id)


def refresher_items(session: Session, person: Person | None, h: Horizon,
                    pending_only: bool = False) -> list[DueItem]:
    """Refresher training of one person, or of everyone; pending_only keeps, in SQL, what is due soon or late."""
    query = _authorisations(person.id if person else None)
    if pending_only:
        query = query.where(Authorisation.refresher_due <= _soon_end(h))
    return [refresher_item(a.id, a.person_id, a.name, a.instrument_id, a.instrument_name, a.refresher_due,
                           h.today, h.soon_days)
            for a in session.execute(query)]


def permit_items(session: Session, person: Person | None, h: Horizon) -> list[DueItem]:
    """Approved, unclosed bypass permits (the requester's, or all)."""
    query = (sa.select(BypassPermit.id, BypassPermit.requested_by_id, BypassPermit.instrument_id,
                       Instrument.name, BypassPermit.window_start, BypassPermit.window_end)
             .join(Instrument, Instrument.id == BypassPermit.instrument_id)
             .where(BypassPermit.status == PermitStatus.APPROVED, BypassPermit.closed_at.is_(None)))
    if person is not None:
        query = query.where(BypassPermit.requested_by_id == person.id)
    return [permit_item(p.id, p.requested_by_id, p.instrument_id, p.name, p.window_start, p.window_end,
                        lab_date(session, p.window_end), h.now, h.today, h.soon_days)
            for p in session.execute(query)]


def dosimeter_items(session: Session, person: Person | None, h: Horizon,
                    pending_only: bool = False) -> list[DueItem]:
    """Exchanges of dosimeters still out (the wearer's, or all).

    pending_only keeps, in SQL, the dosimeters whose exchange is due soon: a dosimeter issued by
    today is exchanged at the end of its cycle's current calendar period, the same for every
    dosimeter on that cycle, so whole cycles are in or out; one issued later is judged by itself.
    """
    query = (sa.select(Dosimeter.id, Dosimeter.wearer_id, Dosimeter.serial, Dosimeter.issued_on,
                       Dosimeter.returned_on, Dosimeter.exchange_cycle)
             .join(Person, Person.id == Dosimeter.wearer_id)
             .where(Dosimeter.returned_on.is_(None), Person.active.is_(True)))
    if person is not None:
        query = query.where(Dosimeter.wearer_id == person.id)
    if pending_only:
        cycles = [c for c in ExchangeCycle if calendar_period(h.today, c)[1] <= _soon_end(h)]
        query = query.where(sa.or_(Dosimeter.exchange_cycle.in_(cycles), Dosimeter.issued_on > h.today))
    return [dosimeter_item(d.id, d.wearer_id, d.serial, wear_period(d, max(h.today, d.issued_on))[1],
                           h.today, h.soon_days)
            for d in session.execute(query)]


def meter_items(session: Session, h: Horizon) -> list[DueItem]:
    """Calibrations of survey meters in use."""
    query = (sa.select(SurveyMeter.id, SurveyMeter.serial, SurveyMeter.calibrated_on,
                       SurveyMeter.calibration_interval_months).where(SurveyMeter.retired_at.is_(None)))
    return [calibration_item(m.id, m.serial, m.calibrated_on, m.calibration_interval_months,
                             h.today, h.soon_days)
            for m in session.execute(query)]


def _kept(items: list[DueItem], pending_only: bool) -> list[DueItem]:
    """All items, or only the pending ones, latest first."""
    return by_lateness(pending(items) if pending_only else items)


def lab_items(session: Session, now: datetime, *, pending_only: bool = False) -> list[DueItem]:
    """Every dated task in the lab, latest first (only those due soon or late with pending_only)."""
    h = horizon(session, now)
    instruments = list(session.scalars(sa.select(Instrument)))
    return _kept(instrument_items(session, instruments, h) + meter_items(session, h)
                 + refresher_items(session, None, h, pending_only) + permit_items(session, None, h)
                 + dosimeter_items(session, None, h, pending_only), pending_only)


def person_items(session: Session, person: Person, now: datetime, *,
                 pending_only: bool = False) -> list[DueItem]:
    """A person's own tasks: their instruments' checks and surveys, training, permits, dosimeters."""
    h = horizon(session, now)
    instruments = list(session.scalars(
        sa.select(Instrument).where(Instrument.id.in_(
            _authorisations(person.id).with_only_columns(Authorisation.instrument_id)))))
    return _kept(instrument_items(session, instruments, h)
                 + refresher_items(session, person, h, pending_only) + permit_items(session, person, h)
                 + dosimeter_items(session, person, h, pending_only), pending_only)


def calendar_items(session: Session, person: Person, now: datetime) -> list[DueItem]:
    """What a person's calendar shows: their own tasks, and the whole lab's for the safety officer."""
    items = person_items(session, person, now)
    if person.has_role(Role.SAFETY_OFFICER):
        items += lab_items(session, now)
    return by_lateness(list({item.key: item for item in items}.values()))


def pending(items: list[DueItem]) -> list[DueItem]:
    """Only what is due soon, late or never done."""
    return [item for item in items if item.pending]
