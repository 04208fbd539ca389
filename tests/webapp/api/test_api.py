"""API v1: tokens, the session endpoints, problem documents and the OpenAPI description."""
from __future__ import annotations

import hashlib
import re
from datetime import timedelta

import sqlalchemy as sa

from models.instruments.tables import ApiToken
from models.people.tables import Role
from models.sessions.tables import EntrySource, InstrumentSession
from tests.conftest import LAB_NOW
from webapp.api.openapi import document
from webapp.extensions import db

BODY = {"operator": "op", "kv": 40, "ma": 30, "purpose": "silicon", "pre_use_checks_confirmed": True,
        "dosimeter_worn": True}


def _setup(make_person, make_instrument, authorise, api_token):
    operator = make_person("op")
    instrument = make_instrument(name="Cu powder")
    authorise(operator, instrument)
    return instrument, {"Authorization": f"Bearer {api_token(instrument)}"}


def test_open_close_and_list_through_the_api(client, make_person, make_instrument, authorise, api_token):
    instrument, headers = _setup(make_person, make_instrument, authorise, api_token)
    response = client.post("/api/v1/sessions", json=BODY, headers=headers)
    assert response.status_code == 201
    opened = response.get_json()
    assert opened["operator"] == "op" and opened["ended_at"] is None
    assert opened["figures"]["power_w"] == 1200 and opened["figures"]["k_lines_excited"] is True
    response = client.post(f"/api/v1/sessions/{opened['id']}/close", json={"beam_on_minutes": 0},
                           headers=headers)
    assert response.status_code == 200 and response.get_json()["ended_at"]
    listed = client.get("/api/v1/sessions", headers=headers).get_json()
    assert listed["instrument"] == "Cu powder" and [s["id"] for s in listed["sessions"]] == [opened["id"]]
    assert db.session.get(InstrumentSession, opened["id"]).source == EntrySource.API


def test_finished_session_through_the_api(client, make_person, make_instrument, authorise, api_token):
    _instrument, headers = _setup(make_person, make_instrument, authorise, api_token)
    start = LAB_NOW - timedelta(hours=2)
    response = client.post("/api/v1/sessions/finished", headers=headers, json={
        **BODY, "started_at": start.isoformat(), "ended_at": (start + timedelta(hours=1)).isoformat()})
    assert response.status_code == 201
    figures = response.get_json()["figures"]
    assert response.get_json()["beam_on_minutes"] == 60
    assert abs(figures["energy_kwh"] - 1.2) < 1e-9  # 40 kV x 30 mA = 1200 W for 1 h


def test_missing_bad_and_revoked_tokens_get_401_problems(client, make_person, make_instrument, authorise, api_token):
    instrument, headers = _setup(make_person, make_instrument, authorise, api_token)
    for bad in ({}, {"Authorization": "Bearer nonsense"}, {"Authorization": "Basic abc"}):
        response = client.get("/api/v1/sessions", headers=bad)
        assert response.status_code == 401
        assert response.mimetype == "application/problem+json"
        assert response.get_json()["status"] == 401
        assert response.headers["WWW-Authenticate"] == "Bearer"
    row = db.session.scalar(sa.select(ApiToken))
    row.revoked_at = LAB_NOW
    db.session.commit()
    assert client.get("/api/v1/sessions", headers=headers).status_code == 401


def test_malformed_bodies_are_problems_naming_the_field(client, make_person, make_instrument, authorise, api_token):
    _instrument, headers = _setup(make_person, make_instrument, authorise, api_token)
    response = client.post("/api/v1/sessions", data="not json", headers=headers)
    assert response.status_code == 400 and response.mimetype == "application/problem+json"
    response = client.post("/api/v1/sessions", headers=headers,
                           json={**BODY, "kv": "forty", "alignment": "yes", "operator": "ghost"})
    errors = response.get_json()["errors"]
    assert response.status_code == 422
    assert errors["kv"] == "'kv' must be a number."
    assert errors["alignment"] == "'alignment' must be true or false."
    assert errors["operator"] == "No active person with that login."
    response = client.post("/api/v1/sessions", headers=headers, json={**BODY, "started_at": "yesterday"})
    assert "ISO 8601" in response.get_json()["errors"]["started_at"]
    assert db.session.scalar(sa.select(sa.func.count()).select_from(InstrumentSession)) == 0


def test_a_token_only_reaches_its_own_instrument(client, make_person, make_instrument, authorise,
                                                 api_token, make_session_entry):
    _instrument, headers = _setup(make_person, make_instrument, authorise, api_token)
    other = make_instrument(name="Elsewhere")
    entry = make_session_entry(other, make_person("x"))
    response = client.post(f"/api/v1/sessions/{entry.id}/close", json={}, headers=headers)
    assert response.status_code == 404 and response.mimetype == "application/problem+json"


def _openapi_to_flask(path: str) -> str:
    return "/api/v1" + re.sub(r"\{(\w+)\}", r"<int:\1>", path)


def test_openapi_document_matches_the_real_routes(app, client):
    served = client.get("/api/v1/openapi.json")
    assert served.status_code == 200
    doc = served.get_json()
    assert doc == document() and doc["openapi"].startswith("3.")
    routes = {(rule.rule, method) for rule in app.url_map.iter_rules()
              if rule.rule.startswith("/api/v1/")
              for method in rule.methods - {"HEAD", "OPTIONS"}}
    documented = {(_openapi_to_flask(path), method.upper())
                  for path, item in doc["paths"].items() for method in item}
    assert documented == routes
    for item in doc["paths"].values():
        for operation in item.values():
            for ref in re.findall(r'"\$ref": "#/components/schemas/(\w+)"', str(operation).replace("'", '"')):
                assert ref in doc["components"]["schemas"]


def test_cli_makes_a_token_that_is_stored_hashed(app, make_instrument, make_person, authorise):
    instrument = make_instrument(name="Cu powder")
    authorise(make_person("op"), instrument)
    result = app.test_cli_runner().invoke(args=["instruments", "token", "Cu powder"])
    assert result.exit_code == 0, result.output
    token = result.stdout.splitlines()[0].strip()
    row = db.session.scalar(sa.select(ApiToken))
    assert row.token_hash == hashlib.sha256(token.encode()).hexdigest() and token not in row.token_hash
    response = app.test_client().post("/api/v1/sessions", json=BODY,
                                      headers={"Authorization": f"Bearer {token}"})
    assert response.status_code == 201


def test_cli_token_for_an_unknown_instrument_fails(app):
    result = app.test_cli_runner().invoke(args=["instruments", "token", "Nothing"])
    assert result.exit_code != 0 and "No instrument called 'Nothing'" in result.output


def test_admin_makes_a_token_in_the_browser_shown_once(make_person, make_instrument, login):
    instrument = make_instrument(name="Cu powder")
    client = login(make_person("adm", roles=(Role.ADMIN,)))
    assert "Instrument PC tokens" in client.get(f"/instruments/{instrument.id}").get_data(as_text=True)
    response = client.post(f"/instruments/{instrument.id}/tokens")
    assert response.headers["Cache-Control"] == "no-store"
    token = re.search(r"<code>(xlb_[^<]+)</code>", response.get_data(as_text=True)).group(1)
    row = db.session.scalar(sa.select(ApiToken))
    assert row.token_hash == hashlib.sha256(token.encode()).hexdigest()
    assert token not in client.get(f"/instruments/{instrument.id}").get_data(as_text=True)
    client.post(f"/tokens/{row.id}/revoke")
    db.session.expire_all()
    assert db.session.get(ApiToken, row.id).revoked_at is not None


def test_operators_cannot_make_tokens(make_person, make_instrument, login):
    instrument = make_instrument()
    client = login(make_person("op"))
    assert client.post(f"/instruments/{instrument.id}/tokens").status_code == 403
    assert "Instrument PC tokens" not in client.get(f"/instruments/{instrument.id}").get_data(as_text=True)
