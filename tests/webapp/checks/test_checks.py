"""Recording checks through the pages: errors beside items, the failure path, controls, checklists."""
from datetime import timedelta

import pytest

from models.checks.checklist_ops import active_items, checklist_for
from models.checks.tables import SafetyCheck
from models.people.tables import Role
from tests.conftest import LAB_NOW
from webapp.formatting import local


@pytest.fixture
def app_config(mail_app_config):
    return mail_app_config


@pytest.fixture
def lab(make_person, make_instrument, authorise):
    """A safety officer, an authorised operator and one instrument."""
    rso = make_person("rso", roles=(Role.SAFETY_OFFICER,), email="rso@example.org")
    operator = make_person("op")
    instrument = make_instrument(name="XRD-1")
    authorise(operator, instrument)
    return rso, operator, instrument


def form_data(session, instrument, fail_first=False, comment=""):
    """A filled-in check form: everything passes unless told."""
    items = active_items(checklist_for(session, instrument))
    session.commit()
    data = {"performed_at": local(LAB_NOW - timedelta(minutes=5), "%Y-%m-%dT%H:%M"),
            "meter_id": "", "notes": ""}
    for n, item in enumerate(items):
        data[f"result_{item.id}"] = "fail" if fail_first and n == 0 else "pass"
        data[f"comment_{item.id}"] = comment if n == 0 else ""
    return data


def test_a_fail_without_comment_is_shown_beside_the_item_and_nothing_is_written(
        session, lab, login):
    rso, operator, instrument = lab
    client = login(operator)
    response = client.post(f"/instruments/{instrument.id}/checks/new",
                           data=form_data(session, instrument, fail_first=True))
    assert response.status_code == 200
    assert "Say what failed: a fail needs a comment." in response.text
    assert session.query(SafetyCheck).count() == 0


def test_a_failed_check_takes_the_instrument_out_and_a_pass_brings_it_back(
        session, lab, login, smtp_server):
    _, mailbox = smtp_server
    rso, operator, instrument = lab
    client = login(operator)
    response = client.post(f"/instruments/{instrument.id}/checks/new",
                           data=form_data(session, instrument, True, "Door opens with beam on"))
    assert response.status_code == 302
    page = client.get(response.headers["Location"]).text
    assert "Do not use this instrument." in page
    assert "Tell the radiation safety" in page
    session.refresh(instrument)
    # The session operations are not on main yet: their refusal reads in_service.
    assert instrument.in_service is False
    assert "Door and panel interlocks" in instrument.out_of_service_reason
    assert [m["To"] for m in mailbox.messages] == ["rso@example.org"]
    assert "Door opens with beam on" in mailbox.messages[0].get_content()
    assert "out of service" in client.get(f"/instruments/{instrument.id}").text

    response = client.post(f"/instruments/{instrument.id}/checks/new",
                           data=form_data(session, instrument))
    assert response.status_code == 302
    session.refresh(instrument)
    assert instrument.in_service is True


def test_a_future_time_is_refused(session, lab, login):
    rso, operator, instrument = lab
    data = form_data(session, instrument)
    data["performed_at"] = local(LAB_NOW + timedelta(days=1), "%Y-%m-%dT%H:%M")
    response = login(operator).post(f"/instruments/{instrument.id}/checks/new", data=data)
    assert "The check time is in the future" in response.text


def test_an_operator_not_authorised_cannot_record(session, lab, make_person, login):
    _, _, instrument = lab
    response = login(make_person()).get(f"/instruments/{instrument.id}/checks/new")
    assert response.status_code == 403


def test_the_instrument_page_shows_next_check_and_history(session, lab, login, record_a_check):
    rso, operator, instrument = lab
    record_a_check(instrument, rso, performed_at=LAB_NOW - timedelta(days=40))
    page = login(operator).get(f"/instruments/{instrument.id}").text
    assert "Safety-device checks" in page
    assert "late, 10 days" in page
    assert "Record a check" in page


def test_temporary_controls_through_the_page(session, lab, login, record_a_check):
    rso, operator, instrument = lab
    record_a_check(instrument, rso, fail=(2,))
    client = login(rso)
    # The domain sees a form only once its fields pass, so each kind of error shows on its own round.
    bad = client.post(f"/instruments/{instrument.id}/controls/new",
                      data={"description": "", "expires_at": "2000-01-01T00:00"})
    assert "The expiry must be in the future." not in bad.text
    bad = client.post(f"/instruments/{instrument.id}/controls/new",
                      data={"description": "Two people present.", "expires_at": "2000-01-01T00:00"})
    assert "The expiry must be in the future." in bad.text
    expiry = local(LAB_NOW + timedelta(days=3), "%Y-%m-%dT%H:%M")
    response = client.post(f"/instruments/{instrument.id}/controls/new",
                           data={"description": "Two people present; shutter locked.",
                                 "expires_at": expiry})
    assert response.status_code == 302
    session.refresh(instrument)
    assert instrument.in_service is True
    assert "Under temporary controls." in client.get(f"/instruments/{instrument.id}").text


def test_expired_controls_put_the_instrument_out_on_the_next_request(
        session, lab, login, record_a_check, smtp_server):
    from models.checks.check_ops import record_control

    rso, operator, instrument = lab
    record_a_check(instrument, rso, fail=(2,))
    now = LAB_NOW
    control = record_control(session, instrument, rso, "Shutter locked.", now + timedelta(days=1), now)
    control.recorded_at = now - timedelta(days=3)
    control.expires_at = now - timedelta(days=1)
    session.commit()
    assert instrument.in_service is True
    page = login(operator).get(f"/instruments/{instrument.id}").text
    session.refresh(instrument)
    assert instrument.in_service is False
    assert "Temporary controls expired" in page
    assert any("temporary controls expired" in m["Subject"] for m in smtp_server[1].messages)


def test_the_safety_officer_edits_the_checklist(session, lab, login, record_a_check):
    rso, operator, instrument = lab
    client = login(rso)
    assert "Checklist for XRD-1" in client.get(f"/instruments/{instrument.id}/checklist").text
    assert client.post(f"/instruments/{instrument.id}/checklist/items",
                       data={"text": ""}).status_code == 400
    client.post(f"/instruments/{instrument.id}/checklist/items", data={"text": "Beam stop fitted"})
    template = checklist_for(session, instrument)
    session.refresh(template)
    new = template.items[-1]
    assert new.text == "Beam stop fitted"
    client.post(f"/checklist-items/{new.id}/move/up")
    client.post(f"/checklist-items/{new.id}/active/off", data={"reason": "No beam stop on this one"})
    session.refresh(new)
    assert new.active is False and new.position == len(template.items) - 2
    record_a_check(instrument, rso)
    used = template.items[0]
    response = client.post(f"/checklist-items/{used.id}/remove", follow_redirects=True)
    assert "deactivate it instead" in response.text
    client.post("/logout")
    assert login(operator).get(f"/instruments/{instrument.id}/checklist").status_code == 403


def test_forged_values_are_refused_without_an_error_page(session, lab, login):
    rso, operator, instrument = lab
    data = form_data(session, instrument)
    first = next(k for k in data if k.startswith("result_"))
    data["meter_id"] = "x1"
    client = login(operator)
    response = client.post(f"/instruments/{instrument.id}/checks/new", data=data)
    assert response.status_code == 200
    assert "Not a valid choice." in response.text
    data[first], data["meter_id"] = "maybe", ""
    response = client.post(f"/instruments/{instrument.id}/checks/new", data=data)
    assert response.status_code == 200
    assert "Choose pass, fail or not applicable for this item." in response.text
    assert session.query(SafetyCheck).count() == 0
