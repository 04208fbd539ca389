"""The due list page, the home panel, settings help, reminders by e-mail and the calendar feed."""
from datetime import timedelta

import icalendar
import pytest
import sqlalchemy as sa

from models.due.tables import ReminderSent
from models.people.tables import Role
from tests.conftest import LAB_NOW, LAB_TODAY


@pytest.fixture
def app_config(mail_app_config):
    return mail_app_config


@pytest.fixture
def late_lab(make_person, make_instrument, authorise, record_a_check):
    """An instrument whose last passing check was 40 days ago (30-day interval): 10 days late."""
    rso = make_person("rso", roles=(Role.SAFETY_OFFICER,), email="rso@example.org")
    operator = make_person("op", email="op@example.org")
    instrument = make_instrument(name="Late XRD")
    authorise(operator, instrument)
    record_a_check(instrument, rso, performed_at=LAB_NOW - timedelta(days=40))
    return rso, operator, instrument


def test_the_overdue_check_is_on_the_safety_officers_due_list(late_lab, login):
    rso, _, _ = late_lab
    client = login(rso)
    page = client.get("/due").text
    assert "What is due in the lab" in page
    row = page[page.index("Safety-device check"):]
    assert "Late XRD" in row[:400] and ">late<" in row[:400]
    home = client.get("/").text
    assert "Safety-device check: Late XRD, 10 days late." in home  # attention list


def test_the_operator_sees_their_tasks_on_the_home_page(late_lab, login):
    _, operator, _ = late_lab
    client = login(operator)
    home = client.get("/").text
    assert "Due for me" in home and "Safety-device check: Late XRD" in home
    assert "What is due for me" in client.get("/due").text


def test_settings_show_the_check_interval_bounds_with_sources(late_lab, login):
    page = login(late_lab[0]).get("/settings/").text
    assert "common practice" in page
    assert "6 months (ANSI N43.2 as quoted in DOE-HDBK-1109-97)" in page
    assert "12 months (25 Pa. Code 227a.20)" in page


def test_reminders_twice_send_once(app, session, late_lab, smtp_server):
    _, mailbox = smtp_server
    runner = app.test_cli_runner()
    first = runner.invoke(args=["reminders", "send"])
    assert first.exit_code == 0, first.output
    recipients = sorted(m["To"] for m in mailbox.messages)
    assert recipients == ["op@example.org", "rso@example.org", "rso@example.org"]  # with the anchor
    digest = next(m for m in mailbox.messages if "lab due list" in m["Subject"])
    assert "Safety-device check: Late XRD" in digest.get_content()
    assert "LATE by 10 days" in digest.get_content()
    second = runner.invoke(args=["reminders", "send"])
    assert second.exit_code == 0, second.output
    assert "Nothing new to remind." in second.output
    assert len(mailbox.messages) == 3


def test_reminders_mail_the_audit_anchor_once_a_month(app, session, late_lab, smtp_server):
    from models.audit.verify_ops import Anchor, verify_anchor

    _, mailbox = smtp_server
    runner = app.test_cli_runner()
    assert runner.invoke(args=["reminders", "send"]).exit_code == 0
    (anchor_mail,) = [m for m in mailbox.messages if "audit trail anchor" in m["Subject"]]
    assert anchor_mail["To"] == "rso@example.org"
    anchor = Anchor.parse(anchor_mail.get_content())
    assert anchor is not None and verify_anchor(session, anchor) is None
    runner.invoke(args=["reminders", "send"])
    assert len([m for m in mailbox.messages if "audit trail anchor" in m["Subject"]]) == 1


def test_a_dry_run_prints_and_records_nothing(app, session, late_lab, smtp_server):
    _, mailbox = smtp_server
    result = app.test_cli_runner().invoke(args=["reminders", "send", "--dry-run"])
    assert result.exit_code == 0, result.output
    assert "Would send to op@example.org" in result.output
    assert mailbox.messages == []
    assert session.scalar(sa.select(sa.func.count()).select_from(ReminderSent)) == 0


def test_the_calendar_feed_has_the_due_dates_and_an_old_address_stops(app, late_lab, login, client):
    _, operator, _ = late_lab
    login(operator)
    page = client.post("/calendar/renew").text
    url = page.split('class="feed-url">')[1].split("<")[0]
    # The address is on BASE_URL, whatever host the request came to.
    path = url.split(app.config["BASE_URL"], 1)[1]
    client.post("/logout")
    response = client.get(path)
    assert response.status_code == 200
    assert response.mimetype == "text/calendar"
    events = icalendar.Calendar.from_ical(response.data).walk("VEVENT")
    starts = {str(e["summary"]): e.decoded("dtstart") for e in events}
    assert starts["Safety-device check: Late XRD"] == LAB_TODAY - timedelta(days=10)
    assert f"Refresher training: {operator.name} on Late XRD" in starts
    login(operator)
    client.post("/calendar/renew")
    assert client.get(path).status_code == 404
    assert client.get("/calendar/not-a-token.ics").status_code == 404
