"""In a real browser an operator starts a session in two clicks plus the fields and ends it in one."""
from __future__ import annotations

import os
from datetime import timedelta

import pytest

from models.instruments.instrument_ops import mark_commissioned, save_instrument
from models.instruments.tables import Authorisation, AuthorisationLevel, Enclosure, InstrumentKind
from models.people.person_ops import add_person
from models.people.tables import Role
from tests.conftest import LAB_TODAY, PASSWORD_HASH, browser_log_in
from webapp.extensions import db

pytestmark = pytest.mark.browser

# Screenshots land here for a person to look at; set SCREENSHOT_DIR to keep them elsewhere.
SHOTS = os.environ.get("SCREENSHOT_DIR")


@pytest.fixture
def served(live_server):
    url, app = live_server
    with app.app_context():
        add_person(db.session, login="rso", name="Rae Safety", roles={Role.SAFETY_OFFICER},
                   password_hash=PASSWORD_HASH)
        operator = add_person(db.session, login="op", name="Olga Operator", roles={Role.OPERATOR},
                              password_hash=PASSWORD_HASH)
        instrument = save_instrument(db.session, {
            "name": "Cu powder diffractometer", "kind": InstrumentKind.POWDER_XRD, "room": "B1.12",
            "registration_number": "X-1", "anode": "Cu", "max_kv": 60.0, "max_ma": 60.0,
            "max_power_w": 2200.0, "enclosure": Enclosure.ENCLOSED, "check_interval_days": 30,
            "survey_interval_days": 365, "surface_action_level_usv_h": 2.5,
            "housing_action_level_usv_h": 25.0})
        mark_commissioned(db.session, instrument, instrument.created_at)
        db.session.add(Authorisation(person_id=operator.id, instrument_id=instrument.id,
                                     level=AuthorisationLevel.INDEPENDENT,
                                     trained_on=LAB_TODAY - timedelta(days=30),
                                     refresher_due=LAB_TODAY + timedelta(days=330)))
        db.session.commit()
        instrument_id = instrument.id
    return url, instrument_id


def _shot(page, name):
    if SHOTS:
        page.screenshot(path=os.path.join(SHOTS, f"{name}.png"), full_page=True)


def test_operator_starts_and_ends_a_session(page, served):
    url, instrument_id = served
    browser_log_in(page, url, "op")
    _shot(page, "home_before")

    page.get_by_role("link", name="Start a session on Cu powder diffractometer").click()  # click 1
    page.fill("input[name=kv]", "40")
    page.fill("input[name=ma]", "40")
    page.fill("input[name=purpose]", "Si standard")
    page.check("input[name=pre_use_checks_confirmed]")
    _shot(page, "start_form")
    page.click("button:has-text('Start session')")  # click 2
    page.wait_for_url(f"{url}/")
    assert "Open on Cu powder diffractometer" in page.inner_text("main")
    _shot(page, "home_open")

    page.click("button:has-text('End session')")  # one click ends it
    page.wait_for_url(f"{url}/sessions/*")
    text = page.inner_text("main")
    assert "1600 W" in text and "0.3100 Å" in text and "excited" in text and "kWh" in text
    _shot(page, "session_ended")

    page.goto(f"{url}/instruments/{instrument_id}")
    assert "Authorised users" in page.inner_text("main")
    _shot(page, "instrument")


def test_a_refused_start_shows_the_reason_in_the_browser(page, served):
    url, instrument_id = served
    browser_log_in(page, url, "op")
    page.goto(f"{url}/sessions/start/{instrument_id}")
    page.fill("input[name=kv]", "65")
    page.fill("input[name=ma]", "40")
    page.click("button:has-text('Start session')")
    text = page.inner_text("main")
    assert "Tube voltage 65 kV is above this instrument's rating of 60 kV." in text
    assert "Confirm that you saw the warning light and the shutter indicators working." in text
    _shot(page, "start_refused")
