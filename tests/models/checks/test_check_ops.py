"""Recording checks, the service hold a failure sets, temporary controls and their expiry."""
from datetime import timedelta

import pytest

from models.checks.check_ops import (
    CHECK_HOLD,
    Answer,
    current_control,
    end_control,
    lapse_expired_controls,
    may_record_check,
    record_check,
    record_control,
)
from models.checks.checklist_ops import DEFAULT_ITEMS, active_items, checklist_for
from models.checks.tables import ItemResult
from models.core.errors import Invalid
from models.instruments.instrument_ops import return_to_service, set_out_of_service
from models.people.tables import Role
from models.surveys.tables import SurveyMeter
from tests.conftest import LAB_NOW, LAB_TODAY


@pytest.fixture
def rso(make_person):
    return make_person("rso", roles=(Role.SAFETY_OFFICER,))


def answers_for(session, instrument, **by_position):
    """Pass for every item unless a position is given another answer."""
    items = active_items(checklist_for(session, instrument))
    return {item.id: by_position.get(f"i{n}", Answer(ItemResult.PASS)) for n, item in enumerate(items)}


def test_a_failed_check_takes_the_instrument_out_naming_the_items(session, make_instrument, rso,
                                                                  record_a_check):
    instrument = make_instrument(name="XRD-1")
    check = record_a_check(instrument, rso, fail=(3,))
    assert check.passed is False
    assert instrument.in_service is False
    assert instrument.out_of_service_cause == CHECK_HOLD
    assert "Warning light fail-safe" in instrument.out_of_service_reason
    assert [r.item_text for r in check.results] == list(DEFAULT_ITEMS)  # wording kept as tested


def test_a_passing_check_brings_it_back(session, make_instrument, rso, record_a_check):
    instrument = make_instrument()
    record_a_check(instrument, rso, fail=(0,))
    record_a_check(instrument, rso)
    assert instrument.in_service is True
    assert instrument.out_of_service_reason is None


def test_a_passing_check_does_not_lift_a_hold_a_person_set(session, make_instrument, rso,
                                                          record_a_check):
    instrument = make_instrument()
    set_out_of_service(session, instrument, "Incident 12: beam seen outside the enclosure")
    record_a_check(instrument, rso, fail=(0,))
    assert instrument.out_of_service_reason.startswith("Incident 12")  # not overwritten
    record_a_check(instrument, rso)
    assert instrument.in_service is False
    assert instrument.out_of_service_cause is None


def test_a_backdated_pass_does_not_lift_a_later_failure(session, make_instrument, rso,
                                                       record_a_check):
    instrument = make_instrument()
    record_a_check(instrument, rso, fail=(1,))
    record_a_check(instrument, rso, performed_at=LAB_NOW - timedelta(days=3))
    assert instrument.in_service is False


def test_every_problem_is_named_by_field(session, make_instrument, rso):
    instrument = make_instrument()
    answers = answers_for(session, instrument, i0=Answer(ItemResult.FAIL, "  "),
                          i1=Answer(None))
    items = active_items(checklist_for(session, instrument))
    with pytest.raises(Invalid) as error:
        record_check(session, instrument, rso, LAB_NOW + timedelta(hours=1), answers, None, None,
                     LAB_NOW)
    assert set(error.value.errors) == {"performed_at", f"comment_{items[0].id}",
                                       f"result_{items[1].id}"}
    assert "fail needs a comment" in error.value.errors[f"comment_{items[0].id}"]


def test_a_meter_out_of_calibration_is_refused(session, make_instrument, rso):
    instrument = make_instrument()
    meter = SurveyMeter(serial="M-1", calibrated_on=LAB_TODAY - timedelta(days=400),
                        calibration_interval_months=12)
    session.add(meter)
    session.flush()
    with pytest.raises(Invalid) as error:
        record_check(session, instrument, rso, LAB_NOW, answers_for(session, instrument), meter,
                     None, LAB_NOW)
    assert "out of calibration on" in error.value.errors["meter_id"]


def test_only_authorised_operators_and_the_safety_officer_may_record(
        session, make_instrument, make_person, authorise, rso):
    instrument = make_instrument()
    operator, stranger = make_person(), make_person()
    authorise(operator, instrument)
    now = LAB_NOW
    assert may_record_check(session, rso, instrument, now)
    assert may_record_check(session, operator, instrument, now)
    assert not may_record_check(session, stranger, instrument, now)


def test_controls_allow_use_until_they_expire(session, make_instrument, rso, record_a_check):
    instrument = make_instrument()
    record_a_check(instrument, rso, fail=(4,))
    now = LAB_NOW
    control = record_control(session, instrument, rso, "Second person at the emergency stop.",
                             now + timedelta(days=2), now)
    assert instrument.in_service is True
    assert current_control(session, instrument, now) is control
    assert lapse_expired_controls(session, now + timedelta(days=1)) == []
    held = lapse_expired_controls(session, now + timedelta(days=2))
    assert held == [instrument]
    assert instrument.in_service is False
    assert instrument.out_of_service_reason.startswith("Temporary controls expired")
    assert lapse_expired_controls(session, now + timedelta(days=3)) == []  # applied once


def test_withdrawing_controls_holds_the_instrument_again(session, make_instrument, rso,
                                                        record_a_check):
    instrument = make_instrument()
    record_a_check(instrument, rso, fail=(4,))
    now = LAB_NOW
    control = record_control(session, instrument, rso, "Shutter locked closed.",
                             now + timedelta(days=2), now)
    end_control(session, control, now)
    assert instrument.in_service is False


def test_controls_need_a_failed_check_and_a_future_expiry(session, make_instrument, rso,
                                                          record_a_check):
    instrument = make_instrument()
    record_a_check(instrument, rso)
    now = LAB_NOW
    with pytest.raises(Invalid) as error:
        record_control(session, instrument, rso, "", now - timedelta(hours=1), now)
    assert set(error.value.errors) == {"instrument", "description", "expires_at"}


def test_a_manual_return_stands_until_the_next_event(session, make_instrument, rso, record_a_check):
    instrument = make_instrument()
    record_a_check(instrument, rso, fail=(0,))
    return_to_service(session, instrument)
    assert instrument.out_of_service_cause is None
    assert lapse_expired_controls(session, LAB_NOW) == []
    assert instrument.in_service is True
