"""Every form needs its CSRF token."""
import pytest

from models.people.person_ops import find_person
from models.people.tables import Role
from tests.conftest import PASSWORD


@pytest.fixture
def app_config():
    return {"WTF_CSRF_ENABLED": True}


def test_form_without_csrf_token_is_refused(client, make_person, session):
    admin = make_person("boss", roles=(Role.ADMIN,))
    page = client.get("/login").data.decode()
    token = page.split('name="csrf_token" type="hidden" value="')[1].split('"')[0]
    assert client.post("/login", data={"login": "boss", "password": PASSWORD,
                                       "csrf_token": token}).status_code == 302
    response = client.post("/people/new", data={"login": "sneaky", "name": "Sneaky",
                                                "roles": "operator", "category": "adult_worker",
                                                "password": "x" * 12, "confirm": "x" * 12})
    assert response.status_code == 400
    assert b"security token" in response.data
    assert find_person(session, "sneaky") is None
    assert admin.active
