"""Who may be authorised how; renewing keeps one current row; supervised sessions name a supervisor."""
from __future__ import annotations

import html
from datetime import date

import sqlalchemy as sa

from models.core.codes import WorkerCategory
from models.core.settings import lab_settings
from models.instruments.authorisation_ops import authorisation_on
from models.instruments.tables import Authorisation, AuthorisationLevel
from models.people.tables import Role
from models.sessions.tables import InstrumentSession
from webapp.extensions import db


def _text(response) -> str:
    return html.unescape(response.get_data(as_text=True))


def _authorisations(person) -> list[Authorisation]:
    return list(db.session.scalars(sa.select(Authorisation).where(
        Authorisation.person_id == person.id).order_by(Authorisation.id)))


def _grant(client, instrument, person, level, trained_on="2026-01-05"):
    return client.post(f"/instruments/{instrument.id}/authorisations",
                       data={"person_id": str(person.id), "level": level,
                             "trained_on": trained_on, "refresher_due": ""})


def test_member_of_the_public_only_supervised_or_not_at_all(make_person, make_instrument, login):
    rso = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    visitor = make_person("visitor", name="Vic Visitor", category=WorkerCategory.PUBLIC)
    instrument = make_instrument()
    client = login(rso)
    page = _text(_grant(client, instrument, visitor, "independent"))
    assert "Vic Visitor is a member of the public and may be authorised only as supervised." in page
    assert _authorisations(visitor) == []
    assert _grant(client, instrument, visitor, "supervised").status_code == 302
    assert [a.level for a in _authorisations(visitor)] == [AuthorisationLevel.SUPERVISED]
    # The lab may refuse the public altogether.
    lab_settings(db.session).public_authorisation = "none"
    db.session.commit()
    other = make_instrument()
    page = _text(_grant(client, other, visitor, "supervised"))
    assert "this lab's settings do not allow authorising members of the public" in page
    assert len(_authorisations(visitor)) == 1


def test_trainee_under_18_only_supervised(make_person, make_instrument, login):
    rso = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    trainee = make_person("trainee", name="Tia Trainee", category=WorkerCategory.TRAINEE)
    instrument = make_instrument()
    client = login(rso)
    page = _text(_grant(client, instrument, trainee, "independent"))
    assert "Tia Trainee is a trainee under 18 and may be authorised only as supervised." in page
    assert _authorisations(trainee) == []
    assert _grant(client, instrument, trainee, "supervised").status_code == 302


def test_authorising_again_renews_one_current_row_and_keeps_history(
        make_person, make_instrument, login):
    rso = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    operator = make_person("op", name="Olga Operator")
    instrument = make_instrument(name="Cu powder")
    client = login(rso)
    _grant(client, instrument, operator, "supervised", trained_on="2025-03-01")
    response = _grant(client, instrument, operator, "independent", trained_on="2026-01-05")
    assert response.status_code == 302
    first, second = _authorisations(operator)
    assert first.revoked_at is not None and first.replaced_by_id == second.id
    assert second.revoked_at is None and second.level == AuthorisationLevel.INDEPENDENT
    page = _text(client.get(f"/instruments/{instrument.id}/authorisations"))
    assert "renewed or changed" in page
    # 2025-06-01 lies before the renewal's training day (2026-01-05): the old row covers it, so a
    # session written up for that day keeps the authorisation it ran under.
    assert authorisation_on(db.session, operator, instrument, date(2025, 6, 1)).id == first.id
    assert authorisation_on(db.session, operator, instrument, date(2026, 2, 1)).id == second.id
    # Revoking the current row ends it for good; the replaced one does not come back.
    client.post(f"/authorisations/{second.id}/revoke", data={"reason": "Left"})
    db.session.expire_all()
    assert authorisation_on(db.session, operator, instrument, date(2026, 2, 1)) is None


def test_the_instrument_appears_once_under_start_after_a_renewal(
        make_person, make_instrument, login, authorise):
    rso = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    operator = make_person("op")
    instrument = make_instrument(name="Unique Cu powder")
    authorise(operator, instrument)
    _grant(login(rso), instrument, operator, "independent")
    home = _text(login(operator).get("/"))
    assert home.count("Start a session on Unique Cu powder") == 1


def test_supervised_operator_names_an_independent_supervisor(
        make_person, make_instrument, authorise, login):
    trainee = make_person("trainee", name="Tia Trainee", category=WorkerCategory.TRAINEE)
    senior = make_person("senior", name="Sid Senior")
    outsider = make_person("outsider", name="Oona Outsider")
    instrument = make_instrument()
    authorise(trainee, instrument, level=AuthorisationLevel.SUPERVISED)
    authorise(senior, instrument)
    client = login(trainee)
    form = client.get(f"/sessions/start/{instrument.id}")
    page = _text(form)
    assert "Supervised by" in page and "Sid Senior" in page and "Oona Outsider" not in page
    data = {"kv": "40", "ma": "30", "pre_use_checks_confirmed": "y"}
    page = _text(client.post(f"/sessions/start/{instrument.id}", data=data))
    assert "Tia Trainee is authorised on" in page and "name the person supervising" in page
    page = _text(client.post(f"/sessions/start/{instrument.id}",
                             data={**data, "supervisor_id": str(outsider.id)}))
    assert "Oona Outsider is not independently authorised on" in page
    assert db.session.scalar(sa.select(sa.func.count()).select_from(InstrumentSession)) == 0
    response = client.post(f"/sessions/start/{instrument.id}",
                           data={**data, "supervisor_id": str(senior.id)})
    assert response.status_code == 302
    entry = db.session.scalar(sa.select(InstrumentSession))
    assert entry.supervisor_id == senior.id
    assert "Supervised by" in _text(client.get(f"/sessions/{entry.id}"))


def test_api_names_the_supervisor_by_login(make_person, make_instrument, authorise, api_token, client):
    trainee = make_person("trainee", category=WorkerCategory.TRAINEE)
    senior = make_person("senior")
    instrument = make_instrument()
    authorise(trainee, instrument, level=AuthorisationLevel.SUPERVISED)
    authorise(senior, instrument)
    headers = {"Authorization": f"Bearer {api_token(instrument)}"}
    body = {"operator": "trainee", "kv": 40, "ma": 30, "pre_use_checks_confirmed": True}
    refused = client.post("/api/v1/sessions", json=body, headers=headers)
    assert refused.status_code == 422 and "supervisor" in refused.get_json()["errors"]
    unknown = client.post("/api/v1/sessions", json={**body, "supervisor": "nobody"}, headers=headers)
    assert unknown.get_json()["errors"]["supervisor"].startswith("'supervisor' must be the login")
    made = client.post("/api/v1/sessions", json={**body, "supervisor": "senior"}, headers=headers)
    assert made.status_code == 201, made.get_json()
    assert made.get_json()["supervisor"] == "senior"


def test_lab_settings_page_offers_the_three_choices(make_person, login):
    client = login(make_person("rso", roles=(Role.SAFETY_OFFICER,)))
    page = _text(client.get("/settings/"))
    for label in ("Members of the public", "Safety-device check overdue",
                  "Open investigation at or above a level"):
        assert label in page
