"""Session rules at their edges, the figures taken from models.tube, and tube usage."""
from __future__ import annotations

from datetime import UTC, datetime, timedelta

import pytest

from models.core.errors import Invalid
from models.instruments import tube
from models.people.person_ops import whom_to_ask
from models.people.tables import Role
from models.sessions.session_ops import close_session, figures, instrument_usage, log_finished_session, open_session
from tests.conftest import LAB_NOW

T0 = datetime(2025, 3, 10, 9, 0, tzinfo=UTC)
NOW = T0 + timedelta(days=1)
GOOD = {"kv": 40.0, "ma": 40.0, "pre_use_checks_confirmed": True}


@pytest.fixture
def setup(make_person, make_instrument, authorise):
    operator = make_person("op")
    instrument = make_instrument(name="Cu powder")
    authorise(operator, instrument, trained_on=T0.date() - timedelta(days=100))
    return instrument, operator


def test_sessions_may_touch_but_not_overlap(session, setup):
    instrument, operator = setup
    log_finished_session(session, instrument, operator,
                         {**GOOD, "started_at": T0, "ended_at": T0 + timedelta(hours=1)}, now=NOW)
    # Back to back is fine: one ends as the next starts.
    log_finished_session(session, instrument, operator,
                         {**GOOD, "started_at": T0 + timedelta(hours=1), "ended_at": T0 + timedelta(hours=2)}, now=NOW)
    with pytest.raises(Invalid) as error:
        log_finished_session(session, instrument, operator,
                             {**GOOD, "started_at": T0 + timedelta(minutes=119),
                              "ended_at": T0 + timedelta(hours=3)}, now=NOW)
    assert "cannot overlap" in error.value.errors["started_at"]


def test_closing_defaults_beam_time_to_the_session_length(session, setup):
    instrument, operator = setup
    entry = open_session(session, instrument, operator, {**GOOD, "started_at": T0}, now=T0)
    close_session(session, entry, ended_at=T0 + timedelta(minutes=90), now=NOW)
    assert entry.beam_on_minutes == 90
    with pytest.raises(Invalid):
        close_session(session, entry, now=NOW)


def test_figures_are_those_of_models_tube(session, setup):
    instrument, operator = setup
    entry = log_finished_session(session, instrument, operator,
                                 {**GOOD, "kv": 8.0, "started_at": T0, "ended_at": T0 + timedelta(hours=2),
                                  "beam_on_minutes": 30}, now=NOW)
    f = figures(entry)
    assert f.power_w == tube.power_w(8, 40)
    assert f.energy_kwh == tube.energy_kwh(8, 40, 30)
    assert f.lambda_min_angstrom == tube.duane_hunt_min_wavelength_angstrom(8)
    # 8 kV is below the Cu K edge, 8.9789 keV (Bearden & Burr): no K lines, and the note says so.
    assert f.k_lines_excited is False and f.k_note.startswith(tube.k_lines_note(8, "Cu"))
    assert "K-alpha1 1.5406 Å" in f.k_note  # ITC Vol. C Table 4.2.2.6, as usually quoted


def test_instrument_usage_over_a_period(session, setup):
    instrument, operator = setup
    for day, minutes in ((0, 60), (1, 30), (40, 120)):
        start = T0 - timedelta(days=60) + timedelta(days=day)
        log_finished_session(session, instrument, operator,
                             {**GOOD, "started_at": start, "ended_at": start + timedelta(hours=3),
                              "beam_on_minutes": minutes}, now=NOW)
    use = instrument_usage(session, instrument, T0 - timedelta(days=60), T0 - timedelta(days=30))
    assert (use.sessions, use.beam_hours) == (2, 1.5)
    assert use.energy_kwh == pytest.approx(tube.tube_usage([40, 40], [40, 40], [60, 30])[1])


def test_whom_to_ask_names_the_safety_officer(session, make_person):
    assert whom_to_ask(session) == "the radiation safety officer"
    make_person("rso", roles=(Role.SAFETY_OFFICER,), name="Rae Safety")
    assert whom_to_ask(session) == "the radiation safety officer (Rae Safety)"


def test_out_of_service_after_the_session_still_lets_it_be_written_up(session, setup):
    from models.instruments.instrument_ops import set_out_of_service

    instrument, operator = setup
    set_out_of_service(session, instrument, "Warning light failed")
    instrument.out_of_service_since = T0 + timedelta(hours=5)
    entry = log_finished_session(session, instrument, operator,
                                 {**GOOD, "started_at": T0, "ended_at": T0 + timedelta(hours=1)}, now=NOW)
    assert entry.id is not None
    with pytest.raises(Invalid) as error:
        open_session(session, instrument, operator, GOOD, now=NOW)
    assert "out of service: Warning light failed" in error.value.errors["instrument"]


def test_alignment_and_configuration_changes_ask_for_a_survey_once(
        session, make_person, make_instrument, authorise):
    # Surveys after component changes and alignment with the beam on: 25 Pa. Code 227a;
    # Mont. ARM 37.14.1306 (REFERENCE.md, analytical X-ray equipment).
    from datetime import timedelta

    from models.sessions.session_ops import log_finished_session
    from models.surveys.survey_ops import open_survey_tasks

    operator = make_person("op")
    instrument = make_instrument()
    authorise(operator, instrument)
    start = LAB_NOW - timedelta(hours=5)
    values = {"kv": 40.0, "ma": 30.0, "pre_use_checks_confirmed": True, "alignment": True,
              "caution_acknowledged": True, "configuration_changed": True,
              "configuration_change": "new Goebel mirror"}
    for hours in (0, 2):
        log_finished_session(session, instrument, operator, {
            **values, "started_at": start + timedelta(hours=hours),
            "ended_at": start + timedelta(hours=hours + 1)})
    tasks = open_survey_tasks(session, instrument)
    assert sorted(t.trigger for t in tasks) == ["after_alignment", "after_maintenance"]
    assert "new Goebel mirror" in next(t.reason for t in tasks if t.trigger == "after_maintenance")
