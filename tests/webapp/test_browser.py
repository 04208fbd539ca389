"""A real browser logs in as each role, sees the caution, and meets a 403 where not allowed."""
import pytest

from models.people.person_ops import add_person
from models.people.tables import Role
from tests.conftest import PASSWORD_HASH, browser_log_in
from webapp.extensions import db
from webapp.formatting import CAUTION

pytestmark = pytest.mark.browser

PEOPLE = {"op": Role.OPERATOR, "rso": Role.SAFETY_OFFICER, "adm": Role.ADMIN}


@pytest.fixture
def served(live_server):
    url, app = live_server
    with app.app_context():
        for login, role in PEOPLE.items():
            add_person(db.session, login=login, name=f"Demo {login}", roles={role},
                       password_hash=PASSWORD_HASH)
        db.session.commit()
    return url


@pytest.mark.parametrize("login, forbidden", [("op", "/people/"), ("rso", "/people/"),
                                              ("adm", "/does-not-exist")])
def test_each_role_logs_in_and_sees_the_caution(page, served, login, forbidden):
    browser_log_in(page, served, login)
    assert CAUTION in page.inner_text("aside.caution")
    assert f"Demo {login}" in page.inner_text("header")
    response = page.goto(served + forbidden)
    assert response.status in (403, 404)
    assert CAUTION in page.inner_text("aside.caution")


def test_wrong_password_shows_a_message(page, served):
    page.goto(f"{served}/login")
    page.fill("input[name=login]", "op")
    page.fill("input[name=password]", "wrong password")
    page.click("button[type=submit]")
    assert "Login or password not recognised." in page.inner_text("form")
