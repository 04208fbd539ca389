"""Logging in, roles and CSRF."""
import pytest

from models.people.tables import Role
from tests.conftest import PASSWORD


def test_logged_out_visitor_is_sent_to_log_in(client):
    response = client.get("/instruments/")
    assert response.status_code == 302 and response.location.startswith("/login")


def test_wrong_password_is_refused_with_a_message(client, make_person):
    person = make_person()
    response = client.post("/login", data={"login": person.login, "password": "not it"})
    assert response.status_code == 200
    assert b"Login or password not recognised." in response.data
    assert client.get("/").status_code == 302


def test_deactivated_person_cannot_log_in(client, make_person, session):
    person = make_person()
    person.active = False
    session.commit()
    response = client.post("/login", data={"login": person.login, "password": PASSWORD})
    assert b"Login or password not recognised." in response.data


def test_login_renews_the_session(client, make_person):
    person = make_person()
    with client.session_transaction() as flask_session:
        flask_session["planted"] = "by someone else"
    client.post("/login", data={"login": person.login, "password": PASSWORD})
    with client.session_transaction() as flask_session:
        assert "planted" not in flask_session


@pytest.mark.parametrize("role, url, status", [
    (Role.OPERATOR, "/people/", 403),
    (Role.OPERATOR, "/audit/", 403),
    (Role.OPERATOR, "/settings/", 403),
    (Role.OPERATOR, "/instruments/new", 403),
    (Role.SAFETY_OFFICER, "/people/", 403),
    (Role.SAFETY_OFFICER, "/audit/", 200),
    (Role.ADMIN, "/people/", 200),
    (Role.ADMIN, "/instruments/new", 200),
])
def test_roles_decide_access(make_person, login, role, url, status):
    client = login(make_person(roles=(role,)))
    assert client.get(url).status_code == status
