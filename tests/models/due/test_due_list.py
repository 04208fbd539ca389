"""The due list: builders tested with tables (month ends, leap days), then the lab and person lists."""
from datetime import UTC, date, datetime, timedelta

import pytest

from models.core import due_dates
from models.doses.dosimeter_ops import wear_period
from models.doses.tables import Dosimeter, DosimeterKind, ExchangeCycle
from models.due.due_list_ops import (
    CHECK,
    calibration_item,
    check_item,
    dosimeter_item,
    lab_items,
    pending,
    permit_item,
    person_items,
    refresher_item,
    survey_item,
)
from models.people.tables import Role
from models.surveys.tables import BypassPermit, PermitStatus, SurveyMeter
from tests.conftest import LAB_NOW, LAB_TODAY

D = date.fromisoformat


def utc(text):
    """An aware UTC datetime from an ISO string."""
    return datetime.fromisoformat(text).replace(tzinfo=UTC)


@pytest.mark.parametrize(
    ("last_pass", "interval", "today", "due_on", "state", "late"),
    [
        ("2024-01-31", 30, "2024-02-25", "2024-03-01", due_dates.DUE_SOON, 0),  # leap February: 29 days
        ("2025-01-31", 30, "2025-02-25", "2025-03-02", due_dates.DUE_SOON, 0),  # common February
        ("2024-02-29", 30, "2024-03-30", "2024-03-30", due_dates.DUE_SOON, 0),  # due today counts as soon
        ("2024-02-29", 30, "2024-03-31", "2024-03-30", due_dates.OVERDUE, 1),
        ("2024-12-31", 30, "2025-01-05", "2025-01-30", due_dates.OK, 0),  # across the year end
        ("2023-12-31", 182, "2024-07-01", "2024-06-30", due_dates.OVERDUE, 1),  # 6 months, leap year
    ],
)
def test_check_item(last_pass, interval, today, due_on, state, late):
    item = check_item(1, "XRD", D(last_pass), interval, D("2020-01-01"), D(today), 7)
    assert (item.due, item.state, item.days_late) == (D(due_on), state, late)


def test_a_never_checked_instrument_is_late_since_it_was_added():
    item = check_item(1, "XRD", None, 30, D("2024-02-20"), D("2024-03-01"), 7)
    assert (item.state, item.due, item.days_late) == (due_dates.NEVER_DONE, D("2024-02-20"), 10)
    assert item.pending


@pytest.mark.parametrize(
    ("last", "asked", "today", "due_on", "state"),
    [
        ("2023-03-01", False, "2024-02-29", "2024-02-29", due_dates.DUE_SOON),  # 365 days over a leap day
        ("2024-03-01", False, "2025-02-27", "2025-03-01", due_dates.DUE_SOON),
        ("2025-01-10", True, "2025-02-28", "2025-02-28", due_dates.DUE_SOON),  # asked for: due today
        ("2024-01-10", True, "2025-02-28", "2025-01-09", due_dates.OVERDUE),  # already late stays late
    ],
)
def test_survey_item(last, asked, today, due_on, state):
    item = survey_item(1, "XRD", D(last), 365, asked, D("2020-01-01"), D(today), 7)
    assert (item.due, item.state) == (D(due_on), state)


@pytest.mark.parametrize(
    ("calibrated", "months", "today", "last_valid", "state"),
    [
        ("2024-02-29", 12, "2025-02-27", "2025-02-27", due_dates.DUE_SOON),  # anniversary clamps to 28th
        ("2024-02-29", 12, "2025-02-28", "2025-02-27", due_dates.OVERDUE),  # unusable on the anniversary
        ("2025-01-31", 1, "2025-02-27", "2025-02-27", due_dates.DUE_SOON),
        ("2023-08-31", 6, "2024-02-28", "2024-02-28", due_dates.DUE_SOON),  # leap year: Feb 29 anniversary
        ("2025-05-15", 12, "2025-06-01", "2026-05-14", due_dates.OK),
    ],
)
def test_calibration_item(calibrated, months, today, last_valid, state):
    item = calibration_item(1, "M-1", D(calibrated), months, D(today), 7)
    assert (item.due, item.state) == (D(last_valid), state)
    # The due date agrees with the rule for using a meter (common practice: valid for 12 months).
    assert due_dates.calibration_valid_on(D(calibrated), months, item.due)
    assert not due_dates.calibration_valid_on(D(calibrated), months, item.due + timedelta(days=1))


@pytest.mark.parametrize(
    ("issued", "cycle", "today", "due_on"),
    [
        ("2022-01-31", ExchangeCycle.MONTHLY, "2024-02-10", "2024-02-29"),  # leap year
        ("2022-01-31", ExchangeCycle.MONTHLY, "2025-02-28", "2025-02-28"),  # due today
        ("2024-11-30", ExchangeCycle.QUARTERLY, "2024-11-30", "2024-12-31"),
        ("2023-11-29", ExchangeCycle.QUARTERLY, "2024-02-29", "2024-03-31"),
    ],
)
def test_dosimeter_exchange_is_the_end_of_the_current_wear_period(issued, cycle, today, due_on):
    dosimeter = Dosimeter(id=1, wearer_id=2, serial="D-1", issued_on=D(issued), exchange_cycle=cycle)
    exchange_on = wear_period(dosimeter, D(today))[1]
    item = dosimeter_item(1, 2, "D-1", exchange_on, D(today), 7)
    assert item.due == D(due_on) and item.days_late == 0


def test_refresher_item_is_late_the_day_after():
    on_day = refresher_item(1, 2, "Ann", 3, "XRD", D("2024-02-29"), D("2024-02-29"), 7)
    after = refresher_item(1, 2, "Ann", 3, "XRD", D("2024-02-29"), D("2024-03-01"), 7)
    assert (on_day.state, after.state, after.days_late) == (due_dates.DUE_SOON, due_dates.OVERDUE, 1)


def test_a_permit_is_late_from_the_end_of_its_window():
    start, end = utc("2024-02-28T08:00"), utc("2024-02-29T12:00")
    before = permit_item(1, 2, 3, "XRD", start, end, D("2024-02-29"), utc("2024-02-29T11:00"),
                         D("2024-02-29"), 7)
    after = permit_item(1, 2, 3, "XRD", start, end, D("2024-02-29"), utc("2024-02-29T12:00"),
                        D("2024-02-29"), 7)
    assert (before.state, after.state) == (due_dates.DUE_SOON, due_dates.OVERDUE)


def test_keys_are_stable_and_distinct():
    a = check_item(1, "XRD", D("2024-01-31"), 30, D("2020-01-01"), D("2024-02-01"), 7)
    b = check_item(1, "XRD", D("2024-01-31"), 30, D("2020-01-01"), D("2024-02-20"), 7)
    c = survey_item(1, "XRD", D("2024-01-31"), 30, False, D("2020-01-01"), D("2024-02-01"), 7)
    assert a.key == b.key == "check-1-2024-03-01"
    assert a.key != c.key


def test_the_lab_list_puts_the_overdue_check_first(session, make_instrument, make_person,
                                                   record_a_check):
    rso = make_person(roles=(Role.SAFETY_OFFICER,))
    late = make_instrument(name="Late XRD")
    fresh = make_instrument(name="Fresh XRF")
    record_a_check(late, rso, performed_at=LAB_NOW - timedelta(days=40))
    record_a_check(fresh, rso)
    items = pending(lab_items(session, LAB_NOW))
    first = items[0]
    assert (first.kind, first.subject, first.state, first.days_late) == (CHECK, "Late XRD",
                                                                        due_dates.OVERDUE, 10)
    assert not any(i.kind == CHECK and i.subject == "Fresh XRF" for i in items)
    assert [i.days_late for i in items] == sorted((i.days_late for i in items), reverse=True)


def test_a_person_sees_their_instruments_training_permits_and_dosimeters(
        session, make_instrument, make_person, authorise):
    me, other = make_person(), make_person()
    mine, theirs = make_instrument(name="Mine"), make_instrument(name="Theirs")
    authorise(me, mine, trained_on=LAB_TODAY - timedelta(days=360),
              refresher_due=LAB_TODAY + timedelta(days=2))
    authorise(other, theirs)
    now = LAB_NOW
    session.add_all([
        Dosimeter(serial="D-1", kind=DosimeterKind.WHOLE_BODY, wearer_id=me.id,
                  issued_on=LAB_TODAY - timedelta(days=40)),
        Dosimeter(serial="D-2", kind=DosimeterKind.WHOLE_BODY, wearer_id=other.id,
                  issued_on=LAB_TODAY - timedelta(days=40)),
        BypassPermit(instrument_id=mine.id, devices="Door interlock", reason="Alignment",
                     requested_by_id=me.id, window_start=now - timedelta(hours=5),
                     window_end=now - timedelta(hours=1), status=PermitStatus.APPROVED),
        SurveyMeter(serial="M-9", calibrated_on=LAB_TODAY - timedelta(days=500)),
    ])
    session.flush()
    subjects = {(i.kind, i.subject) for i in person_items(session, me, now)}
    assert ("check", "Mine") in subjects and ("survey", "Mine") in subjects
    assert ("refresher", f"{me.name} on Mine") in subjects
    assert ("dosimeter", "Dosimeter D-1") in subjects and ("permit", "Mine") in subjects
    assert not any("Theirs" in s or "D-2" in s or "M-9" in s for _, s in subjects)
    lab = {(i.kind, i.subject) for i in lab_items(session, now)}
    assert {("calibration", "Meter M-9"), ("dosimeter", "Dosimeter D-2"), ("check", "Theirs")} <= lab
