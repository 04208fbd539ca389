"""Instrument PCs posting at once: one session per slot, and a retried post answered as the first."""
from __future__ import annotations

import threading
from datetime import date

import pytest
import sqlalchemy as sa

from models.sessions.tables import InstrumentSession
from webapp.extensions import db

SLOT = {"operator": "op", "kv": 40, "ma": 30, "purpose": "silicon", "pre_use_checks_confirmed": True,
        "started_at": "2026-03-02T09:00:00Z", "ended_at": "2026-03-02T10:00:00Z"}
PCS = 8


@pytest.fixture
def tokens(make_person, make_instrument, authorise, api_token):
    """Eight PCs with tokens for one instrument, an operator authorised on it."""
    operator = make_person("op")
    instrument = make_instrument(name="Cu powder")
    authorise(operator, instrument, trained_on=date(2026, 1, 5), refresher_due=date(2027, 1, 5))
    return [api_token(instrument) for _ in range(PCS)]


def _post_together(app, tokens, path, body) -> list:
    """Every PC posts the same body at the same moment; the responses, in PC order."""
    start, answers = threading.Barrier(len(tokens)), [None] * len(tokens)

    def post(n):
        client = app.test_client()
        start.wait()
        answers[n] = client.post(path, json=body, headers={"Authorization": f"Bearer {tokens[n]}"})

    threads = [threading.Thread(target=post, args=(n,), daemon=True) for n in range(len(tokens))]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(60)
    return answers


def _sessions() -> int:
    db.session.rollback()  # a fresh snapshot, after the other threads committed
    return db.session.scalar(sa.select(sa.func.count()).select_from(InstrumentSession))


def test_eight_pcs_logging_the_same_slot_get_one_session(app, tokens):
    answers = _post_together(app, tokens, "/api/v1/sessions/finished", SLOT)
    codes = sorted(a.status_code for a in answers)
    assert codes == [201] + [422] * (PCS - 1)
    for refusal in (a for a in answers if a.status_code == 422):
        assert refusal.mimetype == "application/problem+json"
        assert "cannot overlap" in refusal.get_json()["errors"]["started_at"]
    assert _sessions() == 1


def test_eight_pcs_opening_at_once_get_one_open_session(app, tokens):
    body = {k: v for k, v in SLOT.items() if k not in ("started_at", "ended_at")}
    answers = _post_together(app, tokens, "/api/v1/sessions", body)
    assert sorted(a.status_code for a in answers) == [201] + [422] * (PCS - 1)
    assert _sessions() == 1
