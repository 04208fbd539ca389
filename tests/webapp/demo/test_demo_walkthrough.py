"""The issues' walk-throughs on the demo lab itself, as `make run` serves it."""
import html
import re
from zoneinfo import ZoneInfo

import pytest
import sqlalchemy as sa

from models.instruments.tables import Instrument
from models.people.person_ops import find_person
from tests.conftest import LAB_NOW, PASSWORD_HASH
from webapp.demo.lab import LAB_ZONE, load_demo_lab
from webapp.extensions import db

START = {"kv": "40", "ma": "40", "purpose": "phase check", "pre_use_checks_confirmed": "y",
         "dosimeter_worn": "y"}


@pytest.fixture
def app_config(mail_app_config):
    return mail_app_config


@pytest.fixture
def demo(app):
    """The demo lab up to today, every demo person logging in with the test password."""
    load_demo_lab(db.session, LAB_NOW.astimezone(ZoneInfo(LAB_ZONE)).date(), PASSWORD_HASH)
    db.session.commit()
    return lambda login: find_person(db.session, login)


def _text(response) -> str:
    return html.unescape(response.get_data(as_text=True))


def _attention(page: str) -> list[str]:
    section = page.split('id="attention"', 1)[1].split("</section>", 1)[0]
    rows = re.findall(r"<tr><td><span[^>]*>(.*?)</span></td>\s*<td>(.*?)</td>", section, re.S)
    return [f"{label}: {what}" for label, what in rows]


def _instrument(name_start: str) -> Instrument:
    return db.session.scalar(sa.select(Instrument).where(Instrument.name.startswith(name_start)))


def test_the_person_above_a_level_heads_the_list_and_her_page_shows_it_all(demo, login):
    officer = login(demo("okessler"))
    lines = _attention(_text(officer.get("/")))
    assert lines[0].startswith("level I: Lena Brandt: Hp(10) whole body, calendar quarter")
    page = _text(officer.get(f"/exposure/person/{demo('lbrandt').id}"))
    assert "Dose by period" in page and "Dose records" in page
    assert "Dose at or above an investigation level." in page
    chart = officer.get(f"/exposure/person/{demo('lbrandt').id}/chart.svg")
    assert chart.mimetype == "image/svg+xml" and b"annual-limit" in chart.data


def test_the_overdue_check_is_on_the_due_list_and_in_the_reminder(demo, login, app, smtp_server):
    _port, mailbox = smtp_server
    due = _text(login(demo("okessler")).get("/due"))
    xrf = next(line for line in due.split("<tr") if "Safety-device check" in line and "XRF" in line)
    assert "late" in xrf
    result = app.test_cli_runner().invoke(args=["reminders", "send"])
    assert result.exit_code == 0, result.output
    digest = next(m for m in mailbox.messages if "okessler@example.org" in m["To"])
    assert "XRF spectrometer F1" in digest.get_content()


def test_a_failed_check_stops_sessions_until_a_passing_one(demo, login, record_a_check):
    powder = _instrument("Powder diffractometer")
    operator = login(demo("ydemir"))
    record_a_check(powder, demo("okessler"), fail=(0,))
    assert not powder.in_service
    refused = _text(operator.post(f"/sessions/start/{powder.id}", data=START))
    assert "out of service" in refused and "Oskar Kessler" in refused
    assert powder.out_of_service_reason in refused
    record_a_check(powder, demo("okessler"))
    db.session.refresh(powder)
    assert powder.in_service
    assert operator.post(f"/sessions/start/{powder.id}", data=START).status_code == 302
