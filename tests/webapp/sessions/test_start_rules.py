"""At the instrument: Start only where a session may run, and what the lab's state says there."""
from __future__ import annotations

import html
from datetime import UTC, date, datetime

import pytest
import sqlalchemy as sa

from models.core.codes import Level, Location, PeriodKind, Quantity, Series
from models.core.settings import lab_settings
from models.doses.tables import DosimeterKind, Hand
from models.due.start_ops import start_notices
from models.exposure.tables import Investigation
from models.instruments.instrument_ops import set_out_of_service
from models.people.tables import Role
from models.sessions.tables import InstrumentSession
from webapp.extensions import db

START = {"kv": "40", "ma": "30", "pre_use_checks_confirmed": "y", "dosimeter_worn": "y"}


def _text(response) -> str:
    return html.unescape(response.get_data(as_text=True))


def _sessions() -> int:
    return db.session.scalar(sa.select(sa.func.count()).select_from(InstrumentSession))


@pytest.fixture
def bench(make_person, make_instrument, authorise, login):
    """An operator authorised on one instrument, and a named safety officer."""
    make_person("rso", roles=(Role.SAFETY_OFFICER,), name="Rae Safety")
    operator = make_person("op", name="Olga Operator")
    instrument = make_instrument(name="Cu powder", check_interval_days=30)
    authorise(operator, instrument)
    return {"operator": operator, "instrument": instrument, "client": login(operator)}


def test_no_start_on_an_out_of_service_instrument_but_the_reason_and_whom_to_ask(bench):
    instrument = bench["instrument"]
    set_out_of_service(db.session, instrument, "Shutter indicator stuck open")
    db.session.commit()
    home = _text(bench["client"].get("/"))
    assert f'/sessions/start/{instrument.id}"' not in home
    assert ("Cu powder is out of service: Shutter indicator stuck open. Ask the radiation safety "
            "officer (Rae Safety) before any use.") in home
    page = _text(bench["client"].get(f"/sessions/start/{instrument.id}"))
    assert 'name="kv"' not in page and "Shutter indicator stuck open. Ask the radiation" in page


def test_the_refusal_after_a_failed_check_names_the_item_as_failed(bench, make_person, record_a_check):
    instrument = bench["instrument"]
    record_a_check(instrument, make_person("checker"), fail=(0,),
                   performed_at=datetime(2026, 11, 14, 9, tzinfo=UTC))
    item = instrument.checklist_template.items[0].text.rstrip(".")
    home = _text(bench["client"].get("/"))
    assert (f"Cu powder is out of service: Safety-device check of 2026-11-14 failed on 1 item: "
            f"“{item}” did not hold (Does not work). Ask the radiation safety officer (Rae Safety) "
            "before any use.") in home
    assert ".." not in home.replace("...", "")


def test_a_late_check_is_shown_at_start_with_its_due_date(bench, record_a_check):
    # The check of 2020-01-01 with a 30-day interval fell due on 2020-01-31 (1 + 30 days), long ago.
    instrument = bench["instrument"]
    record_a_check(instrument, bench["operator"], performed_at=datetime(2020, 1, 1, 9, tzinfo=UTC))
    page = _text(bench["client"].get(f"/sessions/start/{instrument.id}"))
    assert "The safety-device check of Cu powder was due on 2020-01-31 and is" in page
    assert "days late. Do the check" in page
    # Default: warn only, the session may start.
    assert bench["client"].post(f"/sessions/start/{instrument.id}", data=START).status_code == 302
    assert _sessions() == 1


def test_a_late_check_refuses_the_session_where_the_lab_says_so(bench, record_a_check, api_token):
    instrument = bench["instrument"]
    record_a_check(instrument, bench["operator"], performed_at=datetime(2020, 1, 1, 9, tzinfo=UTC))
    lab_settings(db.session).late_check_policy = "refuse"
    db.session.commit()
    page = _text(bench["client"].post(f"/sessions/start/{instrument.id}", data=START))
    assert "The lab's rules refuse sessions until a check passes." in page
    headers = {"Authorization": f"Bearer {api_token(instrument)}"}
    refused = bench["client"].post("/api/v1/sessions", headers=headers, json={
        "operator": "op", "kv": 40, "ma": 30, "pre_use_checks_confirmed": True})
    assert refused.status_code == 422
    assert "refuse sessions until a check passes" in refused.get_json()["errors"]["instrument"]
    assert _sessions() == 0


def test_late_check_notice_counts_days_from_the_last_pass(bench, record_a_check):
    # Passed 2026-10-01 + 30 days = due 2026-10-31; on 2026-11-17 that is 17 days late.
    instrument = bench["instrument"]
    record_a_check(instrument, bench["operator"], performed_at=datetime(2026, 10, 1, 9, tzinfo=UTC))
    notices = start_notices(db.session, instrument, bench["operator"],
                            datetime(2026, 11, 17, 10, tzinfo=UTC))
    assert [n.message for n in notices] == [
        "The safety-device check of Cu powder was due on 2026-10-31 and is 17 days late. Do the "
        "check, or ask whoever does it, before relying on the safety devices."]
    # On the due day itself the check is not late yet.
    assert start_notices(db.session, instrument, bench["operator"],
                         datetime(2026, 10, 31, 10, tzinfo=UTC)) == []


def _open_investigation(person) -> None:
    db.session.add(Investigation(
        person_id=person.id, series=Series.EFFECTIVE, quantity=Quantity.HP10,
        location=Location.WHOLE_BODY, period=PeriodKind.QUARTER, period_start=date(2026, 10, 1),
        level=Level.LEVEL_1, dose_msv=1.6))
    db.session.commit()


def test_an_open_investigation_sends_the_person_to_the_safety_officer(bench, record_a_check):
    record_a_check(bench["instrument"], bench["operator"])
    _open_investigation(bench["operator"])
    url = f"/sessions/start/{bench['instrument'].id}"
    page = _text(bench["client"].get(url))
    assert ("Your dose reached an investigation level and the review is still open: see the "
            "radiation safety officer (Rae Safety) before further work.") in page
    assert "1.6" not in page  # the notice names no figure
    assert bench["client"].post(url, data=START).status_code == 302
    # Where the lab requires the safety officer's clearance, the session is refused.
    db.session.execute(sa.delete(InstrumentSession))
    lab_settings(db.session).investigation_policy = "clearance"
    db.session.commit()
    page = _text(bench["client"].post(url, data=START))
    assert "refuse sessions until the safety officer signs the review off" in page
    assert _sessions() == 0


def test_several_dosimeters_on_one_session_through_form_and_api(
        bench, make_dosimeter, api_token, record_a_check):
    operator, instrument = bench["operator"], bench["instrument"]
    record_a_check(instrument, operator)
    body = make_dosimeter(operator, serial="W-1")
    left = make_dosimeter(operator, serial="R-L", kind=DosimeterKind.RING, hand=Hand.LEFT)
    make_dosimeter(operator, serial="R-R", kind=DosimeterKind.RING, hand=Hand.RIGHT)
    response = bench["client"].post(f"/sessions/start/{instrument.id}", data={
        **START, "dosimeter_ids": [str(body.id), str(left.id)]})
    assert response.status_code == 302
    entry = db.session.scalar(sa.select(InstrumentSession))
    assert [d.serial for d in entry.dosimeters] == ["R-L", "W-1"]
    page = _text(bench["client"].get(f"/sessions/{entry.id}"))
    assert "worn: R-L (ring, left hand), W-1 (whole body)" in page
    bench["client"].post(f"/sessions/{entry.id}/end", data={})
    headers = {"Authorization": f"Bearer {api_token(instrument)}"}
    made = bench["client"].post("/api/v1/sessions", headers=headers, json={
        "operator": "op", "kv": 40, "ma": 30, "pre_use_checks_confirmed": True,
        "dosimeter_worn": True, "dosimeters": ["W-1", "R-R"]})
    assert made.status_code == 201, made.get_json()
    assert made.get_json()["dosimeters"] == ["R-R", "W-1"]
    bad = bench["client"].post("/api/v1/sessions", headers=headers, json={
        "operator": "op", "kv": 40, "ma": 30, "pre_use_checks_confirmed": True,
        "dosimeter_worn": True, "dosimeters": "W-1"})
    assert bad.status_code == 422 and "dosimeters" in bad.get_json()["errors"]


def test_someone_elses_dosimeter_is_refused(bench, make_person, make_dosimeter, record_a_check):
    record_a_check(bench["instrument"], bench["operator"])
    other = make_dosimeter(make_person("other"), serial="X-9")
    page = _text(bench["client"].post(f"/sessions/start/{bench['instrument'].id}",
                                      data={**START, "dosimeter_ids": [str(other.id)]}))
    assert "Choose only your own dosimeters." in page
    assert _sessions() == 0


def test_worn_starts_unticked_without_a_dosimeter_to_preselect(bench):
    page = _text(bench["client"].get(f"/sessions/start/{bench['instrument'].id}"))
    assert '<input id="dosimeter_worn" name="dosimeter_worn" type="checkbox" value="y">' in page


def test_alignment_caution_waits_for_alignment_or_a_permit(bench, record_a_check):
    record_a_check(bench["instrument"], bench["operator"])
    page = _text(bench["client"].get(f"/sessions/start/{bench['instrument'].id}"))
    # One block, hidden by the style sheet until alignment is ticked (the browser test shows it).
    assert page.count('class="strong-caution') == 1
    assert "start-cautions only-with-alignment" in page
