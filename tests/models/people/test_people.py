"""Rules for people and instruments."""
import pytest

from models.core.errors import Invalid
from models.instruments.instrument_ops import validate_instrument
from models.people.person_ops import add_person, check_separation
from models.people.tables import Person, Role


def test_duplicate_login_is_refused(session, make_person):
    make_person("ada")
    with pytest.raises(Invalid) as caught:
        add_person(session, login="ada", name="Another Ada")
    assert caught.value.errors == {"login": "The login 'ada' is already taken."}


def test_blank_name_is_refused(session):
    with pytest.raises(Invalid) as caught:
        add_person(session, login="x", name="   ")
    assert "name" in caught.value.errors


def test_roles_are_a_set(session, make_person):
    person = make_person(roles=(Role.OPERATOR, Role.SAFETY_OFFICER))
    assert person.has_role(Role.SAFETY_OFFICER) and not person.has_role(Role.ADMIN)
    person.set_roles({Role.ADMIN})
    session.commit()
    assert person.role_set == {Role.ADMIN}


GOOD = {"name": "XRD 1", "anode": "Cu", "max_kv": 60.0, "max_ma": 40.0, "max_power_w": 2200.0,
        "check_interval_days": 30, "survey_interval_days": 365,
        "surface_action_level_usv_h": 2.5, "housing_action_level_usv_h": 25.0}


@pytest.mark.parametrize("field, value, message", [
    ("max_kv", -5.0, "Maximum tube voltage must be greater than zero."),
    ("max_kv", 0.0, "Maximum tube voltage must be greater than zero."),
    ("max_ma", float("nan"), "Maximum tube current must be greater than zero."),
    ("max_power_w", 0.0, "Maximum power must be greater than zero."),
    ("name", "  ", "Enter the instrument's name."),
    ("anode", "Xx", "Give the anode as an element symbol, e.g. Cu or Mo."),
    ("check_interval_days", 0, "The interval must be from 1 to 366 days."),
    # A check interval of 3,000,000 days once broke the due pages; a year is the published outer bound.
    ("check_interval_days", 3_000_000, "The interval must be from 1 to 366 days."),
    ("survey_interval_days", 731, "The interval must be from 1 to 730 days."),
    ("max_kv", float("inf"), "Maximum tube voltage must be from 0.001 to 500 kV."),
])
def test_instrument_rules(session, field, value, message):
    with pytest.raises(Invalid) as caught:
        validate_instrument(session, {**GOOD, field: value})
    assert caught.value.errors[field] == message


def test_good_instrument_passes(session):
    validate_instrument(session, GOOD)


def _someone(*roles, email="someone@example.org"):
    """A person not saved anywhere, holding these roles."""
    person = Person(login="someone", name="Someone", email=email)
    person.set_roles(set(roles))
    return person


ADMIN, OFFICER, OPERATOR = Role.ADMIN, Role.SAFETY_OFFICER, Role.OPERATOR


@pytest.mark.parametrize("by, held, roles, email, refused", [
    (None, {OPERATOR}, {OFFICER}, "someone@example.org", set()),          # the server's command line
    ({OFFICER}, {OPERATOR}, {OFFICER}, "someone@example.org", set()),     # an officer appoints
    ({ADMIN}, {OPERATOR}, {OPERATOR, ADMIN}, "someone@example.org", set()),
    ({ADMIN}, {ADMIN}, {ADMIN, OFFICER}, "someone@example.org", {"roles"}),  # self-promotion
    ({ADMIN}, {OFFICER}, {OPERATOR}, "someone@example.org", {"roles"}),      # removing the officer
    ({ADMIN}, {OFFICER}, {OFFICER}, "admin@example.org", {"email"}),         # redirecting alerts
    ({ADMIN}, {OPERATOR}, {OPERATOR}, "new@example.org", set()),
    ({ADMIN}, None, {OFFICER}, None, {"roles"}),                             # adding an officer
])
def test_only_a_safety_officer_touches_the_officers_role_and_address(by, held, roles, email, refused):
    actor = _someone(*by) if by else None
    person = _someone(*held) if held is not None else None
    assert set(check_separation(actor, person, roles, email)) == refused
