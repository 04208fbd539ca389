"""Survey meters, surveys and bypass permits through the browser's forms."""
import json
import re
from datetime import UTC, date, datetime, timedelta

import pytest
import sqlalchemy as sa

from models.audit.tables import AuditEvent
from models.people.tables import Role
from models.surveys.permit_ops import PermitRequest, decide, request_permit
from models.surveys.tables import BypassPermit, PermitStatus, Survey, SurveyMeter, SurveyTask
from tests.conftest import LAB_NOW, LAB_TODAY


@pytest.fixture
def app_config(mail_app_config):
    return mail_app_config


def _errors(response) -> list[str]:
    return re.findall(r'<span class="error" role="alert">([^<]*)</span>', response.data.decode())


def _count(session, model):
    return session.scalar(sa.select(sa.func.count()).select_from(model))


def _local(dt: datetime) -> str:
    """A datetime as a datetime-local input sends it (the test lab is on UTC)."""
    return dt.astimezone(UTC).strftime("%Y-%m-%dT%H:%M")


def _survey_form(instrument, meter, points, unit="uSv/h", **extra):
    data = {"instrument_id": instrument.id, "performed_at": _local(LAB_NOW - timedelta(hours=1)),
            "trigger": "periodic", "kv": "40", "ma": "30", "meter_id": meter.id, "unit": unit,
            "notes": "", **extra}
    for i, (where, reading, level) in enumerate(points):
        data.update({f"points-{i}-location": where, f"points-{i}-reading": reading,
                     f"points-{i}-background": "0.1", f"points-{i}-distance_cm": "5",
                     f"points-{i}-level": level})
    return data


@pytest.fixture
def rso(make_person):
    return make_person("rso", roles=(Role.SAFETY_OFFICER,), email="rso@example.org")


@pytest.fixture
def operator(make_person):
    return make_person("op", roles=(Role.OPERATOR,), email="op@example.org")


def test_safety_officer_registers_and_recalibrates_a_meter(rso, login, session):
    client = login(rso)
    response = client.post("/meters/new", data={
        "serial": "GM-7", "model": "Pancake GM", "detector_type": "GM",
        "calibrated_on": str(LAB_TODAY - timedelta(days=400)),
        "calibration_interval_months": "12", "correction_factor": "1.3"})
    assert response.status_code == 302
    meter = session.scalar(sa.select(SurveyMeter))
    assert "out of calibration" in client.get("/meters/").data.decode()
    response = client.post(f"/meters/{meter.id}/calibration", data={
        "calibrated_on": str(LAB_TODAY), "calibration_interval_months": "12", "note": "Cert 42"})
    assert response.status_code == 302
    session.refresh(meter)
    assert meter.calibrated_on == LAB_TODAY
    event = session.scalar(sa.select(AuditEvent).where(AuditEvent.entity == "survey_meter",
                                                       AuditEvent.action == "update"))
    assert event.reason == "Cert 42" and "calibrated_on" in event.before


def test_operator_cannot_register_meters(operator, login):
    assert login(operator).post("/meters/new", data={"serial": "X"}).status_code == 403


def test_survey_with_a_meter_out_of_calibration_is_refused(
        rso, login, session, make_instrument, make_meter):
    instrument = make_instrument()
    meter = make_meter(calibrated_on=date(2020, 1, 15))
    client = login(rso)
    client.get("/surveys/new")  # the lab settings row is made on first use; not counted below
    events = _count(session, AuditEvent)
    response = client.post("/surveys/new", data=_survey_form(instrument, meter, [("Door", "0.5", "surface")]))
    assert response.status_code == 200
    [message] = _errors(response)
    # Calibrated 2020-01-15 for 12 months: out from the anniversary 2021-01-15, so the message
    # names 2021-01-14 as the last valid day.
    assert "out of calibration" in message and "valid until 2021-01-14 (last valid day)" in message
    assert _count(session, Survey) == 0 and _count(session, AuditEvent) == events


def test_survey_over_the_action_level_fails_and_tells_the_safety_officer(
        rso, operator, login, session, make_instrument, make_meter, authorise, smtp_server):
    instrument, meter = make_instrument(), make_meter()
    authorise(operator, instrument)
    client = login(operator)
    response = client.post("/surveys/new", data=_survey_form(
        instrument, meter, [("Door seal", "0.4", "surface"), ("Viewing window", "3.1", "surface")]))
    assert response.status_code == 302
    survey = session.scalar(sa.select(Survey))
    assert not survey.passed
    session.refresh(instrument)
    assert not instrument.in_service
    page = client.get(response.headers["Location"]).data.decode()
    assert "Survey failed: do not use this instrument." in page
    _, mailbox = smtp_server
    [message] = mailbox.messages
    assert message["To"] == "rso@example.org" and "out of service" in message["Subject"]


def test_mrem_entry_is_stored_in_usv_per_hour(rso, login, session, make_instrument, make_meter):
    instrument, meter = make_instrument(), make_meter()
    response = login(rso).post("/surveys/new", data=_survey_form(
        instrument, meter, [("Housing", "1.5", "housing")], unit="mrem/h"))
    assert response.status_code == 302
    point = session.scalar(sa.select(Survey)).points[0]
    # 1 rem = 0.01 Sv (10 CFR 20.1004): 1.5 mrem/h = 15 uSv/h, background 0.1 mrem/h = 1 uSv/h.
    assert (point.reading_usv_h, point.net_usv_h, point.action_level_usv_h) == \
        pytest.approx((15.0, 14.0, 25.0))


def test_survey_form_shows_us_sources_to_a_lab_under_us_rules(rso, login, make_instrument, make_meter,
                                                               use_limit_set):
    make_instrument(), make_meter()
    use_limit_set("cfr10_20")
    page = login(rso).get("/surveys/new").data.decode()
    assert "ANSI N43.2 as quoted in DOE-HDBK-1109-97" in page
    assert "25 Pa. Code 227a.13(b)" in page
    # mR/h: 8.764 uGy per mR x 1.67 Sv/Gy (ICRU 57 Table A.21, from memory) = 14.6 at 50 kV.
    assert "10 CFR 20.1004" in page and "ICRU Report 57" in page and "14.6 at 50 kV" in page


def test_survey_form_tells_a_euratom_lab_its_local_rules_set_the_levels(rso, login, make_instrument,
                                                                        make_meter, use_limit_set):
    make_instrument(), make_meter()
    use_limit_set("euratom2013")
    page = login(rso).get("/surveys/new").data.decode()
    assert "set by your local rules" in page and "2013/59/Euratom" in page
    assert "227a" not in page and "0400-20-06" not in page


def test_mr_entry_keeps_and_shows_the_factor_it_was_stored_at(rso, login, session, make_instrument,
                                                              make_meter):
    instrument, meter = make_instrument(), make_meter()
    client = login(rso)
    response = client.post("/surveys/new", data=_survey_form(
        instrument, meter, [("Housing", "1.5", "housing")], unit="mR/h"))
    assert response.status_code == 302
    survey = session.scalar(sa.select(Survey))
    # At 40 kV: 8.764 uGy per mR (2.58e-4 C/kg x 33.97 J/C) x 1.47 Sv/Gy, the largest H*(10)/Ka up to
    # 40 keV (ICRU 57 Table A.21, from memory) = 12.88 uSv/h per mR/h; 1.5 mR/h = 19.3 uSv/h.
    assert survey.points[0].reading_usv_h == pytest.approx(19.33, rel=1e-3)
    page = client.get(f"/surveys/{survey.id}").data.decode()
    assert "mR/h × 12.88" in page and "1.47 Sv/Gy" in page and "ICRU Report 57" in page


def test_bad_point_is_explained_beside_its_cell(rso, login, session, make_instrument, make_meter):
    instrument, meter = make_instrument(), make_meter()
    data = _survey_form(instrument, meter, [("", "2", "surface")], kv="99")
    response = login(rso).post("/surveys/new", data=data)
    errors = _errors(response)
    assert "Say where this reading was taken." in errors
    assert "Tube voltage 99 kV is above this instrument&#39;s rating of 60 kV." in errors
    assert _count(session, Survey) == 0


def test_unauthorised_operator_cannot_survey(operator, login, session, make_instrument, make_meter):
    instrument, meter = make_instrument(), make_meter()
    response = login(operator).post("/surveys/new", data=_survey_form(
        instrument, meter, [("Door", "0.2", "surface")]))
    assert any("no current authorisation" in e for e in _errors(response))
    assert _count(session, Survey) == 0


def _permit_form(instrument, ring="y"):
    now = LAB_NOW
    data = {"instrument_id": instrument.id, "devices": "Door interlock", "reason": "Beam alignment",
            "window_start": _local(now - timedelta(minutes=5)), "window_end": _local(now + timedelta(hours=2))}
    if ring:
        data["ring_dosimetry_confirmed"] = ring
    return data


def test_operator_asks_and_only_the_safety_officer_decides(
        rso, operator, login, session, make_instrument, authorise, app):
    instrument = make_instrument()
    authorise(operator, instrument)
    client = login(operator)
    refused = client.post("/permits/new", data=_permit_form(instrument, ring=None))
    assert any("R9-7-806(F)" in e for e in _errors(refused))
    assert client.post("/permits/new", data=_permit_form(instrument)).status_code == 302
    permit = session.scalar(sa.select(BypassPermit))
    assert client.post(f"/permits/{permit.id}/approve", data={"note": ""}).status_code == 403
    assert client.post(f"/permits/{permit.id}/refuse", data={"note": "no"}).status_code == 403
    client.post("/logout")
    client = login(rso)
    assert client.post(f"/permits/{permit.id}/refuse", data={"note": ""}).status_code == 200
    assert client.post(f"/permits/{permit.id}/approve", data={"note": "Sign posted"}).status_code == 302
    session.refresh(permit)
    assert permit.status is PermitStatus.APPROVED and permit.decided_by_id == rso.id


def _approved_permit(session, instrument, requester, officer, start, end):
    permit = request_permit(session, PermitRequest(
        instrument=instrument, requested_by=requester, devices="Shutter interlock",
        reason="Alignment", window_start=start, window_end=end, ring_dosimetry_confirmed=True),
        now=start)
    decide(session, permit, officer, True, "", now=start)
    session.commit()
    return permit


@pytest.mark.parametrize("path", ["/", "/instruments/", "/surveys/", "/permits/", "/meters/"])
def test_active_bypass_banner_shows_on_every_page(rso, operator, login, session, make_instrument, path):
    instrument = make_instrument(name="Open beam Mo")
    now = LAB_NOW
    _approved_permit(session, instrument, operator, rso, now - timedelta(hours=1), now + timedelta(hours=1))
    page = login(operator).get(path).data.decode()
    banner = re.search(r'<div class="banner-bypass".*?</div>', page, re.S)
    assert banner and "Open beam Mo" in banner.group(0)


def test_instrument_list_and_page_mark_the_bypass(rso, operator, login, session, make_instrument):
    instrument = make_instrument()
    now = LAB_NOW
    _approved_permit(session, instrument, operator, rso, now - timedelta(hours=1), now + timedelta(hours=1))
    client = login(operator)
    assert "bypass active" in client.get("/instruments/").data.decode()
    assert "Bypass active." in client.get(f"/instruments/{instrument.id}").data.decode()


def test_no_banner_without_an_active_permit(rso, operator, login, session, make_instrument):
    now = LAB_NOW
    _approved_permit(session, make_instrument(), operator, rso, now - timedelta(hours=3), now - timedelta(hours=1))
    assert 'class="banner-bypass"' not in login(operator).get("/").data.decode()


def test_closing_a_permit_raises_a_survey_task(rso, operator, login, session, make_instrument, make_person):
    instrument = make_instrument()
    now = LAB_NOW
    permit = _approved_permit(session, instrument, operator, rso, now - timedelta(hours=1), now + timedelta(hours=1))
    stranger = login(make_person(roles=(Role.OPERATOR,)))
    assert stranger.post(f"/permits/{permit.id}/close").status_code == 403
    stranger.post("/logout")
    assert login(operator).post(f"/permits/{permit.id}/close").status_code == 302
    task = session.scalar(sa.select(SurveyTask))
    assert task.instrument_id == instrument.id and task.bypass_permit_id == permit.id
    assert "survey needed" in login(rso).get(f"/instruments/{instrument.id}").data.decode()


def test_expired_unclosed_permit_is_on_the_attention_list(rso, operator, login, session, make_instrument):
    now = LAB_NOW
    permit = _approved_permit(session, make_instrument(name="SAXS"), operator, rso,
                              now - timedelta(hours=5), now - timedelta(hours=1))
    page = login(rso).get("/").data.decode()
    attention = page[page.index('id="attention"'):]
    assert "bypass not closed" in attention and f"/permits/{permit.id}" in attention


def test_meter_out_of_calibration_is_on_the_attention_list(rso, login, make_meter):
    make_meter(serial="OLD-1", calibrated_on=date(2020, 1, 1))
    page = login(rso).get("/").data.decode()
    assert "meter out of calibration" in page and "OLD-1" in page


def test_status_command_lists_what_needs_doing(app, rso, operator, session, make_instrument, make_meter):
    runner = app.test_cli_runner()
    assert "Nothing needs doing." in runner.invoke(args=["surveys", "status"]).output
    make_meter(serial="OLD-2", calibrated_on=date(2020, 1, 1))
    now = LAB_NOW
    _approved_permit(session, make_instrument(name="XRF"), operator, rso,
                     now - timedelta(hours=5), now - timedelta(hours=1))
    result = runner.invoke(args=["surveys", "status", "--json"])
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert data["meters"][0]["serial"] == "OLD-2" and data["meters"][0]["usable"] is False
    assert data["permits"][0]["state"] == "not_closed" and data["permits"][0]["instrument"] == "XRF"


def test_survey_page_cites_level_sources_of_the_labs_own_family(rso, login, session, make_instrument,
                                                                make_meter, use_limit_set):
    instrument, meter = make_instrument(), make_meter()
    client = login(rso)
    assert client.post("/surveys/new", data=_survey_form(
        instrument, meter, [("Door", "0.5", "surface")])).status_code == 302
    survey_id = session.scalar(sa.select(Survey.id))
    use_limit_set("euratom2013")
    page = client.get(f"/surveys/{survey_id}").data.decode()
    assert "set by your local rules" in page and "227a" not in page and "ANSI N43.2" not in page
    use_limit_set("cfr10_20")
    page = client.get(f"/surveys/{survey_id}").data.decode()
    # 25 Pa. Code 227a.13(b) and ANSI N43.2 (as quoted in DOE-HDBK-1109-97) for a lab under US rules.
    assert "25 Pa. Code 227a.13(b)" in page and "ANSI N43.2" in page


def test_instrument_page_shows_its_levels_with_the_labs_sources(rso, login, make_instrument, use_limit_set):
    instrument = make_instrument()
    use_limit_set("irr17")
    page = login(rso).get(f"/instruments/{instrument.id}").data.decode()
    # The default levels, 2.5 and 25 uSv/h at 5 cm; under UK IRR17 the logbook holds no source for them.
    assert "Outer surface 2.5 (set by your local rules" in page and "Tube housing 25 (set by your" in page
    assert "227a" not in page.split("Action levels")[1].split("</p>")[0]
def test_a_survey_asked_for_twice_for_one_instrument_is_one_attention_line(app, make_instrument):
    from models.surveys.survey_ops import raise_survey_task
    from models.surveys.tables import SurveyTrigger
    from webapp.extensions import db
    from webapp.slots import attention

    instrument = make_instrument(name="P9")
    raise_survey_task(db.session, instrument, SurveyTrigger.DOSE_RISE, "Dose rise: level I.")
    raise_survey_task(db.session, instrument, SurveyTrigger.DOSE_RISE, "Dose rise: level II.")
    db.session.commit()
    with app.test_request_context():
        lines = [line for line in attention.collect() if line.label == "survey needed"]
    assert len(lines) == 1
    assert lines[0].text == "Survey of P9 needed: Dose rise: level I. Dose rise: level II."
