"""`flask demo load` and `flask demo logins`."""
import sqlalchemy as sa

from models.people.tables import Person
from webapp.demo.lab import DEMO_PASSWORD, PEOPLE

LOAD = ["demo", "load", "--if-empty", "--today", "2026-05-14"]


def people_count(session) -> int:
    """How many people the database holds."""
    return session.scalar(sa.select(sa.func.count()).select_from(Person))


def test_load_if_empty_twice_loads_once(app, session):
    runner = app.test_cli_runner()
    first = runner.invoke(args=LOAD)
    assert first.exit_code == 0, first.output
    assert "Loaded the demo lab up to 2026-05-14" in first.output
    count = people_count(session)
    assert count == len(PEOPLE)
    second = runner.invoke(args=LOAD)
    assert second.exit_code == 0, second.output
    assert "not loaded" in second.output
    assert people_count(session) == count
    # Everything the demo wrote went through the app: the sealed trail and every row agree.
    verified = runner.invoke(args=["audit", "verify"])
    assert verified.exit_code == 0, verified.output


def test_load_refuses_a_database_with_people(app, session, make_person):
    make_person("someone")
    result = app.test_cli_runner().invoke(args=["demo", "load"])
    assert result.exit_code != 0
    assert "only into an empty database" in result.output
    assert people_count(session) == 1


def test_logins_prints_each_login_and_the_password(app, client):
    runner = app.test_cli_runner()
    assert runner.invoke(args=LOAD).exit_code == 0
    result = runner.invoke(args=["demo", "logins"])
    assert result.exit_code == 0, result.output
    for person in PEOPLE:
        assert person.login in result.output
    assert DEMO_PASSWORD in result.output
    assert "Radiation safety officer" in result.output
    # The printed password really opens a demo account.
    response = client.post("/login", data={"login": PEOPLE[0].login, "password": DEMO_PASSWORD})
    assert response.status_code == 302


def test_logins_says_when_the_demo_is_not_loaded(app):
    result = app.test_cli_runner().invoke(args=["demo", "logins"])
    assert result.exit_code != 0
    assert "not loaded" in result.output
