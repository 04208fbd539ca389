"""Every main page of the demo lab fits a 1366 px screen and a 390 px phone without sideways scroll.

Screenshots go to $SCREENSHOT_DIR when set (to look at them), else to the test's temporary folder.
"""
from __future__ import annotations

import os
from datetime import date, timedelta
from pathlib import Path

import pytest
import sqlalchemy as sa

from models.exposure.investigation_ops import review_after_dose_change
from models.instruments.tables import Instrument
from models.people.tables import Person
from tests.conftest import LAB_NOW, PASSWORD, PASSWORD_HASH
from webapp.demo.lab import load_demo_lab
from webapp.extensions import db

pytestmark = pytest.mark.browser

# A fixed last day for the demo's records, so the pages do not depend on the machine's clock.
DEMO_TODAY = date(2026, 11, 20)
VIEWPORTS = {"desktop": (1366, 768), "phone": (390, 844)}
OVERFLOW = "document.documentElement.scrollWidth <= window.innerWidth"
# The controls a person must reach without scrolling sideways: Start buttons, the attention
# list's links, the check form's comment boxes.
OFF_SCREEN = """[...document.querySelectorAll(
    'table.start-list a.button, table.attention a, table.checklist textarea')]
  .filter(e => e.getBoundingClientRect().right > window.innerWidth + 1)
  .map(e => e.outerHTML.slice(0, 60))"""


@pytest.fixture
def demo_served(live_server):
    url, app = live_server
    with app.app_context():
        load_demo_lab(db.session, DEMO_TODAY, PASSWORD_HASH)
        db.session.commit()
        # As `flask demo load` does: doses over a level raise investigations.
        review_after_dose_change(db.session, DEMO_TODAY)
        db.session.commit()
        ids = {"p1": db.session.scalar(sa.select(Instrument.id).where(Instrument.name.like("%P1 (Cu)"))),
               "lbrandt": db.session.scalar(sa.select(Person.id).where(Person.login == "lbrandt"))}
    return url, ids


def _shots(tmp_path: Path) -> Path:
    folder = Path(os.environ.get("SCREENSHOT_DIR") or tmp_path)
    folder.mkdir(parents=True, exist_ok=True)
    return folder


def _log_in(page, url: str, login: str) -> None:
    page.goto(f"{url}/login")
    page.fill("input[name=login]", login)
    page.fill("input[name=password]", PASSWORD)
    page.click("button[type=submit]")
    page.wait_for_url(f"{url}/")


def test_main_pages_fit_desktop_and_phone(browser, demo_served, tmp_path):
    url, ids = demo_served
    pages = {  # login: the pages that person opens
        "mwinter": {"home-admin": "/"},
        "okessler": {"home-officer-attention": "/",
                     "exposure-of-lbrandt": f"/exposure/person/{ids['lbrandt']}",
                     "check-form": f"/instruments/{ids['p1']}/checks/new"},
        "lbrandt": {"home-operator": "/", "start-form": f"/sessions/start/{ids['p1']}",
                    "exposure-mine": "/exposure/me"},
        "sgray": {"home-supervised-public": "/"},
    }
    folder, overflowing = _shots(tmp_path), []
    for size, (width, height) in VIEWPORTS.items():
        context = browser.new_context(viewport={"width": width, "height": height})
        page = context.new_page()
        for login, wanted in pages.items():
            _log_in(page, url, login)
            for name, path in wanted.items():
                page.goto(url + path)
                if name == "start-form":
                    # Lena Brandt is above an investigation level in the demo: told at Start.
                    assert "see the radiation safety officer" in page.inner_text(".start-cautions")
                page.screenshot(path=str(folder / f"{name}-{size}.png"), full_page=True)
                if not page.evaluate(OVERFLOW):
                    overflowing.append(f"{name} at {width} px: "
                                       f"{page.evaluate('document.documentElement.scrollWidth')}")
                overflowing += [f"{name} at {width} px: {what} off-screen"
                                for what in page.evaluate(OFF_SCREEN)]
            page.click("text=Log out")
        context.close()
    assert overflowing == []


def test_the_officers_navigation_fits_one_row_at_1366(browser, demo_served):
    url, _ids = demo_served
    context = browser.new_context(viewport={"width": 1366, "height": 768})
    page = context.new_page()
    _log_in(page, url, "okessler")
    # One row: every top-level entry sits on the same line as the first.
    tops = page.eval_on_selector_all("header.top nav > *",
                                     "els => els.map(e => e.getBoundingClientRect().top)")
    assert len(tops) >= 5 and max(tops) - min(tops) < 5
    header = page.eval_on_selector("header.top", "e => e.getBoundingClientRect().height")
    assert header < 60
    # The grouped records open without script and lead to their pages.
    page.click("details.nav-group summary")
    page.click("details.nav-group >> text=Investigations")
    assert "/exposure/investigations" in page.url
    context.close()


@pytest.fixture
def bench_served(live_server):
    """One operator authorised on one commissioned instrument that passed its check."""
    from datetime import UTC, datetime

    from models.checks.check_ops import Answer, record_check
    from models.checks.checklist_ops import active_items, checklist_for
    from models.checks.tables import ItemResult
    from models.instruments.instrument_ops import mark_commissioned, save_instrument
    from models.instruments.tables import Authorisation, AuthorisationLevel
    from models.people.person_ops import add_person
    from models.people.tables import Role

    url, app = live_server
    with app.app_context():
        operator = add_person(db.session, login="op", name="Olga Operator", roles={Role.OPERATOR},
                              password_hash=PASSWORD_HASH)
        instrument = save_instrument(db.session, {
            "name": "Cu powder", "kind": "powder_xrd", "room": "B1", "registration_number": "X-1",
            "anode": "Cu", "max_kv": 60.0, "max_ma": 60.0, "max_power_w": 2200.0,
            "enclosure": "enclosed", "check_interval_days": 366, "survey_interval_days": 730,
            "surface_action_level_usv_h": 2.5, "housing_action_level_usv_h": 25.0})
        mark_commissioned(db.session, instrument, datetime(2020, 1, 1, tzinfo=UTC))
        # Checked the day before the tests' lab clock: not late, so no notice joins the caution block.
        checked = LAB_NOW - timedelta(days=1)
        answers = {i.id: Answer(ItemResult.PASS) for i in active_items(checklist_for(db.session, instrument))}
        record_check(db.session, instrument, operator, checked, answers, None, None, checked)
        db.session.add(Authorisation(person_id=operator.id, instrument_id=instrument.id,
                                     level=AuthorisationLevel.INDEPENDENT,
                                     trained_on=date(2020, 1, 1), refresher_due=date(2199, 1, 1)))
        db.session.commit()
        return url, instrument.id


def test_the_alignment_caution_shows_only_once_alignment_is_ticked(page, bench_served):
    url, instrument_id = bench_served
    _log_in(page, url, "op")
    page.goto(f"{url}/sessions/start/{instrument_id}")
    caution = page.locator(".start-cautions")
    assert caution.count() == 1 and not caution.is_visible()
    page.check("#alignment")
    assert caution.is_visible() and page.locator("#caution_acknowledged").is_visible()
    assert "primary beam can injure a hand" in caution.inner_text()
    page.uncheck("#alignment")
    assert not caution.is_visible()
