"""A real browser: the safety officer opens a person's exposure page and sees the table and chart."""
from datetime import date

import pytest

from models.doses.tables import DoseRecord
from models.people.person_ops import add_person
from models.people.tables import Role
from tests.conftest import PASSWORD_HASH, browser_log_in, put_in_force
from webapp.extensions import db

pytestmark = pytest.mark.browser


@pytest.fixture
def served(live_server):
    url, app = live_server
    with app.app_context():
        session = db.session
        put_in_force(session, "euratom2013")
        operator = add_person(session, login="op", name="Ada Operator", roles={Role.OPERATOR},
                              password_hash=PASSWORD_HASH)
        add_person(session, login="rso", name="Rita Safety", roles={Role.SAFETY_OFFICER},
                   password_hash=PASSWORD_HASH)
        session.flush()
        for month in range(1, 12):
            session.add(DoseRecord(person_id=operator.id, wear_start=date(2026, month, 1),
                                   wear_end=date(2026, month + 1, 1) - date.resolution,
                                   quantity="Hp(10)", location="whole_body",
                                   value_msv=0.1 * month, result="measured",
                                   source="dosimetry_report"))
        session.commit()
        return url, operator.id


def test_safety_officer_sees_table_and_chart(page, served, tmp_path):
    url, person_id = served
    browser_log_in(page, url, "rso")
    page.click("text=People's dose")
    page.click("text=Ada Operator")
    page.fill("input[name=on]", "2026-11-30")
    page.click("text=Show")
    page.wait_for_load_state("networkidle")
    assert "Dose of Ada Operator" in page.inner_text("h1")
    table = page.inner_text("table.expo-table")
    assert "Calendar year" in table and "6.600 mSv" in table  # 0.1 + 0.2 + ... + 1.1 mSv
    assert "33.0 %" in table  # of the 20 mSv limit of 2013/59/Euratom Art. 9(2)
    chart = page.locator("figure.expo-chart img")
    assert chart.evaluate("img => img.complete && img.naturalWidth > 0")
    page.screenshot(path=str(tmp_path / "exposure.png"), full_page=True)
