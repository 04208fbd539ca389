"""Logging in, roles and CSRF."""

from tests.conftest import PASSWORD


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
