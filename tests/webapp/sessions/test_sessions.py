"""Starting and ending a session from home, writing one up, and the figures shown with it."""
from __future__ import annotations

import html
import re
from datetime import UTC, datetime, timedelta

import sqlalchemy as sa

from models.instruments import tube
from models.people.tables import Role
from models.sessions.tables import InstrumentSession
from models.surveys.tables import BypassPermit, PermitStatus
from tests.conftest import LAB_NOW, LAB_TODAY
from webapp.extensions import db

START = {"kv": "40", "ma": "40", "purpose": "quartz standard", "pre_use_checks_confirmed": "y",
         "dosimeter_worn": "y"}


def _text(response) -> str:
    return html.unescape(response.get_data(as_text=True))


def test_start_and_end_from_home_in_two_clicks_plus_one(make_person, make_instrument, authorise, login):
    operator = make_person("op")
    instrument = make_instrument(name="Cu powder", anode="Cu")
    authorise(operator, instrument)
    client = login(operator)
    home = _text(client.get("/"))
    # Click 1: the instrument's start link on the home page.
    start_url = f"/sessions/start/{instrument.id}"
    assert f'href="{start_url}"' in home
    assert client.get(start_url).status_code == 200
    # Click 2: the start button, with the fields filled in.
    response = client.post(start_url, data=START)
    assert response.status_code == 302 and response.location.endswith("/")
    home = _text(client.get("/"))
    assert "Open on" in home and "Cu powder" in home
    entry = db.session.scalar(sa.select(InstrumentSession))
    assert entry.is_open and entry.operator_id == operator.id
    # One click ends it; beam-on time left empty means the whole session.
    response = client.post(f"/sessions/{entry.id}/end", data={"beam_on_minutes": ""})
    assert response.status_code == 302
    db.session.expire_all()
    entry = db.session.get(InstrumentSession, entry.id)
    assert not entry.is_open
    assert entry.beam_on_minutes == (entry.ended_at - entry.started_at).total_seconds() / 60
    page = _text(client.get(response.location))
    assert f"{tube.power_w(40, 40):.0f} W" in page
    assert f"{tube.duane_hunt_min_wavelength_angstrom(40):.4f} Å" in page
    assert f"{tube.energy_kwh(40, 40, entry.beam_on_minutes):.3f} kWh" in page
    assert "excited" in page and "K-alpha1 1.5406 Å" in page


def test_written_up_session_shows_figures_of_models_tube(make_person, make_instrument, authorise, login):
    operator = make_person("op")
    instrument = make_instrument(name="Mo crystal", anode="Mo", max_kv=50, max_ma=1, max_power_w=50)
    authorise(operator, instrument, trained_on=LAB_TODAY - timedelta(days=10))
    client = login(operator)
    start = (LAB_NOW - timedelta(hours=3)).replace(second=0, microsecond=0)
    response = client.post("/sessions/log", data={
        **START, "kv": "15", "ma": "1", "instrument": str(instrument.id),
        "started_at": start.strftime("%Y-%m-%dT%H:%M"),
        "ended_at": (start + timedelta(hours=2)).strftime("%Y-%m-%dT%H:%M"), "beam_on_minutes": "90"})
    assert response.status_code == 302, _text(response)
    page = _text(client.get(response.location))
    assert f"{tube.energy_kwh(15, 1, 90):.3f} kWh" in page  # 15 W for 1.5 h = 0.0225 kWh
    assert f"{tube.duane_hunt_min_wavelength_angstrom(15):.4f} Å" in page
    # 15 kV is below the Mo K edge (19.9995 keV, Bearden & Burr): the note and the wavelengths show.
    assert tube.k_lines_note(15, "Mo") in page
    assert "not excited" in page and "K-alpha1 0.7093 Å" in page


def test_lists_per_instrument_and_person_filter_by_date_and_total_usage(
        make_person, make_instrument, make_session_entry, login):
    operator = make_person("op")
    instrument = make_instrument(name="Cu powder")
    day = datetime(2025, 3, 10, 9, tzinfo=UTC)
    make_session_entry(instrument, operator, started_at=day, ended_at=day + timedelta(hours=2),
                       beam_on_minutes=120, kv=40, ma=30)
    make_session_entry(instrument, operator, started_at=day + timedelta(days=40),
                       ended_at=day + timedelta(days=40, hours=1), beam_on_minutes=60)
    client = login(operator)
    page = _text(client.get(f"/sessions/?instrument={instrument.id}&from=2025-03-01&to=2025-03-31"))
    # 40 kV x 30 mA = 1,200 W for 120 min = 2.0 h of beam and 2.4 kWh.
    assert "<strong>1</strong> sessions" in page
    assert "beam 2.0 h; 2.40 kWh" in page
    page = _text(client.get(f"/sessions/?person={operator.id}"))
    assert page.count('href="/sessions/') >= 2 and "Choose a first and a last day" in page
    assert "Sessions on" not in page and "by Person op" in page
    page = _text(client.get(f"/instruments/{instrument.id}"))
    assert "Beam hours" in page and "All sessions on Cu powder" in page


def test_active_bypass_permit_flags_the_session_and_needs_the_caution(
        make_person, make_instrument, authorise, login):
    rso = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    operator = make_person("op")
    instrument = make_instrument(name="Open beam", max_kv=50, max_ma=40, max_power_w=2000)
    authorise(operator, instrument)
    now = LAB_NOW
    permit = BypassPermit(instrument_id=instrument.id, devices="door interlock", reason="alignment",
                          requested_by_id=operator.id, window_start=now - timedelta(hours=1),
                          window_end=now + timedelta(hours=2), status=PermitStatus.APPROVED,
                          decided_by_id=rso.id, ring_dosimetry_confirmed=True)
    db.session.add(permit)
    db.session.commit()
    client = login(operator)
    page = _text(client.get(f"/sessions/start/{instrument.id}"))
    assert "Bypass permit active." in page and "ring dosimetry" in page
    page = _text(client.post(f"/sessions/start/{instrument.id}", data=START))
    assert "Confirm that you have read the caution" in page
    assert db.session.scalar(sa.select(sa.func.count()).select_from(InstrumentSession)) == 0
    client.post(f"/sessions/start/{instrument.id}", data={**START, "caution_acknowledged": "y"})
    entry = db.session.scalar(sa.select(InstrumentSession))
    assert entry.bypass_permit_id == permit.id


def test_someone_else_cannot_end_my_session(make_person, make_instrument, make_session_entry, login):
    instrument = make_instrument()
    entry = make_session_entry(instrument, make_person("op"))
    client = login(make_person("nosy"))
    assert client.post(f"/sessions/{entry.id}/end", data={}).status_code == 403


def test_bad_numbers_are_explained_not_500(make_person, make_instrument, authorise, login):
    operator = make_person("op")
    instrument = make_instrument()
    authorise(operator, instrument)
    response = login(operator).post(f"/sessions/start/{instrument.id}", data={**START, "kv": "lots"})
    assert response.status_code == 200
    assert re.search(r"Enter a number\.|Not a valid float value\.", _text(response))


def test_the_start_form_chooses_my_whole_body_dosimeter(make_person, make_instrument, authorise,
                                                        login, make_dosimeter):
    from models.doses.tables import DosimeterKind, Hand

    operator = make_person("op")
    instrument = make_instrument()
    authorise(operator, instrument)
    make_dosimeter(operator, serial="R-1", kind=DosimeterKind.RING, hand=Hand.LEFT)
    body = make_dosimeter(operator, serial="W-1")
    page = _text(login(operator).get(f"/sessions/start/{instrument.id}"))
    assert f'<input checked id="dosimeter_ids-1" name="dosimeter_ids" type="checkbox" value="{body.id}">' in page
    assert "W-1 (whole body)" in page and "R-1 (ring, left hand)" in page
    # "I am wearing" follows the preselected dosimeter.
    assert '<input checked id="dosimeter_worn" name="dosimeter_worn" type="checkbox" value="y">' in page
