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


def _post_together(app, tokens, path, body, extra_headers=None) -> list:
    """Every PC posts the same body at the same moment; the responses, in PC order."""
    start, answers = threading.Barrier(len(tokens)), [None] * len(tokens)

    def post(n):
        client = app.test_client()
        start.wait()
        answers[n] = client.post(path, json=body, headers={"Authorization": f"Bearer {tokens[n]}",
                                                           **(extra_headers or {})})

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


def test_a_retry_with_the_same_key_gets_the_first_answer(client, tokens):
    headers = {"Authorization": f"Bearer {tokens[0]}", "Idempotency-Key": "pc1-0001"}
    first = client.post("/api/v1/sessions/finished", json=SLOT, headers=headers)
    again = client.post("/api/v1/sessions/finished", json=SLOT, headers=headers)
    assert first.status_code == again.status_code == 201
    assert again.get_json() == first.get_json() and again.headers["Idempotent-Replayed"] == "true"
    assert _sessions() == 1
    # Without the key the same post is a new entry, refused as an overlap.
    plain = client.post("/api/v1/sessions/finished", json=SLOT, headers={"Authorization": headers["Authorization"]})
    assert plain.status_code == 422 and "started_at" in plain.get_json()["errors"]


def test_the_same_key_with_another_body_is_refused(client, tokens):
    headers = {"Authorization": f"Bearer {tokens[0]}", "Idempotency-Key": "pc1-0002"}
    assert client.post("/api/v1/sessions/finished", json=SLOT, headers=headers).status_code == 201
    later = {**SLOT, "started_at": "2026-03-02T11:00:00Z", "ended_at": "2026-03-02T12:00:00Z"}
    refused = client.post("/api/v1/sessions/finished", json=later, headers=headers)
    assert refused.status_code == 422 and refused.mimetype == "application/problem+json"
    assert "different request" in refused.get_json()["errors"]["Idempotency-Key"]
    assert _sessions() == 1


def test_a_retried_close_gets_the_first_answer_not_already_ended(client, tokens):
    auth = {"Authorization": f"Bearer {tokens[0]}"}
    body = {k: v for k, v in SLOT.items() if k not in ("started_at", "ended_at")}
    opened = client.post("/api/v1/sessions", json=body, headers=auth).get_json()
    headers = {**auth, "Idempotency-Key": "close-1"}
    first = client.post(f"/api/v1/sessions/{opened['id']}/close", json={}, headers=headers)
    again = client.post(f"/api/v1/sessions/{opened['id']}/close", json={}, headers=headers)
    assert first.status_code == again.status_code == 200
    assert again.get_json()["ended_at"] == first.get_json()["ended_at"]


@pytest.mark.parametrize("key", ["", "has space", "x" * 256, "é"])
def test_unusable_keys_are_refused_by_name(client, tokens, key):
    headers = {"Authorization": f"Bearer {tokens[0]}", "Idempotency-Key": key}
    refused = client.post("/api/v1/sessions/finished", json=SLOT, headers=headers)
    assert refused.status_code == 422 and "Idempotency-Key" in refused.get_json()["errors"]
    assert _sessions() == 0


def test_eight_retries_racing_with_one_key_all_get_the_one_answer(app, tokens):
    answers = _post_together_with_key(app, tokens[0], "/api/v1/sessions/finished", SLOT, "pc1-race")
    assert [a.status_code for a in answers] == [201] * PCS
    assert len({a.get_json()["id"] for a in answers}) == 1
    assert _sessions() == 1


def _post_together_with_key(app, token, path, body, key) -> list:
    """One PC retrying the same post eight times at once."""
    return _post_together(app, [token] * PCS, path, body, {"Idempotency-Key": key})
