"""The audit trail records every change and detects tampering, even by someone with database access."""
import hashlib
import json
from datetime import date

import pytest
import sqlalchemy as sa

from models.audit import audit_ops, guards
from models.audit.tables import AuditEvent
from models.audit.verify_ops import Anchor, chain_head, row_problems, verify_anchor, verify_chain
from models.exposure.pregnancy_ops import declare
from models.people.person_ops import set_active


def insider(session, sql: str, **params) -> None:
    """What a database owner can do behind the app: lift the guards, run SQL, put the guards back."""
    conn = session.connection()
    guards.run(conn, guards.drop_statements(conn.dialect.name))
    conn.execute(sa.text(sql), params)
    guards.run(conn, guards.create_statements(conn.dialect.name))
    session.commit()


def _events(session):
    return session.scalars(sa.select(AuditEvent).order_by(AuditEvent.id)).all()


def test_create_change_and_deactivation_are_recorded(session, make_person):
    admin = make_person("admin")
    person = make_person("op")
    audit_ops.set_actor(session, admin.id)
    with audit_ops.reason(session, "left the group"):
        set_active(session, person, False)
    session.commit()
    events = [e for e in _events(session) if e.entity == "person" and e.entity_id == person.id]
    assert [e.action for e in events] == ["create", "deactivate"]
    last = events[-1]
    assert last.before == {"active": True} and last.after == {"active": False}
    assert last.reason == "left the group" and last.actor_id == admin.id
    assert events[0].after["password_hash"].startswith("(secret ")
    assert "pbkdf2" not in json.dumps(events[0].after)


def test_intact_chain_verifies(session, make_person):
    make_person()
    make_person()
    assert verify_chain(session) is None


def test_altered_event_is_reported(session, make_person):
    make_person()
    make_person()
    target = _events(session)[1]
    insider(session, "UPDATE audit_event SET reason = 'forged' WHERE id = :id", id=target.id)
    problem = verify_chain(session)
    assert problem is not None and problem.event_id == target.id
    assert "altered" in problem.message


def test_deleted_event_is_reported(session, make_person):
    make_person()
    make_person()
    events = _events(session)
    removed, following = events[1], events[2]
    insider(session, "DELETE FROM audit_event WHERE id = :id", id=removed.id)
    problem = verify_chain(session)
    assert problem is not None and problem.event_id == following.id
    assert "removed" in problem.message


@pytest.mark.parametrize("table, statement", [
    ("dose_record", "UPDATE dose_record SET value_msv = 0"),
    ("dose_record", "DELETE FROM dose_record"),
    ("audit_event", "UPDATE audit_event SET reason = 'forged'"),
    ("audit_event", "DELETE FROM audit_event"),
])
def test_the_database_refuses_to_change_kept_rows(session, make_person, make_dose, table, statement):
    make_dose(make_person(), value=0.4)
    with pytest.raises(sa.exc.DBAPIError, match="never changed or deleted"):
        session.execute(sa.text(statement))
    session.rollback()
    assert guards.missing(session.connection()) == []


def test_a_dropped_guard_is_noticed(session):
    conn = session.connection()
    guards.run(conn, guards.drop_statements(conn.dialect.name))
    assert guards.missing(conn)


def test_untouched_rows_match_the_trail(session, make_person, make_dose):
    person = make_person()
    make_dose(person, value=0.4)
    declare(session, person.id, date(2026, 3, 1), today=date(2026, 3, 2))
    session.commit()
    assert row_problems(session) == []


@pytest.mark.parametrize("statement, expected", [
    ("UPDATE dose_record SET value_msv = 0.01 WHERE id = :id", "dose_record {id}: value_msv differ from the latest audit event"),
    ("DELETE FROM dose_record WHERE id = :id", "dose_record {id}: removed without an audit event"),
])
def test_a_dose_record_changed_behind_the_apps_back_is_reported(
        session, make_person, make_dose, statement, expected):
    record_id = make_dose(make_person(), value=0.4).id
    insider(session, statement, id=record_id)
    assert verify_chain(session) is None  # the chain itself was not touched
    assert row_problems(session) == [expected.format(id=record_id)]


@pytest.mark.parametrize("statement, expected", [
    ("UPDATE pregnancy_declaration SET declared_on = '2026-05-01' WHERE id = :id",
     "pregnancy_declaration {id}: declared_on differ from the latest audit event"),
    ("DELETE FROM pregnancy_declaration WHERE id = :id",
     "pregnancy_declaration {id}: removed without an audit event"),
])
def test_a_pregnancy_declaration_changed_behind_the_apps_back_is_reported(
        session, make_person, statement, expected):
    person = make_person()
    declaration_id = declare(session, person.id, date(2026, 3, 1), today=date(2026, 3, 2)).id
    session.commit()
    session.execute(sa.text(statement), {"id": declaration_id})
    session.commit()
    assert row_problems(session) == [expected.format(id=declaration_id)]


def test_a_row_added_behind_the_apps_back_is_reported(session, make_person, make_dose):
    record = make_dose(make_person(), value=0.4)
    session.execute(sa.text(
        "INSERT INTO dose_record (id, person_id, wear_start, wear_end, quantity, location, value_msv, "
        "result, source, version, entered_unit, created_at) SELECT id + 100, person_id, wear_start, "
        "wear_end, quantity, location, 0.05, result, source, 1, entered_unit, created_at "
        "FROM dose_record WHERE id = :id"), {"id": record.id})
    session.commit()
    assert row_problems(session) == [f"dose_record {record.id + 100}: no audit event records this row"]


def test_a_swapped_password_hash_is_reported(session, make_person):
    person = make_person()
    session.execute(sa.text("UPDATE person SET password_hash = 'pbkdf2:sha256:1000$x$y' WHERE id = :id"),
                    {"id": person.id})
    session.commit()
    assert row_problems(session) == [f"person {person.id}: password_hash differ from the latest audit event"]


def test_removing_the_newest_events_is_caught_by_the_anchor_and_the_rows(session, make_person):
    make_person()
    anchor = Anchor.parse(chain_head(session).line())
    late = make_person()
    assert verify_anchor(session, anchor) is None
    newest = chain_head(session)
    # Cut the events that recorded the late person (and their role) and the late person's rows.
    first_cut = session.scalar(sa.select(sa.func.min(AuditEvent.id)).where(AuditEvent.id > anchor.last_id))
    insider(session, "DELETE FROM audit_event WHERE id >= :id", id=first_cut)
    assert verify_chain(session) is None  # a shorter chain still links up: the limit of a chain
    assert verify_anchor(session, newest).message.startswith(f"event {newest.last_id}, the head")
    assert any(p.startswith(f"person {late.id}: no audit event") for p in row_problems(session))


def test_an_anchor_notices_a_cut_that_was_written_over(session, make_person):
    make_person()
    make_person()
    anchor = chain_head(session)
    insider(session, "DELETE FROM audit_event WHERE id = :id", id=anchor.last_id)
    make_person()  # the app goes on writing; on SQLite the freed id may be used again
    problem = verify_anchor(session, anchor)
    assert problem is not None and problem.event_id == anchor.last_id


@pytest.mark.parametrize("forge", [
    lambda fields: audit_ops.event_hash(fields, key=b"a guessed key"),
    lambda fields: hashlib.sha256(json.dumps(fields, sort_keys=True, separators=(",", ":"),
                                             default=str).encode()).hexdigest(),
], ids=["wrong key", "unkeyed sha256"])
def test_a_chain_rewritten_without_the_key_is_reported(session, make_person, forge):
    person = make_person()
    insider(session, "UPDATE person SET name = 'Someone Else' WHERE id = :id", id=person.id)
    # The forger adds a matching event and recomputes the whole chain, as the app would, but keyless.
    insider(session, "UPDATE audit_event SET after = :after WHERE entity = 'person' AND entity_id = :id",
            after=json.dumps({**session.scalar(sa.select(AuditEvent.after).where(
                AuditEvent.entity == "person", AuditEvent.entity_id == person.id)),
                "name": "Someone Else"}), id=person.id)
    prev = audit_ops.GENESIS_HASH
    for event in session.execute(sa.select(AuditEvent.__table__).order_by(AuditEvent.id)).all():
        forged = forge({**audit_ops.content(event), "prev_hash": prev})
        insider(session, "UPDATE audit_event SET prev_hash = :prev, hash = :hash WHERE id = :id",
                prev=prev, hash=forged, id=event.id)
        prev = forged
    assert row_problems(session) == []  # rows and events agree: only the seal can tell
    problem = verify_chain(session)
    assert problem is not None and problem.event_id == 1 and "forged" in problem.message


def test_an_anchor_line_reads_back(session, make_person):
    make_person()
    head = chain_head(session)
    assert Anchor.parse(f"kept on paper:\n{head.line()}\n") == head
    assert Anchor.parse("nothing here") is None
