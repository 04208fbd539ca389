"""Mail never decides the answer: records are saved with their alert queued, whatever the mail server does."""
from datetime import date

import pytest
import sqlalchemy as sa

from models.checks.checklist_ops import active_items, checklist_for
from models.checks.tables import SafetyCheck
from models.core.outbox import OutboxMessage
from models.exposure.tables import PregnancyDeclaration
from models.people.tables import Person, Role
from models.surveys.tables import BypassPermit, Survey
from webapp.extensions import db

# Fixed times in the past (the test lab is on UTC): the app refuses records in the future.
PERFORMED = "2026-11-30T10:00"
TRAINED, REFRESHER = date(2026, 1, 5), date(2099, 1, 1)


@pytest.fixture
def app_config(smtp_switch):
    return {"MAIL_SERVER": "127.0.0.1", "MAIL_PORT": smtp_switch.port, "MAIL_TIMEOUT": 2,
            "BASE_URL": "https://logbook.example.org"}


@pytest.fixture
def lab(make_person, make_instrument, authorise):
    """A safety officer, an authorised operator and one instrument."""
    rso = make_person("rso", roles=(Role.SAFETY_OFFICER,), email="rso@example.org")
    operator = make_person("op", email="op@example.org")
    instrument = make_instrument(name="XRD-1")
    authorise(operator, instrument, trained_on=TRAINED, refresher_due=REFRESHER)
    return rso, operator, instrument


def _outbox(session) -> list[OutboxMessage]:
    session.expire_all()
    return list(session.scalars(sa.select(OutboxMessage).order_by(OutboxMessage.id)))


def _failed_check(session, instrument) -> dict:
    items = active_items(checklist_for(session, instrument))
    session.commit()
    data = {"performed_at": PERFORMED, "meter_id": "", "notes": ""}
    for n, item in enumerate(items):
        data[f"result_{item.id}"] = "fail" if n == 0 else "pass"
        data[f"comment_{item.id}"] = "Door opens with beam on" if n == 0 else ""
    return data


def test_a_failed_check_with_the_mail_server_down_is_saved_queued_and_sent_later(
        app, session, lab, login, smtp_switch):
    rso, operator, instrument = lab
    smtp_switch.stop()
    client = login(operator)
    response = client.post(f"/instruments/{instrument.id}/checks/new",
                           data=_failed_check(session, instrument))
    assert response.status_code == 302
    assert session.scalar(sa.select(sa.func.count()).select_from(SafetyCheck)) == 1
    session.refresh(instrument)
    assert instrument.in_service is False
    [message] = _outbox(session)
    assert message.sent_at is None and message.attempts == 1 and "ConnectionRefused" in message.last_error
    assert message.recipients == "rso@example.org"
    # Links come from BASE_URL only, never from the host the request came to (localhost here).
    assert "https://logbook.example.org/checks/" in message.body
    assert "localhost" not in message.body

    home = login(rso).get("/").text
    assert "E-mail not delivered" in home and "Failed safety-device check: XRD-1" in home
    assert "not delivered yet" in home  # the attention line

    smtp_switch.start()
    result = app.test_cli_runner().invoke(args=["mail", "send-pending", "--all"])
    assert result.exit_code == 0, result.output
    assert "Sent 1; not sent 0" in result.output
    [received] = smtp_switch.mailbox.messages
    assert received["To"] == "rso@example.org" and "Door opens with beam on" in received.get_content()
    [message] = _outbox(session)
    assert message.sent_at is not None
    # Sent once: running the sender again finds nothing to send.
    again = app.test_cli_runner().invoke(args=["mail", "send-pending", "--all"])
    assert "Sent 0; not sent 0" in again.output and len(smtp_switch.mailbox.messages) == 1
    home = login(rso).get("/").text
    assert "Every e-mail has been delivered." in home and "not delivered yet" not in home


def test_a_message_is_sent_right_after_the_commit_when_the_server_answers(session, lab, login, smtp_switch):
    _, operator, instrument = lab
    response = login(operator).post(f"/instruments/{instrument.id}/checks/new",
                                    data=_failed_check(session, instrument))
    assert response.status_code == 302
    assert len(smtp_switch.mailbox.messages) == 1
    [message] = _outbox(session)
    assert message.sent_at is not None and message.attempts == 1


def test_a_permit_request_with_the_mail_server_down_is_saved_and_queued(session, lab, login, smtp_switch):
    _, operator, instrument = lab
    smtp_switch.stop()
    response = login(operator).post("/permits/new", data={
        "instrument_id": instrument.id, "devices": "Door interlock", "reason": "Beam alignment",
        "window_start": "2099-01-01T08:00", "window_end": "2099-01-01T12:00",
        "ring_dosimetry_confirmed": "y"})
    assert response.status_code == 302
    assert session.scalar(sa.select(sa.func.count()).select_from(BypassPermit)) == 1
    [message] = _outbox(session)
    assert "Bypass permit asked for" in message.subject and message.sent_at is None


def test_a_pregnancy_declaration_with_the_mail_server_down_is_saved_and_queued(
        session, make_person, login, smtp_switch):
    make_person("rso", roles=(Role.SAFETY_OFFICER,), email="rso@example.org")
    ann = make_person("ann")
    smtp_switch.stop()
    response = login(ann).post(f"/doses/person/{ann.id}/pregnancy/declare",
                               data={"declared_on": "2026-11-02"})
    assert response.status_code == 302
    assert session.scalar(sa.select(sa.func.count()).select_from(PregnancyDeclaration)) == 1
    [message] = _outbox(session)
    assert message.subject == "A declaration needs your review" and message.sent_at is None


def test_a_failed_survey_with_the_mail_server_down_is_saved_and_queued(
        session, lab, login, make_meter, smtp_switch):
    _, operator, instrument = lab
    meter = make_meter(calibrated_on=date(2026, 11, 1))
    smtp_switch.stop()
    # 3.1 µSv/h at the surface is over the 2.5 µSv/h outer-surface level (ANSI N43.2 via DOE-HDBK-1109-97).
    response = login(operator).post("/surveys/new", data={
        "instrument_id": instrument.id, "performed_at": PERFORMED, "trigger": "periodic", "kv": "40",
        "ma": "30", "meter_id": meter.id, "unit": "uSv/h", "notes": "",
        "points-0-location": "Viewing window", "points-0-reading": "3.1", "points-0-background": "0.1",
        "points-0-distance_cm": "5", "points-0-level": "surface"})
    assert response.status_code == 302
    assert session.scalar(sa.select(Survey.passed)) is False
    [message] = _outbox(session)
    assert "Survey failed" in message.subject and message.sent_at is None


@pytest.mark.parametrize("name", ["Eve\r\nBcc: all@example.org", "Eve\nSmith", "Eve\x00"])
def test_a_name_with_line_breaks_or_control_characters_is_refused_at_the_field(
        session, make_person, login, name):
    admin = make_person("admin", roles=(Role.ADMIN,))
    response = login(admin).post("/people/new", data={
        "login": "eve", "name": name, "email": "eve@example.org", "roles": ["operator"],
        "category": "adult_worker", "password": "a long enough password 1", "confirm": "a long enough password 1"})
    assert response.status_code == 200
    assert "control characters" in response.text
    assert session.scalar(sa.select(Person).where(Person.login == "eve")) is None


def test_the_error_page_says_nothing_was_saved_only_after_a_rollback(app, session, make_person):
    app.config["PROPAGATE_EXCEPTIONS"] = False

    def fail_after_saving():
        make_person("saved")
        raise RuntimeError("after the commit")

    def fail_before_saving():
        raise RuntimeError("before any commit")

    app.add_url_rule("/test/fail-after", view_func=fail_after_saving)
    app.add_url_rule("/test/fail-before", view_func=fail_before_saving)
    client = app.test_client()
    after = client.get("/test/fail-after")
    assert after.status_code == 500
    assert "Nothing was saved" not in after.text and "after a change was saved" in after.text
    before = client.get("/test/fail-before")
    assert before.status_code == 500 and "Nothing was saved" in before.text
    db.session.rollback()
