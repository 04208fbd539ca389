"""Surveys: net readings, action levels with their sources, pass and fail, survey tasks."""
from datetime import date, timedelta

import pytest
import sqlalchemy as sa

from models.core.errors import Invalid
from models.instruments.tables import (
    ENCLOSED_SURFACE_ACTION_LEVEL_USV_H,
    HOUSING_LEAKAGE_ACTION_LEVEL_USV_H,
    Instrument,
)
from models.people.tables import Role
from models.surveys.survey_ops import (
    PointInput,
    SurveyInput,
    net_rate,
    off_reference_distance,
    open_survey_tasks,
    raise_survey_task,
    record_survey,
    unit_conversions,
)
from models.surveys.tables import PointLevel, Survey, SurveyPoint, SurveyTask, SurveyTrigger
from tests.conftest import LAB_NOW

NOW = LAB_NOW


@pytest.mark.parametrize(
    ("reading", "background", "factor", "expected"),
    [
        (3.0, 0.1, 1.0, 2.9),
        (3.0, 0.1, 1.5, 4.35),  # the low-energy correction multiplies the net reading
        (0.1, 0.2, 2.0, 0.0),  # below background: floored at zero, never negative
        (0.2, 0.2, 1.0, 0.0),
        (0.0, 0.0, 1.0, 0.0),
    ],
)
def test_net_rate(reading, background, factor, expected):
    assert net_rate(reading, background, factor) == pytest.approx(expected)


def test_default_action_levels_carry_their_sources():
    # ANSI N43.2 as quoted in DOE-HDBK-1109-97: 2.5 uSv/h at 5 cm, enclosed system outer surface.
    assert ENCLOSED_SURFACE_ACTION_LEVEL_USV_H == 2.5
    # 25 Pa. Code 227a.13(b): 2.5 mrem (0.025 mSv) in 1 hour at 5 cm, housing, all shutters closed.
    assert HOUSING_LEAKAGE_ACTION_LEVEL_USV_H == 25.0


def test_a_new_instrument_gets_the_default_levels(session):
    instrument = Instrument(name="Bare", kind="powder_xrd", anode="Cu", max_kv=60, max_ma=60,
                            max_power_w=2200, enclosure="enclosed")
    session.add(instrument)
    session.flush()
    # Defaults from REFERENCE.md (ANSI N43.2 via DOE-HDBK-1109-97; 25 Pa. Code 227a.13(b)).
    assert (instrument.surface_action_level_usv_h, instrument.housing_action_level_usv_h) == (2.5, 25.0)


@pytest.mark.parametrize(("distance", "flagged"), [(5.0, False), (5, False), (10.0, True), (1.0, True)])
def test_distances_other_than_5_cm_are_flagged(distance, flagged):
    assert off_reference_distance(distance) is flagged


def _survey(instrument, person, meter, points, unit="uSv/h", when=None):
    when = when or NOW - timedelta(hours=1)
    return SurveyInput(instrument=instrument, performed_at=when, survey_date=when.date(),
                       performed_by=person, trigger=SurveyTrigger.PERIODIC, kv=40, ma=30,
                       meter=meter, unit=unit, points=points)


def test_a_survey_under_the_levels_passes_and_completes_open_tasks(
        session, make_instrument, make_person, make_meter):
    instrument, rso, meter = make_instrument(), make_person(roles=(Role.SAFETY_OFFICER,)), make_meter()
    task = raise_survey_task(session, instrument, SurveyTrigger.AFTER_BYPASS, "Bypass closed")
    survey = record_survey(session, _survey(instrument, rso, meter, [
        PointInput("Door seal", 2.5, 0.1),
        PointInput("Tube housing", 20.0, 0.1, level=PointLevel.HOUSING)]))
    assert survey.passed and instrument.in_service
    assert survey.max_net_usv_h == pytest.approx(19.9)
    assert task.survey_id == survey.id and task.done_at is not None
    assert open_survey_tasks(session, instrument) == []


def test_a_survey_over_the_action_level_fails_and_puts_the_instrument_out_of_service(
        session, make_instrument, make_person, make_meter):
    instrument, rso = make_instrument(), make_person(roles=(Role.SAFETY_OFFICER,))
    meter = make_meter(correction_factor=1.2)
    # 2.2 uSv/h x 1.2 = 2.64 uSv/h net: over the 2.5 uSv/h surface level (ANSI N43.2).
    survey = record_survey(session, _survey(instrument, rso, meter, [PointInput("Window", 2.2, 0.0)]))
    assert not survey.passed
    assert survey.points[0].net_usv_h == pytest.approx(2.64)
    assert not instrument.in_service
    assert "Window" in instrument.out_of_service_reason and "2.5" in instrument.out_of_service_reason
    # A repeat survey is asked for, and the failed one completes nothing.
    assert [t.trigger for t in open_survey_tasks(session, instrument)] == [SurveyTrigger.OTHER]


def test_each_point_is_held_to_its_own_level(session, make_instrument, make_person, make_meter):
    instrument, rso, meter = make_instrument(), make_person(roles=(Role.SAFETY_OFFICER,)), make_meter()
    # 10 uSv/h passes on the housing (25) but fails on the surface (2.5).
    housing = record_survey(session, _survey(instrument, rso, meter, [
        PointInput("Housing", 10.0, level=PointLevel.HOUSING)]))
    surface = record_survey(session, _survey(instrument, rso, meter, [PointInput("Panel", 10.0)]))
    assert housing.passed and not surface.passed
    assert [p.action_level_usv_h for p in (housing.points[0], surface.points[0])] == [25.0, 2.5]


def test_mr_per_hour_readings_are_converted_before_comparing(
        session, make_instrument, make_person, make_meter):
    instrument, rso, meter = make_instrument(), make_person(roles=(Role.SAFETY_OFFICER,)), make_meter()
    # At 40 kV: 1 mR = 2.58e-4 C/kg x 33.97 J/C = 8.764 uGy air kerma (10 CFR 20.1004; ICRU), times
    # 1.47 Sv/Gy, the largest H*(10)/Ka up to 40 keV (ICRU 57 Table A.21, from memory, REFERENCE.md):
    # 12.88 uSv/h per mR/h, so 2.6 mR/h is 2.6 x 12.88 = 33.5 uSv/h, over the housing's 25.
    survey = record_survey(session, _survey(instrument, rso, meter, [
        PointInput("Housing", 2.6, level=PointLevel.HOUSING)], unit="mR/h"))
    assert not survey.passed
    assert survey.points[0].reading_usv_h == pytest.approx(33.50, rel=1e-3)
    assert survey.points[0].usv_h_per_unit == pytest.approx(12.88, rel=1e-3)
    assert survey.points[0].entered_unit == "mR/h"


def test_a_meter_out_of_calibration_is_refused_and_nothing_is_written(
        session, make_instrument, make_person, make_meter):
    instrument, rso = make_instrument(), make_person(roles=(Role.SAFETY_OFFICER,))
    meter = make_meter(calibrated_on=date(2024, 3, 10))
    with pytest.raises(Invalid) as caught:
        record_survey(session, _survey(instrument, rso, meter, [PointInput("Door", 0.5)]))
    message = caught.value.errors["meter_id"]
    assert "out of calibration" in message
    # Calibrated 2024-03-10 for 12 months: the anniversary 2025-03-10 is the first day out, so
    # 2025-03-09 is the last valid day (common practice: "valid for 12 months").
    assert "valid until 2025-03-09 (last valid day)" in message
    assert session.scalar(sa.select(sa.func.count()).select_from(Survey)) == 0


@pytest.mark.parametrize(
    ("change", "field", "words"),
    [
        ({"kv": 70}, "kv", "above this instrument's rating of 60 kV"),
        ({"ma": 61}, "ma", "above this instrument's rating of 60 mA"),
        ({"kv": 60, "ma": 50}, "ma", "power rating of 2200 W"),
        ({"ma": 0}, "ma", "above 0 mA"),
        ({"performed_at": NOW + timedelta(hours=2)}, "performed_at", "in the future"),
        ({"points": []}, "points", "at least one survey point"),
        ({"points": [PointInput("", 1.0)]}, "points-0-location", "Say where"),
        ({"points": [PointInput("Door", -1.0)]}, "points-0-reading", "zero or more"),
        ({"points": [PointInput("Door", 1.0, distance_cm=0)]}, "points-0-distance_cm", "more than 0 cm"),
    ],
)
def test_bad_surveys_are_refused_by_field(session, make_instrument, make_person, make_meter,
                                          change, field, words):
    instrument, rso, meter = make_instrument(), make_person(roles=(Role.SAFETY_OFFICER,)), make_meter()
    values = _survey(instrument, rso, meter, [PointInput("Door", 0.5)])
    with pytest.raises(Invalid) as caught:
        record_survey(session, SurveyInput(**{**values.__dict__, **change}))
    assert words in caught.value.errors[field]


def test_raise_survey_task_needs_a_reason(session, make_instrument):
    with pytest.raises(Invalid):
        raise_survey_task(session, make_instrument(), SurveyTrigger.DOSE_RISE, "  ")
    assert session.scalar(sa.select(sa.func.count()).select_from(SurveyTask)) == 0


def test_unit_conversions_name_the_factor_each_point_was_stored_at():
    survey = Survey(kv=50.0, points=[
        SurveyPoint(entered_unit="uSv/h", usv_h_per_unit=1.0),
        # Stored before the H*(10) factor, at the old 10 uSv/h per mR/h.
        SurveyPoint(entered_unit="mR/h", usv_h_per_unit=10.0),
        SurveyPoint(entered_unit="mrem/h", usv_h_per_unit=10.0),
    ])
    (mr, mr_factor, mr_source), (mrem, mrem_factor, mrem_source) = unit_conversions(survey)
    assert (mr, mr_factor, mr_source) == ("mR/h", 10.0, "the factor in use when this survey was recorded")
    # 1 rem = 0.01 Sv (10 CFR 20.1004): 10 uSv/h per mrem/h, the factor in force, with its source.
    assert (mrem, mrem_factor) == ("mrem/h", 10.0) and "10 CFR 20.1004" in mrem_source
