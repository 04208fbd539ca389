"""The API at the floor: a finished session costs a fixed handful of SQL statements."""
from __future__ import annotations

from datetime import date

import sqlalchemy as sa

from webapp.extensions import db

BODY = {"operator": "op", "kv": 40, "ma": 30, "purpose": "silicon", "pre_use_checks_confirmed": True,
        "dosimeter_worn": True, "started_at": "2026-03-02T09:00:00Z", "ended_at": "2026-03-02T10:00:00Z"}


# Transaction control, which the drivers issue around the statements proper.
CONTROL = ("BEGIN", "SAVEPOINT", "RELEASE", "COMMIT", "ROLLBACK")


def statements_of(post) -> list[str]:
    """The SQL statements one request sends through the engine."""
    seen: list[str] = []

    def note(_conn, _cursor, statement, _parameters, _context, _executemany):
        seen.append(statement)

    sa.event.listen(db.engine, "before_cursor_execute", note)
    try:
        response = post()
    finally:
        sa.event.remove(db.engine, "before_cursor_execute", note)
    assert response.status_code == 201, response.get_json()
    return seen


def test_a_finished_session_post_runs_the_rules_once_in_a_handful_of_statements(
        client, make_person, make_instrument, authorise, api_token, monkeypatch):
    operator = make_person("op")
    instrument = make_instrument(name="Cu powder")
    authorise(operator, instrument, trained_on=date(2026, 1, 5))  # before the session of 2 March
    headers = {"Authorization": f"Bearer {api_token(instrument)}"}
    calls = []
    from models.sessions import session_ops
    rules = session_ops.validate_session
    monkeypatch.setattr(session_ops, "validate_session", lambda *a, **k: calls.append(1) or rules(*a, **k))
    statements = statements_of(lambda: client.post("/api/v1/sessions/finished", json=BODY, headers=headers))
    assert calls == [1]  # the session rules ran once
    sql = [s for s in statements if not s.startswith(CONTROL)]
    # Counted once by reading them: the request hook's lapsed temporary controls; token,
    # instrument, operator and roles; under the write lock the settings, the authorisation, the
    # overlap check, the bypass permit, the insert, the chain's head and its event: 12. On
    # PostgreSQL two more: the advisory lock that serialises writers, taken before the check and
    # again (re-entrant) when the audit chain is written.
    assert len(sql) == 12 + 2 * (db.engine.dialect.name == "postgresql"), "\n".join(s.split("\n")[0][:100] for s in sql)
