"""In a real browser: an operator asks for a bypass, the safety officer approves, the banner shows."""
from datetime import timedelta

import pytest

from models.instruments.instrument_ops import mark_commissioned, save_instrument
from models.instruments.tables import Authorisation, AuthorisationLevel, Enclosure, InstrumentKind
from models.people.person_ops import add_person
from models.people.tables import Role
from tests.conftest import LAB_NOW, LAB_TODAY, PASSWORD_HASH, browser_log_in
from webapp.extensions import db

pytestmark = pytest.mark.browser


@pytest.fixture
def served(live_server):
    url, app = live_server
    with app.app_context():
        op = add_person(db.session, login="op", name="Olga Operator", roles={Role.OPERATOR},
                        password_hash=PASSWORD_HASH)
        add_person(db.session, login="rso", name="Ravi Officer", roles={Role.SAFETY_OFFICER},
                   password_hash=PASSWORD_HASH)
        instrument = save_instrument(db.session, {
            "name": "Open-beam Ag", "kind": InstrumentKind.OPEN_BEAM, "anode": "Ag", "max_kv": 50.0,
            "max_ma": 1.0, "max_power_w": 50.0, "enclosure": Enclosure.OPEN_BEAM,
            "check_interval_days": 30, "survey_interval_days": 365,
            "surface_action_level_usv_h": 2.5, "housing_action_level_usv_h": 25.0})
        mark_commissioned(db.session, instrument, instrument.created_at)
        db.session.add(Authorisation(person_id=op.id, instrument_id=instrument.id,
                                     level=AuthorisationLevel.INDEPENDENT,
                                     trained_on=LAB_TODAY - timedelta(days=30),
                                     refresher_due=LAB_TODAY + timedelta(days=365)))
        db.session.commit()
    return url


def test_bypass_request_approval_banner_and_close(browser, served):
    # The live lab runs on UTC (the default), so the browser's local inputs are UTC too.
    now = LAB_NOW
    operator = browser.new_context().new_page()
    browser_log_in(operator, served, "op")
    operator.goto(f"{served}/permits/new")
    operator.fill("textarea[name=devices]", "Hutch door interlock")
    operator.fill("textarea[name=reason]", "Align the beam")
    operator.fill("input[name=window_start]", (now - timedelta(minutes=5)).strftime("%Y-%m-%dT%H:%M"))
    operator.fill("input[name=window_end]", (now + timedelta(hours=2)).strftime("%Y-%m-%dT%H:%M"))
    operator.check("input[name=ring_dosimetry_confirmed]")
    operator.click("button:has-text('Ask for approval')")
    assert "requested" in operator.inner_text("h1")
    permit_url = operator.url
    assert operator.locator(".banner-bypass").count() == 0

    officer = browser.new_context().new_page()
    browser_log_in(officer, served, "rso")
    officer.goto(permit_url)
    officer.fill("textarea[name=note]", "Sign on the housing")
    officer.click("button:has-text('Approve')")
    assert "active" in officer.inner_text("h1")

    operator.goto(f"{served}/instruments/")
    assert "Open-beam Ag" in operator.inner_text(".banner-bypass")
    assert "bypass active" in operator.inner_text("table")
    operator.goto(permit_url)
    operator.click("button:has-text('Close the permit')")
    assert operator.locator(".banner-bypass").count() == 0
    operator.goto(f"{served}/surveys/")
    assert "survey needed" in operator.inner_text("main")
