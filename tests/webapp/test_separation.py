"""Separation of duties: the safety officer's role and alerts, and no dose data on shared pages."""
from datetime import UTC, datetime

import pytest

from models.people.person_ops import OFFICER_ADDRESS, ONLY_THE_OFFICER
from models.people.tables import Role
from models.surveys.survey_ops import raise_survey_task
from models.surveys.tables import SurveyTrigger

ESCAPED_ONLY_THE_OFFICER = ONLY_THE_OFFICER.replace("'", "&#39;")


@pytest.fixture
def app_config(mail_app_config):
    return mail_app_config


def _edit(client, person, **changes):
    """Post the person form with the person's current values and these changes."""
    data = {"name": person.name, "email": person.email, "category": "adult_worker",
            "roles": [r.value for r in person.role_set], **changes}
    return client.post(f"/people/{person.id}", data=data)


def test_an_admin_cannot_make_herself_safety_officer(session, make_person, login):
    admin = make_person("boss", roles=(Role.ADMIN,))
    response = _edit(login(admin), admin, roles=["admin", "safety_officer"])
    assert ONLY_THE_OFFICER.replace("'", "&#39;") in response.text
    session.refresh(admin)
    assert admin.role_set == {Role.ADMIN}


def test_an_admin_cannot_remove_the_safety_officer_or_redirect_their_mail(session, make_person, login):
    admin = make_person("boss", roles=(Role.ADMIN,))
    officer = make_person("rso", roles=(Role.SAFETY_OFFICER,), email="rso@example.org")
    client = login(admin)
    assert ESCAPED_ONLY_THE_OFFICER in _edit(client, officer, roles=["operator"]).text
    assert OFFICER_ADDRESS.replace("'", "&#39;") in _edit(client, officer, email="boss@example.org").text
    session.refresh(officer)
    assert officer.role_set == {Role.SAFETY_OFFICER} and officer.email == "rso@example.org"


def test_an_admin_cannot_add_a_safety_officer(make_person, login):
    client = login(make_person("boss", roles=(Role.ADMIN,)))
    response = client.post("/people/new", data={
        "login": "second", "name": "Second Officer", "roles": ["safety_officer"],
        "category": "adult_worker", "password": "quartz lantern orbit meadow",
        "confirm": "quartz lantern orbit meadow"})
    assert ESCAPED_ONLY_THE_OFFICER in response.text


def test_an_admin_cannot_change_the_lab_alert_address(session, make_person, login):
    client = login(make_person("boss", roles=(Role.ADMIN,)))
    response = client.post("/settings/", data={
        "lab_name": "Lab", "timezone": "UTC", "display_unit": "mSv", "due_soon_days": 7,
        "safety_officer_email": "boss@example.org", "idle_timeout_minutes": 480,
        "session_lifetime_hours": 168})
    assert OFFICER_ADDRESS.replace("'", "&#39;") in response.text
    from models.core.settings import lab_settings
    session.expire_all()
    assert lab_settings(session).safety_officer_email is None


def test_a_safety_officer_grants_the_role_and_every_role_change_is_mailed(
        session, make_person, login, smtp_server):
    _, mailbox = smtp_server
    officer = make_person("rso", roles=(Role.SAFETY_OFFICER, Role.ADMIN), email="rso@example.org")
    deputy = make_person("deputy", roles=(Role.OPERATOR,))
    assert _edit(login(officer), deputy, roles=["operator", "safety_officer"]).status_code == 302
    session.refresh(deputy)
    assert deputy.role_set == {Role.OPERATOR, Role.SAFETY_OFFICER}
    (message,) = mailbox.messages
    assert "Roles changed: Person deputy (deputy)" in message["Subject"]
    assert "rso@example.org" in message["To"]
    assert "Now: Operator, Radiation safety officer" in message.get_content()
    # An admin's change of someone's operator and admin roles is mailed too.
    admin = make_person("boss", roles=(Role.ADMIN,))
    worker = make_person("worker")
    _edit(login(admin), worker, roles=["operator", "admin"])
    assert "Roles changed: Person worker (worker)" in mailbox.messages[-1]["Subject"]


def test_a_session_page_shows_the_dosimeter_serial_only_to_its_wearer_and_the_officer(
        session, make_person, make_instrument, make_session_entry, make_dosimeter, login):
    operator, colleague = make_person("op"), make_person("colleague")
    officer = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    dosimeter = make_dosimeter(operator, serial="SER-777")
    entry = make_session_entry(make_instrument(), operator,
                               started_at=datetime(2026, 3, 2, 9, tzinfo=UTC),
                               ended_at=datetime(2026, 3, 2, 10, tzinfo=UTC))
    entry.dosimeter_worn = True
    entry.dosimeters.append(dosimeter)
    session.commit()
    assert "SER-777" not in login(colleague).get(f"/sessions/{entry.id}").text
    assert "SER-777" in login(operator).get(f"/sessions/{entry.id}").text
    assert "SER-777" in login(officer).get(f"/sessions/{entry.id}").text


def test_the_admins_audit_view_hides_why_a_survey_was_asked_for(session, make_person, make_instrument, login):
    instrument = make_instrument()
    # Older trails wrote the level into the task's reason; such events must not reach an admin.
    raise_survey_task(session, instrument, SurveyTrigger.DOSE_RISE,
                      "Dose rise: a user of this instrument reached level I (Hp(10) from 2026-01-01).")
    session.commit()
    admin_page = login(make_person("boss", roles=(Role.ADMIN,))).get("/audit/?entity=survey_task").text
    assert "level I" not in admin_page
    assert "Asked for by the radiation safety officer" in admin_page
    officer_page = login(make_person("rso", roles=(Role.SAFETY_OFFICER,))).get("/audit/?entity=survey_task")
    assert "level I" in officer_page.text


def test_an_older_dose_rise_task_reads_asked_for_by_the_officer_on_shared_pages(
        session, make_person, make_instrument, login):
    instrument = make_instrument(name="P9")
    raise_survey_task(session, instrument, SurveyTrigger.DOSE_RISE,
                      "Dose rise: a user of this instrument reached level I (Hp(10) from 2026-01-01).")
    session.commit()
    client = login(make_person("op"))
    for page in (client.get("/surveys/").text, client.get(f"/instruments/{instrument.id}").text):
        assert "Asked for by the radiation safety officer" in page
        assert "level I" not in page
