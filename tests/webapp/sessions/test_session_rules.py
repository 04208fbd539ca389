"""Each session rule refuses the bad value through the form AND the API, names the limit, writes nothing."""
from __future__ import annotations

import html
import re
from datetime import datetime, timedelta

import pytest
import sqlalchemy as sa

from models.instruments.instrument_ops import retire_instrument, set_out_of_service
from models.instruments.tables import Authorisation
from models.people.tables import Role
from models.sessions.tables import InstrumentSession
from tests.conftest import LAB_NOW, LAB_TODAY
from webapp.extensions import db

RSO = "Rae Safety"


def _minute(moment: datetime) -> datetime:
    """Forms carry minutes only."""
    return moment.replace(second=0, microsecond=0)


NOW = _minute(LAB_NOW)
START, END = NOW - timedelta(hours=2), NOW - timedelta(hours=1)


def _local(moment: datetime) -> str:
    """A datetime-local value; the test lab runs on UTC."""
    return moment.strftime("%Y-%m-%dT%H:%M")


@pytest.fixture
def lab(make_person, make_instrument, authorise, api_token, login):
    """A Cu tube rated 60 kV, 60 mA, 2200 W; an authorised operator; a named RSO; a token."""
    make_person("rso", roles=(Role.SAFETY_OFFICER,), name=RSO)
    operator = make_person("op", name="Olga Operator")
    other = make_person("other", name="Otto Other")
    instrument = make_instrument(name="Cu powder", max_kv=60.0, max_ma=60.0, max_power_w=2200.0)
    authorise(operator, instrument, trained_on=LAB_TODAY - timedelta(days=30))
    authorise(other, instrument, trained_on=LAB_TODAY - timedelta(days=30))
    token = api_token(instrument)
    client = login(operator)
    return {"instrument": instrument, "operator": operator, "other": other, "client": client,
            "headers": {"Authorization": f"Bearer {token}"}}


FORM_START = {"kv": "40", "ma": "40", "purpose": "quartz", "pre_use_checks_confirmed": "y",
              "dosimeter_worn": "y"}
API_START = {"operator": "op", "kv": 40, "ma": 40, "purpose": "quartz",
             "pre_use_checks_confirmed": True, "dosimeter_worn": True}


def _errors(page: str) -> list[str]:
    """The error messages shown on a page."""
    return re.findall(r'class="error" role="alert">([^<]*)<', page)


def _count() -> int:
    return db.session.scalar(sa.select(sa.func.count()).select_from(InstrumentSession))


def _form_finished(lab, **over) -> dict:
    return {**FORM_START, "instrument": str(lab["instrument"].id), "started_at": _local(START),
            "ended_at": _local(END), **over}


def _api_finished(**over) -> dict:
    return {**API_START, "started_at": START.isoformat(), "ended_at": END.isoformat(), **over}


def _post_form(lab, kind: str, data: dict):
    url = f"/sessions/start/{lab['instrument'].id}" if kind == "start" else "/sessions/log"
    return lab["client"].post(url, data=data)


def _post_api(lab, kind: str, body: dict):
    url = "/api/v1/sessions" if kind == "start" else "/api/v1/sessions/finished"
    return lab["client"].post(url, json=body, headers=lab["headers"])


def _out_of_service(lab):
    set_out_of_service(db.session, lab["instrument"], "Shutter indicator stuck open")


def _retired(lab):
    retire_instrument(db.session, lab["instrument"])


def _expired(lab):
    auth = db.session.scalar(sa.select(Authorisation).where(
        Authorisation.person_id == lab["operator"].id))
    auth.trained_on = LAB_TODAY - timedelta(days=400)
    auth.refresher_due = LAB_TODAY - timedelta(days=1)


def _revoked(lab):
    auth = db.session.scalar(sa.select(Authorisation).where(
        Authorisation.person_id == lab["operator"].id))
    auth.revoked_at = LAB_NOW


def _unauthorised(lab):
    db.session.execute(sa.delete(Authorisation).where(Authorisation.person_id == lab["operator"].id))


def _busy(lab):
    db.session.add(InstrumentSession(instrument_id=lab["instrument"].id,
                                     operator_id=lab["other"].id, kv=30, ma=10,
                                     started_at=NOW - timedelta(hours=3),
                                     pre_use_checks_confirmed=True))


# (rule, form kind, form overrides, API overrides, set-up, field, words the message must hold)
CASES = [
    ("kV zero", "start", {"kv": "0"}, {"kv": 0}, None, "kv", ["Tube voltage must be above 0 kV."]),
    ("kV past rating", "start", {"kv": "60.5"}, {"kv": 60.5}, None, "kv",
     ["Tube voltage 60.5 kV is above this instrument's rating of 60 kV."]),
    ("mA zero", "start", {"ma": "0"}, {"ma": 0}, None, "ma", ["Tube current must be above 0 mA."]),
    ("mA negative", "start", {"ma": "-3"}, {"ma": -3}, None, "ma", ["Tube current must be above 0 mA."]),
    ("mA past rating", "start", {"ma": "60.1"}, {"ma": 60.1}, None, "ma",
     ["Tube current 60.1 mA is above this instrument's rating of 60 mA."]),
    ("power past rating", "start", {"kv": "50", "ma": "45"}, {"kv": 50, "ma": 45}, None, "ma",
     ["Tube power 50 kV × 45 mA = 2250 W is above this instrument's rating of 2200 W."]),
    ("end before start", "finished", {"ended_at": _local(START - timedelta(minutes=10))},
     {"ended_at": (START - timedelta(minutes=10)).isoformat()}, None, "ended_at",
     ["must be after the start"]),
    ("end equal to start", "finished", {"ended_at": _local(START)}, {"ended_at": START.isoformat()},
     None, "ended_at", ["must be after the start"]),
    ("beam-on longer than session", "finished", {"beam_on_minutes": "61"}, {"beam_on_minutes": 61},
     None, "beam_on_minutes", ["Beam-on time 61 min is longer than the session (60 min)."]),
    ("start in the future", "finished",
     {"started_at": _local(NOW + timedelta(hours=1)), "ended_at": _local(NOW + timedelta(hours=2))},
     {"started_at": (NOW + timedelta(hours=1)).isoformat(),
      "ended_at": (NOW + timedelta(hours=2)).isoformat()}, None, "started_at", ["is in the future"]),
    ("overlapping session", "start", {}, {}, _busy, "started_at",
     ["Cu powder already has a session by Otto Other", "still open", "cannot overlap"]),
    ("overlap with a written-up session", "finished", {}, {}, _busy, "started_at",
     ["already has a session by Otto Other"]),
    ("out of service", "start", {}, {}, _out_of_service, "instrument",
     ["Cu powder is out of service: Shutter indicator stuck open.", f"Ask the radiation safety officer ({RSO}) before any use."]),
    ("retired", "start", {}, {}, _retired, "instrument", ["Cu powder is retired", RSO]),
    ("expired authorisation", "start", {}, {}, _expired, "instrument",
     ["authorisation on Cu powder ran out: the refresher training was due on",
      f"Ask the radiation safety officer ({RSO}) to authorise you."]),
    ("revoked authorisation", "start", {}, {}, _revoked, "instrument", ["was revoked", RSO]),
    ("no authorisation", "start", {}, {}, _unauthorised, "instrument",
     ["Olga Operator is not authorised on Cu powder", RSO]),
    ("pre-use checks not confirmed", "start", {"pre_use_checks_confirmed": ""},
     {"pre_use_checks_confirmed": False}, None, "pre_use_checks_confirmed",
     ["Confirm that you saw the warning light and the shutter indicators working."]),
    ("configuration change without text", "start", {"configuration_changed": "y"},
     {"configuration_changed": True}, None, "configuration_change",
     ["Describe the configuration change."]),
    ("alignment without reading the caution", "start", {"alignment": "y"}, {"alignment": True},
     None, "caution_acknowledged", ["primary beam and ring dosimetry"]),
]


def _without(data: dict, key: str) -> dict:
    """Unticked checkboxes are simply absent from a form post."""
    return {k: v for k, v in data.items() if v != "" or k != key}


@pytest.mark.parametrize("rule, kind, form_over, api_over, setup, field, words", CASES,
                         ids=[c[0] for c in CASES])
def test_rule_refused_through_form_and_api(lab, rule, kind, form_over, api_over, setup, field, words):
    if setup:
        setup(lab)
        db.session.commit()
    before = _count()

    form_data = _form_finished(lab, **form_over) if kind == "finished" else {**FORM_START, **form_over}
    form_data = {k: v for k, v in form_data.items() if v != ""}
    response = _post_form(lab, kind, form_data)
    assert response.status_code == 200
    page = html.unescape(response.get_data(as_text=True))
    for word in words:
        assert word in page, f"form: {word!r} missing from {_errors(page)}"
    assert _count() == before

    body = _api_finished(**api_over) if kind == "finished" else {**API_START, **api_over}
    response = _post_api(lab, kind, body)
    assert response.status_code == 422
    assert response.mimetype == "application/problem+json"
    problem = response.get_json()
    assert problem["status"] == 422 and problem["type"] and problem["title"]
    for word in words:
        assert word in problem["errors"][field], f"api: {word!r} missing"
    assert _count() == before


def test_values_at_the_ratings_are_accepted(lab):
    # 60 kV and 36 mA: at the kV rating; 44 kV x 50 mA = 2200 W: at the power rating;
    # 36 kV x 60 mA: at the mA rating.
    client = lab["client"]
    response = client.post(f"/sessions/start/{lab['instrument'].id}", data={**FORM_START, "kv": "60", "ma": "36"})
    assert response.status_code == 302
    entry = db.session.scalar(sa.select(InstrumentSession))
    client.post(f"/sessions/{entry.id}/end", data={})
    response = client.post("/api/v1/sessions", json={**API_START, "kv": 44, "ma": 50}, headers=lab["headers"])
    assert response.status_code == 201, response.get_json()
    close = client.post(f"/api/v1/sessions/{response.get_json()['id']}/close", json={}, headers=lab["headers"])
    assert close.status_code == 200
    response = client.post("/api/v1/sessions", json={**API_START, "kv": 36, "ma": 60}, headers=lab["headers"])
    assert response.status_code == 201
    assert _count() == 3


def test_closing_with_too_much_beam_time_is_refused_by_form_and_api(lab, make_session_entry):
    entry = make_session_entry(lab["instrument"], lab["operator"],
                               started_at=LAB_NOW - timedelta(minutes=30))
    response = lab["client"].post(f"/sessions/{entry.id}/end", data={"beam_on_minutes": "45"})
    assert "Beam-on time 45 min is longer than the session (30 min)." in html.unescape(response.get_data(as_text=True))
    response = lab["client"].post(f"/api/v1/sessions/{entry.id}/close", json={"beam_on_minutes": 45},
                                  headers=lab["headers"])
    assert response.status_code == 422
    assert "longer than the session (30 min)" in response.get_json()["errors"]["beam_on_minutes"]
    db.session.expire_all()
    assert db.session.get(InstrumentSession, entry.id).ended_at is None


def test_closing_with_an_end_in_the_future_is_refused_by_the_api(lab, make_session_entry):
    entry = make_session_entry(lab["instrument"], lab["operator"])
    later = (LAB_NOW + timedelta(hours=1)).isoformat()
    response = lab["client"].post(f"/api/v1/sessions/{entry.id}/close", json={"ended_at": later},
                                  headers=lab["headers"])
    assert response.status_code == 422
    assert "is in the future" in response.get_json()["errors"]["ended_at"]
