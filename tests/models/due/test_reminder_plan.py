"""Reminder keys: once when due soon, once when late, then weekly while late."""
from datetime import date, timedelta

import pytest

from models.due.due_list_ops import check_item
from models.due.reminder_ops import plan_reminders, record_sent, reminder_key
from models.people.tables import Role
from tests.conftest import LAB_NOW

D = date.fromisoformat


@pytest.mark.parametrize(
    ("today", "key"),
    [
        ("2024-02-22", None),  # 8 days before: on time, nothing to remind
        ("2024-02-23", "check-1-2024-03-01:due_soon"),
        ("2024-03-01", "check-1-2024-03-01:due_soon"),
        ("2024-03-02", "check-1-2024-03-01:overdue:0"),
        ("2024-03-08", "check-1-2024-03-01:overdue:1"),  # a week late: remind again
        ("2024-03-14", "check-1-2024-03-01:overdue:1"),
    ],
)
def test_reminder_key(today, key):
    item = check_item(1, "XRD", D("2024-01-31"), 30, D("2020-01-01"), D(today), 7)
    assert (reminder_key(item) if item.pending else None) == key


def test_a_second_plan_after_recording_finds_nothing_new(session, make_instrument, make_person,
                                                         authorise, record_a_check):
    rso = make_person(roles=(Role.SAFETY_OFFICER,))
    operator = make_person()
    instrument = make_instrument()
    authorise(operator, instrument)
    record_a_check(instrument, rso, performed_at=LAB_NOW - timedelta(days=35))
    now = LAB_NOW
    plan = plan_reminders(session, now)
    assert {(r.person.login, r.digest) for r in plan} == {(operator.login, False),
                                                          (rso.login, True)}
    for reminder in plan:
        record_sent(session, reminder, now)
    assert plan_reminders(session, now) == []
    assert plan_reminders(session, now + timedelta(days=1)) == []
