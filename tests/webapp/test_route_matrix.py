"""Role by route: every endpoint declares its audience (webapp.access.ROUTE_AUDIENCE) and answers by it.

The routes come from the app's URL map, so a new route without a declaration fails here with its name.
Every route is requested as anonymous, operator, admin and safety officer over the demo lab, with the
operator's own ids and someone else's, with a valid CSRF token; the answer must be the declared one
(sent to log in / 403 / 404 / 200), never a 500.
"""
from __future__ import annotations

from dataclasses import dataclass
from datetime import timedelta

import pytest
import sqlalchemy as sa

from models.audit import audit_ops
from models.audit.tables import AuditEvent
from models.checks.tables import SafetyCheck
from models.doses.tables import DoseRecord, Dosimeter
from models.exposure.investigation_ops import review_after_dose_change
from models.exposure.limit_set_ops import copy_limit_set
from models.exposure.tables import Investigation, LimitRule, LimitSet
from models.incidents.tables import Incident, IncidentType
from models.instruments.tables import Authorisation, ChecklistItem, Instrument
from models.instruments.token_ops import create_token
from models.people.person_ops import find_person
from models.sessions.tables import InstrumentSession
from models.surveys.tables import BypassPermit, Survey, SurveyMeter
from tests.conftest import LAB_NOW, LAB_TODAY, PASSWORD_HASH, PersonClient, csrf_token_of
from webapp.access import ROUTE_AUDIENCE, Audience
from webapp.demo.lab import load_demo_lab
from webapp.extensions import db

pytestmark = pytest.mark.slow

MISSING = 987654  # an id no row has
LOGIN = "login"  # the expected answer "sent to log in"
# An operator with sessions, dose records and rings; someone else's are Lena Brandt's (demo lab).
OPERATOR, OTHER, ADMIN, OFFICER = "pramos", "lbrandt", "mwinter", "okessler"
# What each audience lets through, by viewer (the owner-dependent audiences are decided below).
LETS_IN = {
    Audience.SIGNED_IN: {"operator", "admin", "officer"},
    Audience.OPERATOR: {"operator", "officer"},
    Audience.AUTHORISED_OR_OFFICER: {"operator", "officer"},  # the operator is authorised on it
    Audience.SAFETY_OFFICER: {"officer"},
    Audience.ADMIN: {"admin"},
    Audience.OFFICER_OR_ADMIN: {"officer", "admin"},
}
# Values for URL arguments that are not row ids. Those in BOGUS name nothing (an upload, a secret
# address), so to whoever may use the route the answer is 404.
PLACEHOLDERS = {"sha": "0" * 64, "token": "not-a-token", "key": "icrp103", "name": "sessions",
                "chart": "bands", "year": LAB_TODAY.year, "action": "declare", "state": "on",
                "direction": "up", "filename": "logbook.css"}
BOGUS = {"sha", "token"}
# An unknown reset link is gone (410); an unknown calendar address or upload is not found (404).
BOGUS_ANSWER = {"auth.reset_password": 410}
# Routes that send an allowed viewer on to the page meant for them (the login page: when signed in).
SENDS_ON = {"doses.mine", "doses.my_pregnancy", "exposure.me", "reports.this_year", "auth.login"}
# Query strings a route needs to answer with its page rather than with its form's errors.
QUERY = {"reports.instrument_file_pdf": "?from=2026-01-01&to=2026-11-30"}


@pytest.fixture
def app_config() -> dict:
    """Forms check their CSRF token, as in production."""
    return {"WTF_CSRF_ENABLED": True}


@dataclass
class Lab:
    """The demo lab's people and the rows that route arguments name."""

    people: dict[str, object]
    own: dict[str, int]
    others: dict[str, int]


def _first(model, *where) -> int:
    """The id of the first row of a table that matches."""
    return db.session.scalar(sa.select(model.id).where(*where).order_by(model.id).limit(1))


@pytest.fixture
def lab(app) -> Lab:
    """The demo lab with an API token, an editable limit set and a permit of the operator's."""
    with audit_ops.reason(db.session, "Demo lab loaded"):
        load_demo_lab(db.session, LAB_TODAY, PASSWORD_HASH)
    review_after_dose_change(db.session, LAB_TODAY)
    people = {k: find_person(db.session, login) for k, login in
              {"operator": OPERATOR, "other": OTHER, "admin": ADMIN, "officer": OFFICER}.items()}
    pxrd = db.session.scalar(sa.select(Instrument).where(Instrument.name.like("%owder%")))
    token_row, _secret = create_token(db.session, pxrd)
    editable = copy_limit_set(db.session, db.session.scalar(sa.select(LimitSet).limit(1)), "Our limits")
    op, other = people["operator"], people["other"]
    for person in (op, other):
        db.session.add(BypassPermit(
            instrument_id=pxrd.id, devices="Door interlock", reason="Alignment", requested_by_id=person.id,
            window_start=LAB_NOW + timedelta(days=2), window_end=LAB_NOW + timedelta(days=2, hours=1)))
        db.session.add(Incident(
            occurred_at=LAB_NOW - timedelta(days=1), instrument_id=pxrd.id, type=IncidentType.NEAR_MISS,
            description="Shutter stayed open.", immediate_actions="Stopped work.", reported_by_id=person.id,
            reported_at=LAB_NOW - timedelta(hours=20), people=[person]))
    db.session.commit()
    shared = {"instrument_id": pxrd.id, "check_id": _first(SafetyCheck), "item_id": _first(ChecklistItem),
              "control_id": MISSING, "batch_id": MISSING, "investigation_id": _first(Investigation),
              "set_id": editable.id, "rule_id": _first(LimitRule, LimitRule.limit_set_id == editable.id),
              "meter_id": _first(SurveyMeter), "survey_id": _first(Survey),
              "authorisation_id": _first(Authorisation), "token_id": token_row.id}

    def whose(person) -> dict[str, int]:
        return {**shared, "person_id": person.id,
                "session_id": _first(InstrumentSession, InstrumentSession.operator_id == person.id),
                "record_id": _first(DoseRecord, DoseRecord.person_id == person.id),
                "dosimeter_id": _first(Dosimeter, Dosimeter.wearer_id == person.id),
                "permit_id": _first(BypassPermit, BypassPermit.requested_by_id == person.id),
                "incident_id": _first(Incident, Incident.reported_by_id == person.id)}

    return Lab(people, whose(op), whose(other))


def _rules(app):
    """Every rule of the URL map but HEAD/OPTIONS, with its methods, in a stable order."""
    return sorted(((rule, sorted(rule.methods - {"HEAD", "OPTIONS"})) for rule in app.url_map.iter_rules()),
                  key=lambda pair: pair[0].rule)


def test_every_route_declares_who_may_see_it(app):
    undeclared = sorted({rule.endpoint for rule, _ in _rules(app)} - set(ROUTE_AUDIENCE))
    assert undeclared == [], f"add these endpoints to webapp.access.ROUTE_AUDIENCE: {undeclared}"
    gone = sorted(set(ROUTE_AUDIENCE) - {rule.endpoint for rule, _ in _rules(app)})
    assert gone == [], f"ROUTE_AUDIENCE names endpoints the app no longer has: {gone}"


def _url(rule, ids: dict[str, int]) -> tuple[str, bool]:
    """The rule's URL with the given ids, and whether any argument names nothing."""
    values = {name: ids.get(name, PLACEHOLDERS.get(name)) for name in rule.arguments}
    bogus = any(name in BOGUS or values[name] == MISSING for name in rule.arguments)
    return rule.build(values, append_unknown=False)[1], bogus


def expected(endpoint: str, viewer: str, own: bool, bogus: bool) -> int | str:
    """The declared answer to a GET (or a refused POST) by `viewer` of an endpoint."""
    audience = ROUTE_AUDIENCE[endpoint]
    if audience is Audience.ANYONE:
        if bogus:
            return BOGUS_ANSWER.get(endpoint, 404)
        return 302 if endpoint in SENDS_ON and viewer != "anonymous" else 200
    if audience is Audience.CALENDAR_LINK:
        return 404  # no address is a valid one here
    if audience is Audience.INSTRUMENT_TOKEN:
        return 401  # a browser's session is no API token
    if viewer == "anonymous":
        return LOGIN
    if audience in (Audience.SELF_OR_OFFICER, Audience.OWNER_OR_OFFICER):
        allowed = viewer == "officer" or (viewer == "operator" and own)
    else:
        allowed = viewer in LETS_IN[audience]
    if not allowed:
        return 403
    if bogus:
        return 404
    return 302 if endpoint in SENDS_ON else 200


def _answer(response) -> int | str:
    """The status, or LOGIN for a redirect to the login page; the response is closed."""
    response.close()
    if response.status_code == 302 and response.location.split("?")[0].endswith("/login"):
        return LOGIN
    return response.status_code


def _events() -> int:
    """How many audit events there are: a refused post writes none."""
    return db.session.scalar(sa.select(sa.func.count()).select_from(AuditEvent))


def _clients(app, lab, login):
    """A client per viewer and its CSRF token."""
    anonymous = PersonClient(app, app.response_class, use_cookies=True)
    clients = {"anonymous": anonymous, **{v: login(lab.people[v]) for v in ("operator", "admin", "officer")}}
    tokens = {"anonymous": csrf_token_of(anonymous.get("/login"))}
    tokens.update({v: csrf_token_of(c.get("/account/password")) for v, c in clients.items() if v != "anonymous"})
    return clients, tokens


def test_every_route_answers_each_role_as_declared(app, lab, login):
    clients, tokens = _clients(app, lab, login)
    wrong, later = [], []
    for rule, methods in _rules(app):
        audience = ROUTE_AUDIENCE[rule.endpoint]
        for whose, ids in (("own", lab.own), ("other's", lab.others)):
            url, bogus = _url(rule, ids)
            if whose == "other's" and url == _url(rule, lab.own)[0]:
                continue
            for viewer, client in clients.items():
                want = expected(rule.endpoint, viewer, whose == "own", bogus)
                if "GET" in methods:
                    got = _answer(client.get(url + QUERY.get(rule.endpoint, "")))
                    if got != want:
                        wrong.append(f"GET {url} ({rule.endpoint}, {audience.name}) as {viewer}: {got}, not {want}")
                if "POST" in methods:
                    if want in (LOGIN, 401, 403):
                        before = _events()
                        got = _answer(client.post(url, data={"csrf_token": tokens[viewer]}))
                        if got != want or _events() != before:
                            wrong.append(f"POST {url} ({rule.endpoint}) as {viewer}: {got}, not {want}"
                                         f"{'' if _events() == before else ', and it wrote'}")
                    else:
                        later.append((url, rule.endpoint, viewer))
    # Posts the viewer may make change things (an empty form is refused or acted on): last, logout
    # last of all (it sends to the login page), and they must be neither a server error nor a
    # refusal of who is asking.
    for url, endpoint, viewer in sorted(later, key=lambda item: item[1] == "auth.logout"):
        got = _answer(clients[viewer].post(url, data={"csrf_token": tokens[viewer]}))
        if (got == LOGIN) != (endpoint == "auth.logout") or got == 403 or (got != LOGIN and got >= 500):
            wrong.append(f"POST {url} ({endpoint}) as {viewer}: {got}")
    assert wrong == [], "\n".join(wrong)


def test_missing_ids_are_404_to_those_who_may_see_them(app, lab, login):
    clients, _tokens = _clients(app, lab, login)
    wrong = []
    for rule, methods in _rules(app):
        audience = ROUTE_AUDIENCE[rule.endpoint]
        ids = [name for name in rule.arguments if name.endswith("_id")]
        if "GET" not in methods or not ids or audience is Audience.INSTRUMENT_TOKEN:
            continue
        url, _ = _url(rule, {**lab.own, **dict.fromkeys(ids, MISSING)})
        # Dose pages answer 403 before 404 to anyone but the officer: guessing ids tells nobody who exists.
        viewer = "admin" if audience in (Audience.ADMIN, Audience.OFFICER_OR_ADMIN) else "officer"
        got = _answer(clients[viewer].get(url))
        if got != 404:
            wrong.append(f"GET {url} ({rule.endpoint}) as {viewer}: {got}, not 404")
    got = _answer(clients["operator"].get(f"/exposure/person/{MISSING}"))
    assert got == 403, "an operator guessing a person's id learns nothing"
    assert wrong == [], "\n".join(wrong)


def test_the_api_answers_its_own_instrument_only(client, lab, api_token):
    pxrd = db.session.get(Instrument, lab.own["instrument_id"])
    headers = {"Authorization": f"Bearer {api_token(pxrd)}"}
    assert client.get("/api/v1/sessions", headers=headers).status_code == 200
    elsewhere = _first(InstrumentSession, InstrumentSession.instrument_id != pxrd.id)
    here = _first(InstrumentSession, InstrumentSession.instrument_id == pxrd.id)
    assert client.get(f"/api/v1/sessions/{here}", headers=headers).status_code == 200
    refused = client.get(f"/api/v1/sessions/{elsewhere}", headers=headers)
    assert refused.status_code == 404 and refused.mimetype == "application/problem+json"
    assert client.get(f"/api/v1/sessions/{here}").status_code == 401
