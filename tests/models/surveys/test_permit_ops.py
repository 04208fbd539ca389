"""Bypass permits: request rules, the safety officer's decision, closing raises a survey task."""
from datetime import timedelta

import pytest

from models.core.errors import Invalid
from models.people.tables import Role
from models.surveys.permit_ops import (
    PermitRequest,
    active_permits,
    close_permit,
    decide,
    display_state,
    expired_unclosed_permits,
    request_permit,
)
from models.surveys.survey_ops import open_survey_tasks
from models.surveys.tables import PermitStatus, SurveyTrigger
from tests.conftest import LAB_NOW

NOW = LAB_NOW
HOUR = timedelta(hours=1)


def _ask(session, instrument, person, start=NOW - HOUR, end=NOW + HOUR, ring=True):
    return request_permit(session, PermitRequest(
        instrument=instrument, requested_by=person, devices="Door interlock",
        reason="Align the primary beam", window_start=start, window_end=end,
        ring_dosimetry_confirmed=ring))


@pytest.fixture
def people(make_person):
    return make_person(roles=(Role.OPERATOR,)), make_person(roles=(Role.SAFETY_OFFICER,))


def test_ring_dosimetry_is_required(session, make_instrument, people):
    with pytest.raises(Invalid) as caught:
        _ask(session, make_instrument(), people[0], ring=False)
    # Ariz. R9-7-806(F): rings for open-beam work without a safety device.
    assert "R9-7-806(F)" in caught.value.errors["ring_dosimetry_confirmed"]


def test_window_must_be_ordered_and_to_come(session, make_instrument, people):
    instrument = make_instrument()
    with pytest.raises(Invalid, match="end after it starts"):
        _ask(session, instrument, people[0], start=NOW + HOUR, end=NOW)
    with pytest.raises(Invalid, match="already ended"):
        _ask(session, instrument, people[0], start=NOW - 3 * HOUR, end=NOW - HOUR)


def test_only_the_safety_officer_decides(session, make_instrument, people):
    operator, rso = people
    permit = _ask(session, make_instrument(), operator)
    with pytest.raises(PermissionError):
        decide(session, permit, operator, True, "")
    decide(session, permit, rso, True, "Sign on the housing")
    assert permit.status is PermitStatus.APPROVED and permit.decided_by is rso


def test_refusing_needs_a_note(session, make_instrument, people):
    permit = _ask(session, make_instrument(), people[0])
    with pytest.raises(Invalid, match="Say why"):
        decide(session, permit, people[1], False, " ")


def test_states_through_the_window(session, make_instrument, people):
    operator, rso = people
    permit = _ask(session, make_instrument(), operator)
    assert display_state(permit, NOW) == "requested" and active_permits(session, NOW) == []
    decide(session, permit, rso, True, "")
    assert display_state(permit, NOW - 2 * HOUR) == "approved"
    assert display_state(permit, NOW) == "active" and active_permits(session, NOW) == [permit]
    # From window_end on the approval has run out (half-open window).
    assert display_state(permit, NOW + HOUR) == "not closed"
    assert expired_unclosed_permits(session, NOW + HOUR) == [permit]


def test_closing_raises_a_survey_task(session, make_instrument, people):
    operator, rso = people
    instrument = make_instrument()
    permit = _ask(session, instrument, operator)
    decide(session, permit, rso, True, "")
    close_permit(session, permit, operator)
    assert permit.status is PermitStatus.CLOSED and permit.closed_by_id == operator.id
    [task] = open_survey_tasks(session, instrument)
    assert (task.trigger, task.bypass_permit_id) == (SurveyTrigger.AFTER_BYPASS, permit.id)
    # Closed now, so not active from now on; it did cover the window before it was closed.
    assert active_permits(session) == [] and active_permits(session, NOW) == [permit]
    assert expired_unclosed_permits(session, NOW + HOUR) == []


def test_only_requester_or_officer_closes(session, make_instrument, make_person, people):
    operator, rso = people
    permit = _ask(session, make_instrument(), operator)
    decide(session, permit, rso, True, "")
    with pytest.raises(PermissionError):
        close_permit(session, permit, make_person(roles=(Role.OPERATOR,)))
