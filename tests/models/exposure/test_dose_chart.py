"""Monthly sums for the chart and the fetal table, and a person's record versions."""
from dataclasses import replace
from datetime import date

import numpy as np
import pytest

from models.doses.record_ops import amend_dose_record, entry_of
from models.doses.tables import DoseRecord
from models.doses.version_ops import record_versions
from models.exposure.chart import engine_records, fetal_months, month_starts, monthly_dose
from models.exposure.engine import Policies

D = date


def _record(value, start, end, **extra):
    values = {"quantity": "Hp(10)", "location": "whole_body", "result": "measured",
              "mrd_msv": None, **extra}
    return DoseRecord(wear_start=start, wear_end=end, value_msv=value, **values)


@pytest.mark.parametrize("on, months, first, last", [
    (D(2026, 3, 17), 3, D(2026, 1, 1), D(2026, 3, 1)),
    (D(2026, 1, 31), 2, D(2025, 12, 1), D(2026, 1, 1)),
    (D(2026, 12, 1), 24, D(2025, 1, 1), D(2026, 12, 1)),
])
def test_month_starts(on, months, first, last):
    starts = month_starts(on, months)
    assert (len(starts), starts[0], starts[-1]) == (months, first, last)


def test_a_wear_period_across_the_new_year_is_shared_by_days():
    records = engine_records([_record(3.1, D(2025, 12, 15), D(2026, 1, 14))])
    data = monthly_dose(records, D(2026, 2, 10), Policies(), months=3)
    assert data.months == [D(2025, 12, 1), D(2026, 1, 1), D(2026, 2, 1)]
    # 17 of the 31 wear days fall in December, 14 in January (PRODUCT.md section 3, proration)
    np.testing.assert_allclose(data.dose, [3.1 * 17 / 31, 3.1 * 14 / 31, 0.0])
    # the running total restarts with the calendar year
    np.testing.assert_allclose(data.year_to_date, [3.1 * 17 / 31, 3.1 * 14 / 31, 3.1 * 14 / 31])


def test_wear_end_policy_puts_the_whole_record_in_its_last_month():
    records = engine_records([_record(3.1, D(2025, 12, 15), D(2026, 1, 14))])
    data = monthly_dose(records, D(2026, 1, 31), Policies(proration="wear_end"), months=2)
    np.testing.assert_allclose(data.dose, [0.0, 3.1])


def test_the_current_month_counts_only_up_to_the_evaluation_date():
    records = engine_records([_record(3.0, D(2026, 3, 1), D(2026, 3, 30))])
    data = monthly_dose(records, D(2026, 3, 10), Policies(), months=1)
    np.testing.assert_allclose(data.dose, [1.0])  # 10 of 30 days


def test_lost_results_are_counted_as_missing_in_their_month():
    records = engine_records([_record(None, D(2026, 2, 1), D(2026, 2, 28), result="lost")])
    data = monthly_dose(records, D(2026, 3, 5), Policies(), months=2)
    assert data.missing.tolist() == [1, 0]
    assert data.dose.tolist() == [0.0, 0.0]


def test_fetal_months_run_from_the_declaration():
    records = engine_records([_record(3.1, D(2026, 1, 1), D(2026, 1, 31)),
                              _record(2.8, D(2026, 2, 1), D(2026, 2, 28))])
    data = fetal_months(records, D(2026, 2, 28), Policies(), D(2026, 1, 17), None)
    assert data.months == [D(2026, 1, 1), D(2026, 2, 1)]
    # 15 of January's 31 days fall on or after the declaration on the 17th
    np.testing.assert_allclose(data.dose, [3.1 * 15 / 31, 2.8])
    np.testing.assert_allclose(data.year_to_date, [3.1 * 15 / 31, 3.1 * 15 / 31 + 2.8])


def test_record_versions_follow_the_chain(session, make_person, make_dose):
    person = make_person()
    first = make_dose(person, value=5.0, wear_start=D(2026, 1, 1), wear_end=D(2026, 1, 31))
    second = amend_dose_record(session, first, replace(entry_of(first), value=0.5), "badge mix-up")
    third = amend_dose_record(session, second, replace(entry_of(second), value=0.4), "reissued")
    later = make_dose(person, value=0.1, wear_start=D(2026, 2, 1), wear_end=D(2026, 2, 28))
    make_dose(make_person(), value=9.0, wear_start=D(2026, 1, 1), wear_end=D(2026, 1, 31))
    chains = record_versions(session, person.id)
    assert [[r.id for r in chain] for chain in chains] == [[later.id], [third.id, second.id, first.id]]


def test_fetal_months_read_the_abdomen_dosimeter_only_from_when_it_was_worn():
    records = engine_records([
        _record(0.4, D(2026, 1, 1), D(2026, 1, 31)),
        _record(0.3, D(2026, 2, 1), D(2026, 2, 28), location="abdomen"),
    ])
    data = fetal_months(records, D(2026, 2, 28), Policies(), D(2026, 1, 1), None)
    # January: no abdomen dosimeter, whole body 0.4; February: the abdomen dosimeter's 0.3.
    np.testing.assert_allclose(data.dose, [0.4, 0.3])
    np.testing.assert_allclose(data.year_to_date, [0.4, 0.7])  # 0.4 + 0.3
    assert np.all(data.dose >= 0)
