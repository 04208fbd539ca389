"""The safety officer authorises and revokes; the printable list of authorised users."""
from __future__ import annotations

import html
from datetime import date

import sqlalchemy as sa

from models.audit.tables import AuditEvent
from models.instruments.tables import Authorisation
from models.people.tables import Role
from tests.conftest import LAB_TODAY
from webapp.extensions import db
from webapp.formatting import CAUTION


def _text(response) -> str:
    return html.unescape(response.get_data(as_text=True))


def test_safety_officer_authorises_with_a_12_month_refresher_and_revokes_with_a_reason(
        make_person, make_instrument, login):
    rso = make_person("rso", roles=(Role.SAFETY_OFFICER,), name="Rae Safety")
    operator = make_person("op", name="Olga Operator")
    instrument = make_instrument(name="Cu powder")
    client = login(rso)
    url = f"/instruments/{instrument.id}/authorisations"
    response = client.post(url, data={"person_id": str(operator.id), "level": "supervised",
                                      "trained_on": "2024-01-31", "refresher_due": ""})
    assert response.status_code == 302
    auth = db.session.scalar(sa.select(Authorisation))
    # Common practice: refresher 12 months after training; Jan 31 + 12 months = Jan 31.
    assert (auth.trained_on, auth.refresher_due, auth.granted_by_id) == (date(2024, 1, 31), date(2025, 1, 31), rso.id)
    page = _text(client.post(url, data={"person_id": str(operator.id), "level": "independent",
                                        "trained_on": "2024-05-01", "refresher_due": "2024-04-01"}))
    assert "The refresher date 2024-04-01 is before the training date 2024-05-01." in page
    assert db.session.scalar(sa.select(sa.func.count()).select_from(Authorisation)) == 1
    client.post(f"/authorisations/{auth.id}/revoke", data={"reason": ""})
    db.session.expire_all()
    assert db.session.get(Authorisation, auth.id).revoked_at is None
    client.post(f"/authorisations/{auth.id}/revoke", data={"reason": "Left the group"})
    db.session.expire_all()
    assert db.session.get(Authorisation, auth.id).revoked_at is not None
    event = db.session.scalar(sa.select(AuditEvent).where(AuditEvent.entity == "authorisation")
                              .order_by(AuditEvent.id.desc()))
    assert event.reason == "Left the group"


def test_operators_cannot_authorise(make_person, make_instrument, login):
    instrument = make_instrument()
    client = login(make_person("op"))
    assert client.get(f"/instruments/{instrument.id}/authorisations").status_code == 403


def test_printable_list_names_instrument_date_rso_and_caution(
        make_person, make_instrument, authorise, login):
    make_person("rso", roles=(Role.SAFETY_OFFICER,), name="Rae Safety")
    instrument = make_instrument(name="Cu powder")
    authorise(make_person("op", name="Olga Operator"), instrument, trained_on=date(2025, 6, 1),
              refresher_due=date(2026, 6, 1))
    page = _text(login(make_person("viewer")).get(f"/instruments/{instrument.id}/authorised/print"))
    assert "Authorised users of Cu powder" in page
    assert f"printed {LAB_TODAY.isoformat()}" in page
    assert "Radiation safety officer: <strong>Rae Safety</strong>" in page
    assert "Olga Operator" in page and "2026-06-01" in page
    assert CAUTION in page and "print.css" in page
