"""Open sessions and busy instruments come from the partial index of sessions not ended yet."""
from datetime import UTC, datetime

import sqlalchemy as sa

from models.sessions.session_ops import busy_instrument_ids, open_sessions_of

MORNING = datetime(2026, 3, 2, 9, 0, tzinfo=UTC)
NOON = datetime(2026, 3, 2, 12, 0, tzinfo=UTC)


def test_busy_instruments_are_those_with_a_session_not_ended(session, make_person, make_instrument,
                                                              make_session_entry):
    ada, bo = make_person("ada"), make_person("bo")
    powder, single, idle = (make_instrument(name=n) for n in ("Powder", "Single crystal", "Idle"))
    make_session_entry(powder, ada, started_at=MORNING, ended_at=NOON, beam_on_minutes=30)
    make_session_entry(single, bo, started_at=MORNING)  # still open
    make_session_entry(idle, ada, started_at=MORNING, ended_at=NOON, beam_on_minutes=10)
    assert busy_instrument_ids(session) == {single.id}
    assert [s.instrument_id for s in open_sessions_of(session, bo)] == [single.id]
    assert open_sessions_of(session, ada) == []


def test_the_queries_use_the_partial_index(session, make_person, make_instrument):
    make_person("ada")
    if session.get_bind().dialect.name != "sqlite":
        return  # PostgreSQL's planner picks by table statistics; the index exists there too
    for query, index in (
            ("SELECT DISTINCT instrument_id FROM instrument_session WHERE ended_at IS NULL", "instrument_id"),
            ("SELECT id FROM instrument_session WHERE operator_id = 1 AND ended_at IS NULL", "operator_id")):
        plan = " ".join(str(r[-1]) for r in session.execute(sa.text(f"EXPLAIN QUERY PLAN {query}")))
        assert f"ix_instrument_session_open_{index}" in plan, plan
