"""Two writers racing for one slot: the database decides, and the loser gets the ordinary refusal."""
from __future__ import annotations

import threading
from datetime import UTC, datetime, timedelta

import pytest
import sqlalchemy as sa

from models.core.errors import Invalid
from models.sessions.session_ops import log_finished_session
from models.sessions.tables import InstrumentSession
from webapp.extensions import db

T0 = datetime(2025, 3, 10, 9, 0, tzinfo=UTC)
NOW = T0 + timedelta(days=1)
GOOD = {"kv": 40.0, "ma": 40.0, "pre_use_checks_confirmed": True}


@pytest.fixture
def setup(make_person, make_instrument, authorise):
    operator = make_person("op")
    instrument = make_instrument(name="Cu powder")
    authorise(operator, instrument, trained_on=T0.date() - timedelta(days=100))
    return instrument, operator


def _log_in_thread(app, instrument_id, operator_id, values, outcome: dict) -> threading.Thread:
    """Log a finished session from another thread with its own database session."""
    def run():
        with app.app_context():
            from models.instruments.tables import Instrument
            from models.people.tables import Person
            try:
                log_finished_session(db.session, db.session.get(Instrument, instrument_id),
                                     db.session.get(Person, operator_id), values, now=NOW)
                db.session.commit()
                outcome["result"] = "written"
            except Invalid as error:
                db.session.rollback()
                outcome["result"] = error.errors
            finally:
                db.session.remove()
    thread = threading.Thread(target=run, daemon=True)
    thread.start()
    return thread


@pytest.mark.parametrize("overlap_start", [T0, T0 + timedelta(minutes=30)])
def test_a_writer_that_loses_the_race_gets_the_overlap_refusal(app, session, setup, overlap_start):
    instrument, operator = setup
    other = sa.create_engine(app.config["SQLALCHEMY_DATABASE_URI"])
    outcome: dict = {}
    try:
        with other.connect() as rival:
            # The rival has written its session and not committed yet: the overlap check cannot see it.
            rival.execute(InstrumentSession.__table__.insert().values(
                instrument_id=instrument.id, operator_id=operator.id, started_at=T0,
                ended_at=T0 + timedelta(hours=1), kv=40.0, ma=40.0,
                purpose="", configuration_changed=False, alignment=False,
                pre_use_checks_confirmed=True, dosimeter_worn=False, source="api",
                created_at=T0))
            thread = _log_in_thread(app, instrument.id, operator.id, {
                **GOOD, "started_at": overlap_start, "ended_at": overlap_start + timedelta(hours=1)},
                outcome)
            thread.join(0.5)
            # SQLite: waiting for the write lock; PostgreSQL: the exclusion constraint waits for us.
            assert thread.is_alive(), "the second writer did not wait for the first"
            rival.commit()
            thread.join(10)
    finally:
        other.dispose()
    assert not thread.is_alive()
    assert "cannot overlap" in outcome["result"]["started_at"]
    assert session.scalar(sa.select(sa.func.count()).select_from(InstrumentSession)) == 1
