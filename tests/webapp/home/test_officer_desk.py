"""The safety officer's desk: permits waiting for approval lead their kind; one calibration date."""
from __future__ import annotations

import html
import re
from datetime import UTC, date, datetime

from models.people.tables import Role
from models.surveys.tables import BypassPermit, PermitStatus
from webapp.extensions import db


def _text(response) -> str:
    return html.unescape(response.get_data(as_text=True))


def test_a_permit_waiting_for_approval_leads_the_bypass_lines(make_person, make_instrument, login):
    rso = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    engineer = make_person("eng", name="Eli Engineer")
    instrument = make_instrument(name="Laue camera")
    # Fixed windows far from today: one approved and running until 2099, one waiting.
    db.session.add_all([
        BypassPermit(instrument_id=instrument.id, devices="door interlock", reason="alignment",
                     requested_by_id=engineer.id, window_start=datetime(2020, 1, 1, tzinfo=UTC),
                     window_end=datetime(2099, 1, 1, tzinfo=UTC), status=PermitStatus.APPROVED,
                     decided_by_id=rso.id, ring_dosimetry_confirmed=True),
        BypassPermit(instrument_id=instrument.id, devices="shutter interlock", reason="tube change",
                     requested_by_id=engineer.id, window_start=datetime(2099, 2, 1, 8, tzinfo=UTC),
                     window_end=datetime(2099, 2, 1, 10, tzinfo=UTC),
                     status=PermitStatus.REQUESTED, ring_dosimetry_confirmed=True)])
    db.session.commit()
    page = _text(login(rso).get("/"))
    waiting = page.index("Waiting for your approval: Eli Engineer asks to bypass shutter interlock "
                         "on Laue camera from 2099-02-01 08:00 to 2099-02-01 10:00.")
    active = page.index("Bypass active on Laue camera (door interlock)")
    assert waiting < active


def test_meter_calibration_shows_its_last_valid_day_everywhere(make_person, make_meter, login):
    rso = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    # Calibrated 2025-01-10 for 12 months: the anniversary 2026-01-10 is the first day out of
    # calibration, so 2026-01-09 is the last valid day (common practice: "valid for 12 months").
    meter = make_meter(serial="SM-7", calibrated_on=date(2025, 1, 10))
    client = login(rso)
    home, meters = _text(client.get("/")), _text(client.get("/meters/"))
    one, due = _text(client.get(f"/meters/{meter.id}")), _text(client.get("/due"))
    assert "Survey meter SM-7: calibration was valid until 2026-01-09 (last valid day)." in home
    assert "2026-01-09" in meters and "2026-01-10" not in meters
    assert "valid until 2026-01-09 (last valid day)" in one and "2026-01-10" not in one
    assert re.search(r"Meter SM-7</td><td>2026-01-09 <span class=\"muted\">\(last valid day\)", due)
    assert "2026-01-10" not in home
