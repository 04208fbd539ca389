"""The demo lab: what it holds and that its records hang together."""
from datetime import UTC, date, datetime, time
from zoneinfo import ZoneInfo

import numpy as np
import pytest
import sqlalchemy as sa

from models.checks.tables import SafetyCheck
from models.core.codes import Level, Location, PeriodKind, Quantity, Result, Series, WorkerCategory, code
from models.core.due_dates import DUE_SOON, OVERDUE, check_due, due_state
from models.core.settings import lab_settings
from models.doses.tables import DoseRecord, Dosimeter, DosimeterKind
from models.exposure.engine import DoseRecords, Policies, compute_doses, person_index
from models.exposure.evaluation import evaluate
from models.exposure.limit_set_ops import as_rules
from models.exposure.tables import PregnancyDeclaration
from models.instruments.tables import Authorisation, Enclosure, Instrument
from models.people.tables import Person, Role
from models.sessions.tables import InstrumentSession
from webapp.demo.lab import HIGH_DOSE_PERSON, LAB_ZONE, LIMIT_PRESET, is_empty, load_demo_lab

TODAY = date(2026, 5, 14)
# Common practice (REFERENCE.md): quarterly level I for Hp(10).
QUARTER_LEVEL_1_MSV = 1.25


def load(session, today=TODAY):
    """Load the demo lab and commit it."""
    summary = load_demo_lab(session, today, None)
    session.commit()
    return summary


def quarter_start(day: date) -> date:
    """First day of the calendar quarter holding the day."""
    return date(day.year, 3 * ((day.month - 1) // 3) + 1, 1)


def test_people_instruments_and_settings(session):
    assert is_empty(session)
    load(session)
    assert not is_empty(session)
    instruments = session.scalars(sa.select(Instrument)).all()
    assert len({i.kind for i in instruments}) >= 3
    assert len({i.anode for i in instruments}) >= 3
    assert {Enclosure.ENCLOSED, Enclosure.OPEN_BEAM} <= {i.enclosure for i in instruments}
    assert all(len(i.checklist_template.items) >= 6 for i in instruments)
    people = session.scalars(sa.select(Person)).all()
    assert len(people) >= 8
    assert set().union(*(p.role_set for p in people)) == set(Role)
    assert {WorkerCategory.ADULT_WORKER, WorkerCategory.TRAINEE, WorkerCategory.PUBLIC} <= {
        p.category for p in people}
    assert all(p.email.endswith("@example.org") for p in people)
    refreshers = session.scalars(sa.select(Authorisation.refresher_due)).all()
    assert sum(due_state(due, TODAY) == DUE_SOON for due in refreshers) == 1
    assert all(due >= TODAY for due in refreshers)
    settings = lab_settings(session)
    assert settings.timezone == LAB_ZONE and settings.safety_officer_email
    assert settings.limit_set.preset_key == LIMIT_PRESET and settings.limit_set.rules
    # Only the public visitor and the lab manager (who does no X-ray work) go without a dosimeter.
    wearers = set(session.scalars(sa.select(Dosimeter.wearer_id)))
    public = [p for p in people if p.category is WorkerCategory.PUBLIC]
    assert public and all(p.id not in wearers for p in public)
    assert not session.scalar(sa.select(sa.func.count()).select_from(DoseRecord)
                              .where(DoseRecord.person_id.in_([p.id for p in public])))


def test_sessions_span_two_years_within_ratings_without_overlaps(session):
    load(session)
    sessions = session.scalars(sa.select(InstrumentSession).order_by(
        InstrumentSession.instrument_id, InstrumentSession.started_at)).all()
    zone = ZoneInfo(LAB_ZONE)
    start_of_today = datetime.combine(TODAY, time(0), zone).astimezone(UTC)
    assert max(s.ended_at for s in sessions) <= start_of_today
    assert (TODAY - min(s.started_at for s in sessions).astimezone(zone).date()).days >= 700
    for s in sessions:
        i = s.instrument
        assert s.kv <= i.max_kv and s.ma <= i.max_ma and s.kv * s.ma <= i.max_power_w
        assert 0 <= s.beam_on_minutes <= (s.ended_at - s.started_at).total_seconds() / 60
        assert s.started_at.astimezone(zone).weekday() < 5
    for before, after in zip(sessions, sessions[1:]):
        if before.instrument_id == after.instrument_id:
            assert after.started_at >= before.ended_at
    assert any(s.alignment for s in sessions if s.instrument.enclosure is Enclosure.OPEN_BEAM)


def test_exactly_one_check_overdue_and_one_failure_put_right(session):
    load(session)
    overdue = []
    for instrument in session.scalars(sa.select(Instrument)):
        last = session.scalar(sa.select(sa.func.max(SafetyCheck.performed_at)).where(
            SafetyCheck.instrument_id == instrument.id, SafetyCheck.passed.is_(True)))
        due = check_due(last.astimezone(ZoneInfo(LAB_ZONE)).date(), instrument.check_interval_days)
        if due_state(due, TODAY) == OVERDUE:
            overdue.append(instrument.name)
    assert len(overdue) == 1
    failed = session.scalars(sa.select(SafetyCheck).where(SafetyCheck.passed.is_(False))).all()
    assert len(failed) == 1
    later = session.scalar(sa.select(SafetyCheck).where(
        SafetyCheck.instrument_id == failed[0].instrument_id,
        SafetyCheck.performed_at > failed[0].performed_at).order_by(SafetyCheck.performed_at))
    assert later.passed


@pytest.mark.parametrize("today", [TODAY, date(2027, 1, 1)], ids=["mid-quarter", "quarter-start"])
def test_dose_story(session, today):
    load(session, today)
    records = session.scalars(sa.select(DoseRecord)).all()
    assert all(r.wear_end <= today for r in records)
    current = [r for r in records if not any(o.supersedes_id == r.id for o in records)]
    q0 = quarter_start(today)
    quarter_hp10 = {}
    for r in current:
        if (r.quantity, r.location) == (Quantity.HP10, Location.WHOLE_BODY) and r.wear_start >= q0:
            quarter_hp10[r.person_id] = quarter_hp10.get(r.person_id, 0) + (r.value_msv or 0)
    above = [pid for pid, total in quarter_hp10.items() if total > QUARTER_LEVEL_1_MSV]
    assert len(above) == 1
    rings = {r.location for r in current if r.person_id == above[0] and r.wear_start >= q0}
    assert {Location.LEFT_HAND, Location.RIGHT_HAND} <= rings
    # Rings only for those who wear ring dosimeters.
    ring_wearers = set(session.scalars(sa.select(Dosimeter.wearer_id).where(
        Dosimeter.kind == DosimeterKind.RING)))
    assert {r.person_id for r in records if r.location in (Location.LEFT_HAND, Location.RIGHT_HAND)
            } == ring_wearers and len(ring_wearers) >= 2
    assert sum(r.result is Result.BELOW_MRD for r in records) > len(records) / 2
    corrections = [r for r in records if r.version == 2]
    assert len(corrections) == 1 and corrections[0].reason and corrections[0].supersedes_id
    pregnancies = session.scalars(sa.select(PregnancyDeclaration)).all()
    assert len(pregnancies) == 1 and pregnancies[0].ended_on is None
    assert any(r.location is Location.ABDOMEN and r.wear_start >= pregnancies[0].declared_on
               for r in records if r.person_id == pregnancies[0].person_id)
    assert 45 <= (today - pregnancies[0].declared_on).days <= 75


def test_the_dose_engine_puts_only_the_high_person_at_a_level(session):
    load(session)
    people = session.scalars(sa.select(Person).order_by(Person.id)).all()
    ids = [p.id for p in people]
    superseded = set(session.scalars(sa.select(DoseRecord.supersedes_id).where(
        DoseRecord.supersedes_id.is_not(None))))
    current = [r for r in session.scalars(sa.select(DoseRecord)) if r.id not in superseded]
    records = DoseRecords(
        person=person_index([r.person_id for r in current], ids),
        quantity=[r.quantity.value for r in current], location=[r.location.value for r in current],
        wear_start=[r.wear_start for r in current], wear_end=[r.wear_end for r in current],
        value=[np.nan if r.value_msv is None else r.value_msv for r in current],
        result=[r.result.value for r in current],
        mrd=[np.nan if r.mrd_msv is None else r.mrd_msv for r in current])
    declared = {d.person_id: d.declared_on for d in session.scalars(sa.select(PregnancyDeclaration))}
    starts = np.array([declared.get(i, "NaT") for i in ids], dtype="datetime64[D]")
    totals = compute_doses(records, len(ids), TODAY, Policies(), starts,
                           np.full(len(ids), "NaT", dtype="datetime64[D]"))
    evaluation = evaluate(totals, as_rules(lab_settings(session).limit_set),
                          [p.category.value for p in people])
    worst = evaluation.level.reshape(len(ids), -1).max(axis=1)
    flagged = [people[i].login for i in np.flatnonzero(worst > code(Level.BELOW_1))]
    assert flagged == [HIGH_DOSE_PERSON]
    quarter = ([p.login for p in people].index(HIGH_DOSE_PERSON), code(Series.EFFECTIVE),
               code(PeriodKind.QUARTER))
    assert evaluation.level[quarter] == code(Level.LEVEL_1)


def test_supervised_sessions_name_a_supervisor_and_dosimeters_are_only_recorded_worn(session):
    from models.instruments.authorisation_ops import authorisation_on
    from models.instruments.tables import AuthorisationLevel

    load(session)
    supervised = found = 0
    for entry in session.scalars(sa.select(InstrumentSession)):
        day = entry.started_at.date()
        held = authorisation_on(session, entry.operator, entry.instrument, day)
        if held is not None and held.level == AuthorisationLevel.SUPERVISED:
            supervised += 1
            if entry.supervisor_id is not None:
                found += 1
                boss = authorisation_on(session, entry.supervisor, entry.instrument, day)
                assert boss is not None and boss.level == AuthorisationLevel.INDEPENDENT
        else:
            assert entry.supervisor_id is None
        kinds = sorted(d.kind.value for d in entry.dosimeters)
        assert kinds.count("whole_body") <= 1 and (not kinds or entry.dosimeter_worn)
    # The demo has a supervised trainee and a supervised visitor at work.
    assert supervised > 0 and found == supervised
