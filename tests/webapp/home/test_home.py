"""Home panels: the admin's overview and the operator's instruments."""
from datetime import timedelta

from models.instruments.instrument_ops import set_out_of_service
from models.instruments.tables import AuthorisationLevel
from models.people.tables import Role


def test_admin_sees_people_by_role_and_instruments_by_status(session, make_person,
                                                             make_instrument, login):
    admin = make_person("boss", roles=(Role.ADMIN,))
    make_person(roles=(Role.OPERATOR,))
    make_person(roles=(Role.OPERATOR, Role.SAFETY_OFFICER))
    make_instrument(name="Powder one")
    broken = make_instrument(name="Broken one")
    set_out_of_service(session, broken, "Shutter sticks.")
    session.commit()
    page = login(admin).get("/").get_data(as_text=True)
    assert "People and instruments" in page
    assert "Shutter sticks." in page
    assert 'href="/people/"' in page and 'href="/instruments/"' in page
    assert "<strong>3</strong>" in page
    assert "My instruments" not in page


def test_operator_sees_own_instruments_with_refresher_state(session, make_person,
                                                           make_instrument, authorise, login, today):
    operator = make_person("op")
    other = make_person("other")
    soon = make_instrument(name="Soon due")
    lapsed = make_instrument(name="Lapsed")
    fine = make_instrument(name="Fine")
    hidden = make_instrument(name="Someone else's")
    authorise(operator, soon, level=AuthorisationLevel.SUPERVISED,
              trained_on=today - timedelta(days=360), refresher_due=today + timedelta(days=3))
    authorise(operator, lapsed, trained_on=today - timedelta(days=400),
              refresher_due=today - timedelta(days=2))
    authorise(operator, fine)
    authorise(other, hidden)
    page = login(operator).get("/").get_data(as_text=True)
    assert "My instruments" in page
    for name in ("Soon due", "Lapsed", "Fine"):
        assert name in page
    assert "Someone else&#39;s" not in page and "Someone else's" not in page
    assert "due soon" in page and "overdue" in page and "supervised" in page
    assert "People and instruments" not in page


def test_operator_without_authorisation_is_told_whom_to_ask(make_person, login):
    page = login(make_person("new")).get("/").get_data(as_text=True)
    assert "not authorised on any instrument" in page
