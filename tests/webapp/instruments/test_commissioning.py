"""A new instrument is not yet commissioned; a passing check and a passing survey put it in service."""
from __future__ import annotations

import html
from datetime import UTC, date, datetime

import sqlalchemy as sa

from models.instruments.tables import Instrument
from models.people.tables import Role
from models.surveys.survey_ops import PointInput, SurveyInput, record_survey
from models.surveys.tables import SurveyTrigger
from webapp.extensions import db

NEW = {"name": "New XRF", "kind": "xrf", "room": "C2", "registration_number": "R-9", "anode": "Rh",
       "max_kv": "60", "max_ma": "160", "max_power_w": "4000", "enclosure": "enclosed",
       "check_interval_days": "30", "survey_interval_days": "365",
       "surface_action_level_usv_h": "2.5", "housing_action_level_usv_h": "25"}


def _text(response) -> str:
    return html.unescape(response.get_data(as_text=True))


def _survey(instrument, person, meter, reading: float, when: datetime):
    return record_survey(db.session, SurveyInput(
        instrument=instrument, performed_at=when, survey_date=when.date(), performed_by=person,
        trigger=SurveyTrigger.PERIODIC, kv=40, ma=30, meter=meter, unit="uSv/h",
        points=[PointInput("Window", reading, 0.0)]))


def test_an_instrument_added_by_the_admin_waits_for_commissioning(make_person, login):
    admin = make_person("admin", roles=(Role.ADMIN,))
    response = login(admin).post("/instruments/new", data=NEW)
    assert response.status_code == 302
    instrument = db.session.scalar(sa.select(Instrument).where(Instrument.name == "New XRF"))
    assert not instrument.in_service and not instrument.commissioned
    page = _text(login(admin).get(f"/instruments/{instrument.id}"))
    assert "not yet commissioned" in page and "safety-device check: no pass yet" in page


def test_a_passing_check_and_a_passing_survey_put_it_in_service(
        make_person, make_instrument, record_a_check, make_meter, authorise, login):
    rso = make_person("rso", roles=(Role.SAFETY_OFFICER,), name="Rae Safety")
    operator = make_person("op")
    instrument = make_instrument(name="New XRF", commissioned=False)
    authorise(operator, instrument)
    # Start is not offered: the reason says what is missing.
    home = _text(login(operator).get("/"))
    assert "New XRF is out of service: Not yet commissioned: it enters service after a passing" in home
    # The safety officer cannot wave it into service.
    client = login(rso)
    client.post(f"/instruments/{instrument.id}/service", data={"reason": "looks fine"})
    db.session.expire_all()
    assert not instrument.in_service
    # A failed survey does not count; a passing check alone is not enough.
    meter = make_meter(calibrated_on=date(2026, 6, 1))
    _survey(instrument, rso, meter, 9.0, datetime(2026, 11, 2, 10, tzinfo=UTC))
    record_a_check(instrument, rso, performed_at=datetime(2026, 11, 3, 9, tzinfo=UTC))
    db.session.expire_all()
    assert not instrument.commissioned and instrument.commissioning_check_at is not None
    assert instrument.commissioning_survey_at is None
    # The failed survey put a hold of its own: commissioning records the pass, the officer lifts it.
    _survey(instrument, rso, meter, 1.0, datetime(2026, 11, 4, 10, tzinfo=UTC))
    db.session.commit()
    db.session.expire_all()
    assert instrument.commissioned_at == datetime(2026, 11, 4, 10, tzinfo=UTC)
    client.post(f"/instruments/{instrument.id}/service", data={"reason": "Cause of the 9 µSv/h found"})
    db.session.expire_all()
    assert instrument.in_service
    page = _text(client.get(f"/instruments/{instrument.id}"))
    assert "in service since 2026-11-04" in page
    assert "safety-device check: 2026-11-03" in page and "survey: 2026-11-04" in page


def test_check_then_survey_puts_a_new_instrument_in_service_by_itself(
        make_person, make_instrument, record_a_check, make_meter):
    rso = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    instrument = make_instrument(commissioned=False)
    record_a_check(instrument, rso, performed_at=datetime(2026, 11, 3, 9, tzinfo=UTC))
    _survey(instrument, rso, make_meter(calibrated_on=date(2026, 6, 1)), 1.0,
            datetime(2026, 11, 4, 10, tzinfo=UTC))
    db.session.commit()
    assert instrument.in_service and instrument.out_of_service_reason is None


def test_a_failed_check_does_not_commission(make_person, make_instrument, record_a_check, make_meter):
    rso = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    instrument = make_instrument(commissioned=False)
    _survey(instrument, rso, make_meter(calibrated_on=date(2026, 6, 1)), 1.0,
            datetime(2026, 11, 4, 10, tzinfo=UTC))
    record_a_check(instrument, rso, fail=(1,), performed_at=datetime(2026, 11, 5, 9, tzinfo=UTC))
    db.session.expire_all()
    assert not instrument.commissioned and not instrument.in_service
