"""Operators writing up the same slot in the browser at once: one session, the others told why."""
from __future__ import annotations

import html
import threading
from datetime import date

import sqlalchemy as sa
from flask import g

from models.sessions.tables import InstrumentSession
from tests.conftest import PASSWORD
from webapp.extensions import db

FORMS = 4


def test_operators_logging_one_slot_at_once_get_one_session_and_field_errors(
        app, make_person, make_instrument, authorise):
    instrument = make_instrument(name="Cu powder")
    people = [make_person(f"op{n}") for n in range(FORMS)]
    for person in people:
        authorise(person, instrument, trained_on=date(2026, 1, 5), refresher_due=date(2027, 1, 5))
    clients = []
    for person in people:
        g.pop("_login_user", None)  # the test's app context would otherwise keep the last login
        client = app.test_client()
        assert client.post("/login", data={"login": person.login, "password": PASSWORD}).status_code == 302
        clients.append(client)
    form = {"instrument": str(instrument.id), "kv": "40", "ma": "40", "purpose": "quartz",
            "pre_use_checks_confirmed": "y", "started_at": "2026-03-02T09:00", "ended_at": "2026-03-02T10:00"}
    start, answers = threading.Barrier(FORMS), [None] * FORMS

    def post(n):
        start.wait()
        answers[n] = clients[n].post("/sessions/log", data=form)

    threads = [threading.Thread(target=post, args=(n,), daemon=True) for n in range(FORMS)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(60)
    assert sorted(a.status_code for a in answers) == [200] * (FORMS - 1) + [302]
    for refused in (a for a in answers if a.status_code == 200):
        assert "cannot overlap" in html.unescape(refused.get_data(as_text=True))
    db.session.rollback()
    assert db.session.scalar(sa.select(sa.func.count()).select_from(InstrumentSession)) == 1
