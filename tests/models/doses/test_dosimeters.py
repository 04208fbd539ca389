"""Dosimeters: issue and return, calendar wear periods, and the list of results that never came."""
from dataclasses import replace
from datetime import date

import pytest

from models.core.codes import Result
from models.core.errors import Invalid
from models.doses.dosimeter_ops import (
    calendar_period,
    issue_dosimeter,
    last_overdue_period,
    missing_results,
    return_dosimeter,
)
from models.doses.record_ops import amend_dose_record, entry_of
from models.doses.tables import DoseSource, Dosimeter, DosimeterKind, ExchangeCycle

M, Q = ExchangeCycle.MONTHLY, ExchangeCycle.QUARTERLY


@pytest.mark.parametrize("day, cycle, period", [
    (date(2026, 1, 15), M, (date(2026, 1, 1), date(2026, 1, 31))),
    (date(2024, 2, 29), M, (date(2024, 2, 1), date(2024, 2, 29))),
    (date(2026, 12, 31), M, (date(2026, 12, 1), date(2026, 12, 31))),
    (date(2026, 5, 2), Q, (date(2026, 4, 1), date(2026, 6, 30))),
    (date(2026, 11, 30), Q, (date(2026, 10, 1), date(2026, 12, 31))),
])
def test_calendar_periods(day, cycle, period):
    assert calendar_period(day, cycle) == period


@pytest.mark.parametrize("issued, returned, cycle, today, period", [
    # First month not yet 45 days past its end: nothing is due.
    (date(2026, 1, 10), None, M, date(2026, 3, 1), None),
    # January (from the issue day) ended 48 days before 20 March.
    (date(2026, 1, 10), None, M, date(2026, 3, 20), (date(2026, 1, 10), date(2026, 1, 31))),
    # Exactly 46 days after the end of February: February is due.
    (date(2026, 1, 10), None, M, date(2026, 4, 15), (date(2026, 2, 1), date(2026, 2, 28))),
    (date(2025, 1, 1), None, Q, date(2025, 6, 1), (date(2025, 1, 1), date(2025, 3, 31))),
    # A returned dosimeter's last wear period ends on its return day.
    (date(2025, 1, 1), date(2025, 2, 15), M, date(2026, 1, 1), (date(2025, 2, 1), date(2025, 2, 15))),
])
def test_last_overdue_period(issued, returned, cycle, today, period):
    dosimeter = Dosimeter(serial="X", kind=DosimeterKind.WHOLE_BODY, wearer_id=1, issued_on=issued,
                          returned_on=returned, exchange_cycle=cycle)
    assert last_overdue_period(dosimeter, today) == period


def test_issue_refusals(session, make_person, make_dosimeter):
    ann = make_person("ann")
    make_dosimeter(ann, serial="WB-1")
    with pytest.raises(Invalid) as caught:
        issue_dosimeter(session, serial="WB-1", kind=DosimeterKind.RING, hand=None, wearer_id=None,
                        issued_on=None, exchange_cycle=M)
    assert set(caught.value.errors) == {"serial", "kind", "wearer", "issued_on"}


def test_return_refusals(session, make_person, make_dosimeter):
    badge = make_dosimeter(make_person("ann"), issued_on=date(2026, 1, 1))
    with pytest.raises(Invalid):
        return_dosimeter(session, badge, date(2025, 12, 31))
    return_dosimeter(session, badge, date(2026, 2, 1))
    with pytest.raises(Invalid, match="already returned"):
        return_dosimeter(session, badge, date(2026, 2, 2))


def test_missing_results(session, make_person, make_dosimeter, make_dose):
    ann, bob, cy = make_person("ann"), make_person("bob"), make_person("cy")
    silent = make_dosimeter(ann, issued_on=date(2026, 1, 1))
    reported = make_dosimeter(bob, issued_on=date(2026, 1, 1))
    make_dose(bob, dosimeter_id=reported.id, result=Result.NOT_RETURNED, value=None,
              wear_start=date(2026, 1, 1), wear_end=date(2026, 1, 31))
    fine = make_dosimeter(cy, issued_on=date(2026, 1, 1))
    make_dose(cy, dosimeter_id=fine.id, wear_start=date(2026, 1, 1), wear_end=date(2026, 1, 31))
    today = date(2026, 3, 20)
    found = {(m.dosimeter.serial, m.record is not None) for m in missing_results(session, today)}
    assert found == {(silent.serial, False), (reported.serial, True)}

    # An estimate that replaces the not-returned result takes it off the list.
    record = next(m.record for m in missing_results(session, today) if m.record)
    entry = replace(entry_of(record), result=Result.MEASURED, value=0.1,
                    source=DoseSource.RSO_ESTIMATE, basis="Same work as last month.")
    amend_dose_record(session, record, entry, "Badge never came back.")
    assert {m.dosimeter.serial for m in missing_results(session, today)} == {silent.serial}
