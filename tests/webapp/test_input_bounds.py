"""Hostile or impossible input gets a field error or a problem document, never a server error."""
import json
from datetime import date

import pytest
import sqlalchemy as sa
from flask_wtf import FlaskForm
from openapi_spec_validator import validate

from models.core.errors import Invalid
from models.core.settings import lab_settings
from models.exposure.tables import PregnancyDeclaration
from models.instruments.tables import Instrument
from models.people.tables import Person, Role
from models.sessions.session_ops import open_session
from models.sessions.tables import InstrumentSession
from webapp.api.openapi import document
from webapp.forms import LogbookForm

HUGE_ID = "9" * 40
BODY = {"operator": "op", "kv": 40, "ma": 30, "purpose": "silicon", "pre_use_checks_confirmed": True}
PROBLEM = "application/problem+json"


@pytest.fixture
def api(make_person, make_instrument, authorise, api_token):
    """An operator authorised on an instrument, and the instrument PC's headers."""
    operator = make_person("op")
    instrument = make_instrument(name="Cu powder")
    authorise(operator, instrument, trained_on=date(2026, 1, 5), refresher_due=date(2099, 1, 1))
    return instrument, {"Authorization": f"Bearer {api_token(instrument)}"}


def _count(session, model) -> int:
    return session.scalar(sa.select(sa.func.count()).select_from(model))


def test_forty_digit_ids_in_addresses_are_not_found(make_person, login, api, client):
    rso = login(make_person("rso", roles=(Role.SAFETY_OFFICER,)))
    for url in (f"/instruments/{HUGE_ID}", f"/sessions/{HUGE_ID}", f"/doses/person/{HUGE_ID}",
                f"/exposure/person/{HUGE_ID}"):
        assert rso.get(url).status_code == 404, url
    _, headers = api
    response = client.post(f"/api/v1/sessions/{HUGE_ID}/close", json={}, headers=headers)
    assert response.status_code == 404 and response.mimetype == PROBLEM


def test_a_forty_digit_id_in_a_form_is_a_field_error(make_person, login, make_instrument):
    rso = login(make_person("rso", roles=(Role.SAFETY_OFFICER,)))
    response = rso.post("/surveys/new", data={"instrument_id": HUGE_ID, "meter_id": HUGE_ID,
                                              "performed_at": "2026-11-30T10:00", "kv": "40", "ma": "30"})
    assert response.status_code == 200
    assert "Not a valid choice" in response.text or "could not coerce" in response.text.lower()


@pytest.mark.parametrize("year", ["0001", "1949", "2101", "9999"])
def test_dates_outside_1950_to_2100_are_refused_beside_the_field(session, make_person, login, year):
    ann = make_person("ann")
    response = login(ann).post(f"/doses/person/{ann.id}/pregnancy/declare", data={"declared_on": f"{year}-06-01"})
    assert response.status_code == 400
    assert "Enter a date between 1950 and 2100." in response.text
    assert _count(session, PregnancyDeclaration) == 0


def test_an_absurd_interval_or_an_infinite_rating_is_refused_and_pages_keep_working(
        session, make_person, login):
    admin = login(make_person("admin", roles=(Role.ADMIN, Role.SAFETY_OFFICER, Role.OPERATOR)))
    form = admin.get("/instruments/new").text
    assert "Accepted: 1 to 366 days." in form and "Accepted: 0.001 to 500 kV." in form
    data = {"name": "XRD", "kind": "powder_xrd", "room": "B1", "anode": "Cu", "max_kv": "inf", "max_ma": "nan",
            "max_power_w": "1e308", "enclosure": "enclosed", "check_interval_days": "3000000",
            "survey_interval_days": "365", "surface_action_level_usv_h": "2.5", "housing_action_level_usv_h": "25"}
    response = admin.post("/instruments/new", data=data)
    assert response.status_code == 200
    assert "Enter a finite number." in response.text  # inf and nan, refused by the fields
    # The domain's ranges are checked once the fields hold finite numbers.
    response = admin.post("/instruments/new", data={**data, "max_kv": "60", "max_ma": "40"})
    assert "The interval must be from 1 to 366 days." in response.text
    assert "Maximum power must be from 0.001 to 100,000 W." in response.text
    assert _count(session, Instrument) == 0
    for url in ("/", "/due", "/instruments/"):
        assert admin.get(url, follow_redirects=True).status_code == 200, url


def test_nul_bytes_are_refused_at_login_and_in_forms(make_person, login, client):
    response = client.post("/login", data={"login": "op\x00", "password": "x\x00"})
    assert response.status_code == 200 and "control characters" in response.text
    admin = login(make_person("admin", roles=(Role.ADMIN,)))
    response = admin.post("/instruments/new", data={"name": "X\x00", "anode": "Cu"})
    assert response.status_code == 200 and "control characters" in response.text


def test_a_long_purpose_is_refused_with_its_limit_not_cut(session, api, client):
    _, headers = api
    response = client.post("/api/v1/sessions", json={**BODY, "purpose": "x" * 301}, headers=headers)
    assert response.status_code == 422
    assert response.get_json()["errors"]["purpose"] == "'purpose' may be at most 300 characters (it has 301)."
    assert _count(session, InstrumentSession) == 0


def test_the_domain_refuses_a_long_purpose_too(session, api, make_person):
    instrument, _ = api
    operator = session.scalar(sa.select(Person).where(Person.login == "op"))
    values = {"kv": 40.0, "ma": 30.0, "purpose": "y" * 301, "pre_use_checks_confirmed": True}
    with pytest.raises(Invalid) as refused:
        open_session(session, instrument, operator, values)
    assert "purpose" in refused.value.errors
    session.rollback()


def test_the_form_states_the_purpose_limit(make_person, make_instrument, authorise, login):
    operator = make_person("op")
    instrument = make_instrument()
    authorise(operator, instrument, trained_on=date(2026, 1, 5), refresher_due=date(2099, 1, 1))
    page = login(operator).get(f"/sessions/start/{instrument.id}").text
    assert "At most 300 characters." in page and 'maxlength="300"' in page


@pytest.mark.parametrize("body, status", [
    ("[" * 30_000 + "]" * 30_000, 400),          # deeper than the parser goes
    (json.dumps({**BODY, "extra": [[[[[[1]]]]]]}), 400),  # deeper than the API accepts
    ('{"operator": "op", "kv": 1e999, "ma": 30, "pre_use_checks_confirmed": true}', 422),
    ('{"operator": "op", "kv": ' + "9" * 5000 + ', "ma": 30, "pre_use_checks_confirmed": true}', 400),
    ('{"operator": "op", "kv": NaN, "ma": 30, "pre_use_checks_confirmed": true}', 422),
    (json.dumps({**BODY, "operator": "op\x00"}), 422),
    (json.dumps({**BODY, "purpose": "a\x00b"}), 422),
    (json.dumps({**BODY, "dosimeter": "D\x00"}), 422),
    (json.dumps({**BODY, "started_at": "9999-12-31T23:59:59-05:00"}), 422),
    (json.dumps({**BODY, "started_at": "0001-01-01T00:00:00+05:00"}), 422),
    (json.dumps({**BODY, "purpose": "x" * 70_000}), 413),
])
def test_hostile_json_gets_a_problem_document(session, api, client, body, status):
    _, headers = api
    response = client.post("/api/v1/sessions", data=body, headers={**headers, "Content-Type": "application/json"})
    assert response.status_code == status, response.text[:300]
    assert response.mimetype == PROBLEM
    assert _count(session, InstrumentSession) == 0


def test_every_api_error_is_a_problem_document(app, api, client):
    def fail():
        raise RuntimeError("boom")

    app.add_url_rule("/api/v1/test-failure", view_func=fail)
    app.config["PROPAGATE_EXCEPTIONS"] = False
    _, headers = api
    assert client.get("/api/v1/no-such-thing", headers=headers).mimetype == PROBLEM  # 404 at routing
    response = client.delete("/api/v1/sessions", headers=headers)
    assert response.status_code == 405 and response.mimetype == PROBLEM
    response = client.get("/api/v1/test-failure", headers=headers)
    assert response.status_code == 500 and response.mimetype == PROBLEM
    assert response.get_json()["detail"].startswith("Nothing was saved")


def test_a_created_session_says_where_it_is(api, client):
    _, headers = api
    response = client.post("/api/v1/sessions", json=BODY, headers=headers)
    assert response.status_code == 201
    again = client.get(response.headers["Location"], headers=headers)
    assert again.status_code == 200 and again.get_json()["id"] == response.get_json()["id"]


def test_the_openapi_document_passes_a_standard_validator(client):
    validate(client.get("/api/v1/openapi.json").get_json())
    validate(document())


@pytest.mark.parametrize("started, problem", [("2026-03-29T02:30", "did not exist"),
                                              ("2026-10-25T02:30", "happened twice")])
def test_lab_times_a_clock_change_skips_or_repeats_are_refused_by_field(
        session, make_person, make_instrument, authorise, login, started, problem):
    # EU summer time 2026: 29 March 02:00 -> 03:00 and 25 October 03:00 -> 02:00 (Directive 2000/84/EC).
    lab_settings(session).timezone = "Europe/Berlin"
    session.commit()
    operator = make_person("op")
    instrument = make_instrument()
    authorise(operator, instrument, trained_on=date(2026, 1, 5), refresher_due=date(2099, 1, 1))
    response = login(operator).post("/sessions/log", data={
        "kv": "40", "ma": "40", "purpose": "quartz", "pre_use_checks_confirmed": "y",
        "instrument": str(instrument.id), "started_at": started, "ended_at": "2026-11-01T12:00"})
    assert response.status_code == 200
    assert problem in response.text
    assert _count(session, InstrumentSession) == 0


def test_every_form_of_the_app_derives_from_the_bounded_base(app):
    def subclasses(cls):
        for sub in cls.__subclasses__():
            yield sub
            yield from subclasses(sub)

    ours = [c for c in subclasses(FlaskForm) if c.__module__.startswith("webapp.")]
    assert len(ours) > 30
    assert [c.__qualname__ for c in ours if not issubclass(c, LogbookForm) and c is not LogbookForm] == []
