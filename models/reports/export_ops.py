"""Every list of the logbook as rows for CSV, filtered by date, read with plain column selects."""
from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass
from datetime import date
from zoneinfo import ZoneInfo

import sqlalchemy as sa
from sqlalchemy.orm import Session, aliased

from models.audit.tables import AuditEvent
from models.checks.tables import SafetyCheck
from models.core.settings import lab_days
from models.doses.tables import DoseRecord, Dosimeter
from models.exposure.tables import Investigation
from models.incidents.tables import Incident
from models.instruments.tables import Authorisation, Instrument
from models.people.tables import Person
from models.sessions.tables import InstrumentSession
from models.surveys.tables import BypassPermit, Survey, SurveyMeter

# Audited records that carry dose or pregnancy details: only the safety officer sees them, even
# in the trail; dosimeters too, since an abdomen dosimeter issued to someone hints at a pregnancy,
# and the API's stored answers, which name the operators' dosimeters.
DOSE_ENTITIES = frozenset({"dose_record", "pregnancy_declaration", "investigation", "dosimeter",
                           "import_batch", "idempotency_key"})
# Rows are fetched in chunks so an export of a million sessions never sits in memory whole.
CHUNK = 2000


@dataclass(frozen=True)
class ExportList:
    """One exportable list: its columns, how to select them, and who may have it."""

    name: str
    title: str
    header: tuple[str, ...]
    select: Callable[[], sa.Select]
    # The column the date filter applies to; a date column is compared by lab date directly.
    when: Callable[[], sa.ColumnElement]
    dose_data: bool = False
    # In words, what the date filter reads.
    dated_by: str = ""
    # Columns the list's own filters apply to, where it has them.
    instrument: Callable[[], sa.ColumnElement] | None = None
    person: Callable[[], sa.ColumnElement] | None = None


def _sessions() -> sa.Select:
    operator = aliased(Person)
    return (sa.select(InstrumentSession.id, Instrument.name, operator.login, operator.name,
                      InstrumentSession.started_at, InstrumentSession.ended_at, InstrumentSession.kv,
                      InstrumentSession.ma, InstrumentSession.beam_on_minutes, InstrumentSession.purpose,
                      InstrumentSession.alignment, InstrumentSession.configuration_changed,
                      InstrumentSession.configuration_change, InstrumentSession.pre_use_checks_confirmed,
                      InstrumentSession.dosimeter_worn, InstrumentSession.bypass_permit_id,
                      InstrumentSession.source, InstrumentSession.notes)
            .join(Instrument, Instrument.id == InstrumentSession.instrument_id)
            .join(operator, operator.id == InstrumentSession.operator_id)
            .order_by(InstrumentSession.started_at, InstrumentSession.id))


def _checks() -> sa.Select:
    return (sa.select(SafetyCheck.id, Instrument.name, SafetyCheck.performed_at, Person.name,
                      SafetyCheck.passed, SafetyCheck.notes)
            .join(Instrument, Instrument.id == SafetyCheck.instrument_id)
            .join(Person, Person.id == SafetyCheck.performed_by_id)
            .order_by(SafetyCheck.performed_at, SafetyCheck.id))


def _surveys() -> sa.Select:
    return (sa.select(Survey.id, Instrument.name, Survey.performed_at, Person.name, Survey.trigger,
                      Survey.kv, Survey.ma, SurveyMeter.serial, Survey.action_level_usv_h,
                      Survey.max_net_usv_h, Survey.passed, Survey.notes)
            .join(Instrument, Instrument.id == Survey.instrument_id)
            .join(Person, Person.id == Survey.performed_by_id)
            .join(SurveyMeter, SurveyMeter.id == Survey.meter_id)
            .order_by(Survey.performed_at, Survey.id))


def _incidents() -> sa.Select:
    closer = aliased(Person)
    return (sa.select(Incident.id, Incident.occurred_at, Instrument.name, Incident.type,
                      Incident.description, Incident.immediate_actions, Person.name,
                      Incident.reported_at, Incident.closed_at, closer.name, Incident.closing_note)
            .outerjoin(Instrument, Instrument.id == Incident.instrument_id)
            .join(Person, Person.id == Incident.reported_by_id)
            .outerjoin(closer, closer.id == Incident.closed_by_id)
            .order_by(Incident.occurred_at, Incident.id))


def _permits() -> sa.Select:
    decider = aliased(Person)
    return (sa.select(BypassPermit.id, Instrument.name, BypassPermit.devices, BypassPermit.reason,
                      Person.name, BypassPermit.requested_at, BypassPermit.window_start,
                      BypassPermit.window_end, BypassPermit.status, decider.name,
                      BypassPermit.decided_at, BypassPermit.decision_note, BypassPermit.closed_at)
            .join(Instrument, Instrument.id == BypassPermit.instrument_id)
            .join(Person, Person.id == BypassPermit.requested_by_id)
            .outerjoin(decider, decider.id == BypassPermit.decided_by_id)
            .order_by(BypassPermit.window_start, BypassPermit.id))


def _authorisations() -> sa.Select:
    granter = aliased(Person)
    return (sa.select(Authorisation.id, Person.login, Person.name, Instrument.name,
                      Authorisation.level, Authorisation.trained_on, Authorisation.refresher_due,
                      granter.name, Authorisation.granted_at, Authorisation.revoked_at)
            .join(Person, Person.id == Authorisation.person_id)
            .join(Instrument, Instrument.id == Authorisation.instrument_id)
            .outerjoin(granter, granter.id == Authorisation.granted_by_id)
            .order_by(Authorisation.granted_at, Authorisation.id))


def _dose_records() -> sa.Select:
    return (sa.select(DoseRecord.id, Person.login, Person.name, Dosimeter.serial,
                      DoseRecord.wear_start, DoseRecord.wear_end, DoseRecord.quantity,
                      DoseRecord.location, DoseRecord.value_msv, DoseRecord.result,
                      DoseRecord.mrd_msv, DoseRecord.source, DoseRecord.basis, DoseRecord.version,
                      DoseRecord.supersedes_id, DoseRecord.reason, DoseRecord.created_at)
            .join(Person, Person.id == DoseRecord.person_id)
            .outerjoin(Dosimeter, Dosimeter.id == DoseRecord.dosimeter_id)
            .order_by(DoseRecord.wear_end, DoseRecord.id))


def _investigations() -> sa.Select:
    signer = aliased(Person)
    return (sa.select(Investigation.id, Person.login, Person.name, Investigation.series,
                      Investigation.quantity, Investigation.location, Investigation.period,
                      Investigation.period_start, Investigation.level, Investigation.dose_msv,
                      Investigation.raised_at, Investigation.signed_off_at, signer.name)
            .join(Person, Person.id == Investigation.person_id)
            .outerjoin(signer, signer.id == Investigation.signed_off_by_id)
            .order_by(Investigation.raised_at, Investigation.id))


def _audit() -> sa.Select:
    return (sa.select(AuditEvent.id, AuditEvent.at, Person.login, AuditEvent.entity,
                      AuditEvent.entity_id, AuditEvent.action, AuditEvent.reason,
                      AuditEvent.before, AuditEvent.after, AuditEvent.hash)
            .outerjoin(Person, Person.id == AuditEvent.actor_id)
            .order_by(AuditEvent.id))


LISTS: dict[str, ExportList] = {e.name: e for e in (
    ExportList("sessions", "Instrument sessions",
               ("id", "instrument", "operator_login", "operator", "started", "ended", "kv", "ma",
                "beam_on_minutes", "purpose", "alignment", "configuration_changed",
                "configuration_change", "pre_use_checks_confirmed", "dosimeter_worn",
                "bypass_permit", "entered_by", "notes"),
               _sessions, lambda: InstrumentSession.started_at, dated_by="start",
               instrument=lambda: InstrumentSession.instrument_id,
               person=lambda: InstrumentSession.operator_id),
    ExportList("checks", "Safety-device checks",
               ("id", "instrument", "performed", "performed_by", "passed", "notes"),
               _checks, lambda: SafetyCheck.performed_at, dated_by="date of the check", instrument=lambda: SafetyCheck.instrument_id),
    ExportList("surveys", "Surveys",
               ("id", "instrument", "performed", "performed_by", "trigger", "kv", "ma", "meter",
                "action_level_usv_h", "highest_net_usv_h", "passed", "notes"),
               _surveys, lambda: Survey.performed_at, dated_by="date of the survey", instrument=lambda: Survey.instrument_id),
    ExportList("incidents", "Incidents",
               ("id", "occurred", "instrument", "type", "description", "immediate_actions",
                "reported_by", "reported", "closed", "closed_by", "closing_note"),
               _incidents, lambda: Incident.occurred_at, dated_by="date it happened", instrument=lambda: Incident.instrument_id),
    ExportList("permits", "Bypass permits",
               ("id", "instrument", "devices", "reason", "requested_by", "requested", "window_start",
                "window_end", "status", "decided_by", "decided", "decision_note", "closed"),
               _permits, lambda: BypassPermit.window_start, dated_by="start of the permit's window",
               instrument=lambda: BypassPermit.instrument_id),
    ExportList("authorisations", "Authorisations",
               ("id", "login", "person", "instrument", "level", "trained_on", "refresher_due",
                "granted_by", "granted", "revoked"),
               _authorisations, lambda: Authorisation.granted_at, dated_by="date granted",
               instrument=lambda: Authorisation.instrument_id, person=lambda: Authorisation.person_id),
    ExportList("dose_records", "Dose records (every version)",
               ("id", "login", "person", "dosimeter", "wear_start", "wear_end", "quantity",
                "location", "value_msv", "result", "mrd_msv", "source", "basis", "version",
                "supersedes", "reason", "entered"),
               _dose_records, lambda: DoseRecord.wear_end, dated_by="end of the wear period", dose_data=True,
               person=lambda: DoseRecord.person_id),
    ExportList("investigations", "Investigations",
               ("id", "login", "person", "series", "quantity", "location", "period", "period_start",
                "level", "dose_msv", "raised", "signed_off", "signed_off_by"),
               _investigations, lambda: Investigation.raised_at, dated_by="date raised", dose_data=True,
               person=lambda: Investigation.person_id),
    ExportList("audit", "Audit trail",
               ("id", "at", "actor", "record_type", "record_id", "action", "reason", "before",
                "after", "hash"),
               _audit, lambda: AuditEvent.at, dated_by="date of the event", person=lambda: AuditEvent.actor_id),
)}


def _bounds(column: sa.ColumnElement, first: date | None, last: date | None,
            zone: ZoneInfo) -> list[sa.ColumnElement]:
    """Conditions keeping rows from `first` to `last` (lab dates, both inclusive)."""
    conditions = []
    is_date = isinstance(column.type, sa.Date)
    if first is not None:
        conditions.append(column >= (first if is_date else lab_days(first, first, zone)[0]))
    if last is not None:
        conditions.append(column <= last if is_date else column < lab_days(last, last, zone)[1])
    return conditions


@dataclass(frozen=True)
class Filters:
    """What a list is narrowed to: lab dates (inclusive), an instrument, a person."""

    first: date | None = None
    last: date | None = None
    instrument_id: int | None = None
    person_id: int | None = None


def export_rows(session: Session, export: ExportList, filters: Filters, *, zone: ZoneInfo,
                with_dose_data: bool) -> Iterator[tuple]:
    """The list's rows in order, read in chunks; the audit trail without dose records unless allowed."""
    query = export.select().where(*_bounds(export.when(), filters.first, filters.last, zone))
    if filters.instrument_id is not None and export.instrument is not None:
        query = query.where(export.instrument() == filters.instrument_id)
    if filters.person_id is not None and export.person is not None:
        query = query.where(export.person() == filters.person_id)
    if export.name == "audit" and not with_dose_data:
        query = query.where(AuditEvent.entity.not_in(DOSE_ENTITIES))
    result = session.execute(query.execution_options(yield_per=CHUNK))
    for row in result:
        yield tuple(row)
