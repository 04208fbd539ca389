"""The audit trail records every change and detects tampering."""
import sqlalchemy as sa

from models.audit import audit_ops
from models.audit.audit_ops import verify_chain
from models.audit.tables import AuditEvent
from models.people.person_ops import set_active


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
    assert events[0].after["password_hash"] == "(secret)"


def test_intact_chain_verifies(session, make_person):
    make_person()
    make_person()
    assert verify_chain(session) is None


def test_altered_event_is_reported(session, make_person):
    make_person()
    make_person()
    target = _events(session)[1]
    session.execute(sa.text("UPDATE audit_event SET reason = 'forged' WHERE id = :id"),
                    {"id": target.id})
    session.commit()
    problem = verify_chain(session)
    assert problem is not None and problem.event_id == target.id
    assert "altered" in problem.message


def test_deleted_event_is_reported(session, make_person):
    make_person()
    make_person()
    events = _events(session)
    removed, following = events[1], events[2]
    session.execute(sa.text("DELETE FROM audit_event WHERE id = :id"), {"id": removed.id})
    session.commit()
    problem = verify_chain(session)
    assert problem is not None and problem.event_id == following.id
    assert "removed" in problem.message


def test_data_version_follows_only_the_named_record_types(session, make_person, make_instrument):
    from models.audit.audit_ops import data_version

    make_person()
    people = data_version(session, {"person"})
    make_instrument()
    assert data_version(session, {"person"}) == people
    assert data_version(session, {"person", "instrument"}) > people
    assert data_version(session, {"nothing_here"}) == 0
