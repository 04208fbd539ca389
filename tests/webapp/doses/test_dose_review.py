"""Entering or importing dose records checks the levels at once."""
from datetime import date

import pytest
import sqlalchemy as sa

from models.exposure.tables import Investigation
from models.people.tables import Role


@pytest.fixture
def app_config(mail_app_config):
    return mail_app_config


def _quarter_start(day: date) -> date:
    return date(day.year, (day.month - 1) // 3 * 3 + 1, 1)


def test_entering_a_dose_over_level_one_raises_an_investigation(
        make_person, login, use_limit_set, session, smtp_server, today):
    _port, mailbox = smtp_server
    use_limit_set("icrp103")
    rso = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    worker = make_person("worker")
    start = _quarter_start(today)
    response = login(rso).post("/doses/new", data={
        "person": worker.id, "wear_start": start.isoformat(), "wear_end": today.isoformat(),
        "quantity": "Hp(10)", "location": "whole_body", "value": "1.5", "unit": "mSv",
        "result": "measured", "source": "dosimetry_report"})
    assert response.status_code == 302, response.data.decode()[:2000]
    # common practice: 1.25 mSv Hp(10) in a quarter is level I (REFERENCE.md, investigation levels)
    raised = session.scalars(sa.select(Investigation)).all()
    # (the lens reads the same Hp(10) record, no Hp(0.07) being reported, and is raised on its own)
    assert [(i.person_id, i.level, i.period) for i in raised
            if i.period == "quarter" and i.series == "effective"] == [(worker.id, "level_1", "quarter")]
    recipients = sorted(m["To"] for m in mailbox.messages)
    assert "worker@example.org" in recipients and "rso@example.org" in recipients
