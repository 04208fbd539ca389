"""The view idiom: fields first, then the domain; domain errors beside their fields; nothing written."""
from contextlib import ExitStack

import pytest
import sqlalchemy as sa
from flask_wtf import FlaskForm
from wtforms import IntegerField
from wtforms.validators import InputRequired

from models.core.codes import WorkerCategory
from models.core.errors import Invalid
from models.people.person_ops import add_person
from models.people.tables import Person, Role
from webapp.extensions import db
from webapp.forms import validate_with


class CountForm(FlaskForm):
    """One whole number, required."""

    count = IntegerField("Count", validators=[InputRequired("Enter a count.")])


@pytest.fixture
def form_for(app):
    """Factory: the form as a view sees it, posted with `data`, or a plain GET when None."""
    with ExitStack() as stack:

        def make(data: dict | None) -> CountForm:
            method = "GET" if data is None else "POST"
            stack.enter_context(app.test_request_context("/", method=method, data=data))
            return CountForm()

        yield make


def test_a_form_not_submitted_never_reaches_the_domain(form_for):
    calls = []
    outcome = validate_with(form_for(None), calls.append)
    assert not outcome and calls == []


def test_a_field_error_keeps_the_value_from_the_domain(form_for):
    # "lots" is not a number; the domain would be handed None and could fail on it.
    calls = []
    form = form_for({"count": "lots"})
    outcome = validate_with(form, lambda f: calls.append(f.count.data + 1))
    assert not outcome and calls == []
    assert form.count.errors == ["Not a valid integer value."]


def test_domain_errors_go_beside_their_field_or_atop_the_form_and_nothing_is_written(form_for):
    form = form_for({"count": "3"})

    def operation(f):
        add_person(db.session, login="ghost", name="Ghost", email=None, roles={Role.OPERATOR},
                   category=WorkerCategory.ADULT_WORKER, password_hash="x")
        raise Invalid({"count": "Too many.", "elsewhere": "The lab is closed."})

    outcome = validate_with(form, operation)
    assert not outcome
    assert form.count.errors == ["Too many."]
    assert form.form_errors == ["The lab is closed."]
    assert db.session.scalar(sa.select(Person).where(Person.login == "ghost")) is None


def test_a_passing_form_returns_what_the_domain_returned(form_for):
    outcome = validate_with(form_for({"count": "3"}), lambda f: f.count.data * 2)
    assert outcome and outcome.value == 6  # 3 * 2, by hand


def test_a_forged_choice_is_refused_beside_its_field_not_with_an_error_page(make_person, login, session):
    # Before the fields were checked first, the domain was called with kind "bogus" and raised a
    # ValueError (HTTP 500).
    client = login(make_person(roles=(Role.ADMIN,)))
    data = {"name": "Mo single crystal", "kind": "bogus", "room": "C2", "registration_number": "R-7",
            "anode": "Mo", "max_kv": "50", "max_ma": "1", "max_power_w": "50", "enclosure": "enclosed",
            "check_interval_days": "30", "survey_interval_days": "365",
            "surface_action_level_usv_h": "2.5", "housing_action_level_usv_h": "25"}
    response = client.post("/instruments/new", data=data)
    assert response.status_code == 200
    assert "Not a valid choice." in response.text
