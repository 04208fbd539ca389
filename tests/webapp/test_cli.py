"""Command-line jobs: people and the audit trail."""
import sqlalchemy as sa

from models.people.person_ops import find_person
from models.people.tables import Role


def test_people_add_creates_the_first_admin(app, session):
    runner = app.test_cli_runner()
    result = runner.invoke(args=["people", "add", "root", "--name", "First Admin", "--role", "admin",
                                 "--role", "safety_officer", "--password-stdin"],
                           input="a long enough password\n")
    assert result.exit_code == 0, result.output
    person = find_person(session, "root")
    assert person.role_set == {Role.ADMIN, Role.SAFETY_OFFICER}


def test_people_add_refuses_an_existing_login(app, make_person):
    make_person("taken")
    result = app.test_cli_runner().invoke(args=["people", "add", "taken", "--name", "X"])
    assert result.exit_code != 0
    assert "already taken" in result.output


def test_audit_verify_reports_tampering(app, session, make_person):
    person = make_person()
    make_person()
    runner = app.test_cli_runner()
    assert runner.invoke(args=["audit", "verify"]).exit_code == 0
    session.execute(sa.text("UPDATE person SET name = 'Forged' WHERE id = :id"), {"id": person.id})
    session.commit()
    result = runner.invoke(args=["audit", "verify"])
    assert result.exit_code == 1
    assert f"person {person.id}: name differ from the latest audit event" in result.output


def test_audit_anchor_then_verify_detects_truncation(app, session, make_person, tmp_path):
    from models.audit import guards

    make_person()
    runner = app.test_cli_runner()
    anchor = tmp_path / "anchor.txt"
    anchor.write_text(runner.invoke(args=["audit", "anchor"]).output)
    assert anchor.read_text().startswith("audit-anchor count=")
    assert runner.invoke(args=["audit", "verify", "--anchor", str(anchor)]).exit_code == 0
    conn = session.connection()
    guards.run(conn, guards.drop_statements(conn.dialect.name))
    conn.execute(sa.text("DELETE FROM audit_event WHERE id = (SELECT max(id) FROM audit_event)"))
    guards.run(conn, guards.create_statements(conn.dialect.name))
    session.commit()
    result = runner.invoke(args=["audit", "verify", "--anchor", str(anchor)])
    assert result.exit_code == 1
    assert "the newest events were removed" in result.output
