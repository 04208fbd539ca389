"""Incidents: one e-mail to the safety officer at once, the attention list, follow-up and privacy."""
from __future__ import annotations

import html
from datetime import timedelta

import pytest
import sqlalchemy as sa

from models.core.codes import Result
from models.doses.tables import DoseRecord, DoseSource
from models.incidents.tables import Incident
from models.people.tables import Role
from tests.conftest import LAB_NOW, LAB_TODAY
from webapp.extensions import db


@pytest.fixture
def app_config(mail_app_config):
    return mail_app_config


def _text(response) -> str:
    return html.unescape(response.get_data(as_text=True))


@pytest.fixture
def people(make_person, make_instrument):
    return {"rso": make_person("rso", roles=(Role.SAFETY_OFFICER,), name="Rae Safety",
                               email="rso@example.org"),
            "op": make_person("op", name="Olga Operator"),
            "peer": make_person("peer", name="Pat Peer"),
            "nosy": make_person("nosy", name="Nick Nosy"),
            "instrument": make_instrument(name="Cu powder")}


def _report(client, people, **over):
    when = (LAB_NOW - timedelta(minutes=20)).strftime("%Y-%m-%dT%H:%M")
    data = {"type": "suspected_exposure", "instrument": str(people["instrument"].id),
            "occurred_at": when, "people": [str(people["op"].id), str(people["peer"].id)],
            "description": "Hand near the beam during alignment with the shutter open.",
            "immediate_actions": "Generator off, RSO phoned, dosimeters kept.", **over}
    return client.post("/incidents/new", data=data)


def test_report_sends_exactly_one_email_to_the_safety_officer(people, login, smtp_server):
    _port, mailbox = smtp_server
    client = login(people["op"])
    form = _text(client.get("/incidents/new"))
    assert "Suspected exposure: stop, secure, tell the radiation safety officer." in form
    response = _report(client, people)
    assert response.status_code == 302
    assert len(mailbox.messages) == 1
    message = mailbox.messages[0]
    assert message["To"] == "rso@example.org"
    assert "suspected exposure on Cu powder" in message["Subject"]
    body = message.get_content()
    assert "Olga Operator, Pat Peer" in body and "Hand near the beam" in body
    assert "/incidents/" in body


def test_bad_report_is_explained_and_sends_nothing(people, login, smtp_server):
    _port, mailbox = smtp_server
    future = (LAB_NOW + timedelta(days=1)).strftime("%Y-%m-%dT%H:%M")
    page = _text(_report(login(people["op"]), people, type="", description=" ", occurred_at=future))
    assert "Choose what kind of incident it was." in page
    assert "Describe what happened." in page
    assert "The time of the incident cannot be in the future." in page
    assert db.session.scalar(sa.select(sa.func.count()).select_from(Incident)) == 0
    assert mailbox.messages == []


def test_safety_officer_sees_it_first_and_follows_it_up(people, login, make_person):
    _report(login(people["op"]), people)
    _report(login(people["op"]), people, type="near_miss")
    incident = db.session.scalar(sa.select(Incident).order_by(Incident.id))
    client = login(people["rso"])
    home = _text(client.get("/"))
    assert home.index("suspected exposure") < home.index("open incident")
    url = f"/incidents/{incident.id}"
    client.post(f"{url}/out-of-service", data={"reason": "Beam path to be checked"})
    db.session.expire_all()
    instrument = people["instrument"]
    db.session.refresh(instrument)
    assert not instrument.in_service and "Beam path to be checked" in instrument.out_of_service_reason
    client.post(f"{url}/notes", data={"text": "Talked to Olga; reconstructing times."})
    page = _text(client.post(f"{url}/dose", data={
        "person_id": str(people["op"].id), "quantity": "Hp(0.07)", "location": "right_hand",
        "wear_start": LAB_TODAY.isoformat(), "wear_end": LAB_TODAY.isoformat(),
        "value": "", "unit": "mSv", "basis": ""}))
    assert "Enter a number." in page or "Enter the estimated dose." in page
    client.post(f"{url}/dose", data={
        "person_id": str(people["op"].id), "quantity": "Hp(0.07)", "location": "right_hand",
        "wear_start": LAB_TODAY.isoformat(), "wear_end": LAB_TODAY.isoformat(),
        "value": "500", "unit": "mrem", "basis": "2 s in a 10 mSv/s beam edge, from the log."})
    record = db.session.scalar(sa.select(DoseRecord))
    assert (record.source, record.result, record.incident_id) == (
        DoseSource.INCIDENT_ESTIMATE, Result.MEASURED, incident.id)
    assert record.value_msv == pytest.approx(5.0)  # 100 mrem = 1 mSv (10 CFR 20.1004)
    page = _text(client.post(f"{url}/close", data={"closing_note": ""}))
    assert "Write a closing note" in page
    client.post(f"{url}/close", data={"closing_note": "Ring read-out consistent; retrained."})
    db.session.expire_all()
    assert db.session.get(Incident, incident.id).closed_at is not None
    assert "Talked to Olga" in _text(client.get(url))


def test_estimated_dose_is_seen_only_by_the_person_and_the_safety_officer(people, login):
    _report(login(people["op"]), people)
    incident = db.session.scalar(sa.select(Incident))
    login(people["rso"]).post(f"/incidents/{incident.id}/dose", data={
        "person_id": str(people["op"].id), "quantity": "Hp(10)", "location": "whole_body",
        "wear_start": LAB_TODAY.isoformat(), "wear_end": LAB_TODAY.isoformat(),
        "value": "0.123", "unit": "mSv", "basis": "Scatter estimate."})
    assert db.session.scalar(sa.select(sa.func.count()).select_from(DoseRecord)) == 1
    url = f"/incidents/{incident.id}"
    assert "0.123 mSv" in _text(login(people["op"]).get(url))
    peer_page = _text(login(people["peer"]).get(url))
    assert "Hand near the beam" in peer_page and "0.123" not in peer_page
    assert login(people["nosy"]).get(url).status_code == 403
    assert login(people["op"]).post(f"{url}/close", data={"closing_note": "x"}).status_code == 403
