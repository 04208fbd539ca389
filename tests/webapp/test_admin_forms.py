"""The admin's forms: good input saves, bad input is explained beside the field and saves nothing."""
import re

import sqlalchemy as sa

from models.audit.tables import AuditEvent
from models.instruments.tables import Instrument
from models.people.tables import Person, Role


def _errors(response) -> list[str]:
    return re.findall(r'<span class="error" role="alert">([^<]*)</span>', response.data.decode())


def _count(session, model):
    return session.scalar(sa.select(sa.func.count()).select_from(model))


INSTRUMENT = {"name": "Mo single crystal", "kind": "single_crystal_xrd", "room": "C2",
              "registration_number": "R-7", "anode": "Mo", "max_kv": "50", "max_ma": "1",
              "max_power_w": "50", "enclosure": "enclosed", "check_interval_days": "30",
              "survey_interval_days": "365", "surface_action_level_usv_h": "2.5",
              "housing_action_level_usv_h": "25"}


def test_admin_adds_an_instrument(make_person, login, session):
    client = login(make_person(roles=(Role.ADMIN,)))
    response = client.post("/instruments/new", data=INSTRUMENT)
    assert response.status_code == 302
    instrument = session.scalar(sa.select(Instrument))
    assert (instrument.name, instrument.anode, instrument.max_kv) == ("Mo single crystal", "Mo", 50)


def test_bad_instrument_input_is_explained_and_nothing_written(make_person, login, session):
    client = login(make_person(roles=(Role.ADMIN,)))
    events_before = _count(session, AuditEvent)
    bad = {**INSTRUMENT, "name": "", "max_kv": "-5", "max_power_w": "0", "max_ma": "lots"}
    response = client.post("/instruments/new", data=bad)
    assert response.status_code == 200
    errors = _errors(response)
    assert "Enter the instrument&#39;s name." in errors
    assert "Not a valid float value." in errors or "Enter a number." in errors
    # The domain's rules are checked once the fields are well formed.
    response = client.post("/instruments/new", data={**bad, "name": "Mo single crystal", "max_ma": "40"})
    assert response.status_code == 200
    errors = _errors(response)
    assert "Maximum tube voltage must be greater than zero." in errors
    assert "Maximum power must be greater than zero." in errors
    assert _count(session, Instrument) == 0
    assert _count(session, AuditEvent) == events_before


def test_admin_adds_a_person(make_person, login, session):
    client = login(make_person(roles=(Role.ADMIN,)))
    response = client.post("/people/new", data={
        "login": "newbie", "name": "New Operator", "email": "newbie@example.org",
        "roles": ["operator"], "category": "trainee", "password": "p" * 12, "confirm": "p" * 12})
    assert response.status_code == 302
    person = session.scalar(sa.select(Person).where(Person.login == "newbie"))
    assert person.category == "trainee" and person.role_set == {Role.OPERATOR}
    assert person.password_hash.startswith("scrypt:")


def test_duplicate_login_and_blank_name_are_explained(make_person, login, session):
    client = login(make_person("boss", roles=(Role.ADMIN,)))
    people_before = _count(session, Person)
    data = {"login": "boss", "name": " ", "roles": ["operator"], "category": "adult_worker",
            "password": "p" * 12, "confirm": "p" * 12}
    assert "Enter the person&#39;s name." in _errors(client.post("/people/new", data=data))
    # The domain's rule (a unique login) is checked once the fields are well formed.
    errors = _errors(client.post("/people/new", data={**data, "name": "Second Boss"}))
    assert "The login &#39;boss&#39; is already taken." in errors
    assert _count(session, Person) == people_before


def test_deactivation_needs_a_reason_and_keeps_the_person(make_person, login, session):
    client = login(make_person(roles=(Role.ADMIN,)))
    person = make_person("leaver")
    assert client.post(f"/people/{person.id}/active", data={"reason": ""}).status_code == 302
    session.refresh(person)
    assert person.active
    client.post(f"/people/{person.id}/active", data={"reason": "Left the lab"})
    session.refresh(person)
    assert not person.active


def test_admin_retires_an_instrument(make_person, login, make_instrument, session):
    client = login(make_person(roles=(Role.ADMIN,)))
    instrument = make_instrument()
    client.post(f"/instruments/{instrument.id}/retire", data={"reason": "Replaced"})
    session.refresh(instrument)
    assert instrument.retired and not instrument.in_service

