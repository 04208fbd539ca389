"""Investigations raised from level crossings, survey tasks for a dose rise, review and sign-off."""
from dataclasses import replace
from datetime import date, datetime, timezone
from zoneinfo import ZoneInfo

import numpy as np
import pytest
import sqlalchemy as sa

from models.core.codes import LevelKind
from models.core.errors import Invalid
from models.doses.record_ops import amend_dose_record, entry_of
from models.exposure.engine import DoseRecords, compute_doses
from models.exposure.evaluation import evaluate
from models.exposure.investigation_ops import (
    investigation_label,
    raise_investigations,
    raise_survey_tasks,
    record_review,
    review_after_dose_change,
    sign_off,
)
from models.exposure.lab_ops import LabEvaluation, evaluate_lab
from models.exposure.presets import InvestigationLevel, LimitRuleSpec, LimitSetSpec
from models.exposure.tables import Investigation
from models.sessions.tables import InstrumentSession
from models.surveys.tables import SurveyTask

ON = date(2026, 11, 30)
OCTOBER = {"wear_start": date(2026, 10, 1), "wear_end": date(2026, 10, 31)}
NOVEMBER = {"wear_start": date(2026, 11, 1), "wear_end": date(2026, 11, 28)}
UTC = ZoneInfo("UTC")


def _raise(session, on=ON, series="effective"):
    """The new investigations of one series (all with series=None)."""
    new = raise_investigations(session, evaluate_lab(session, on))
    session.commit()
    return [i for i in new if series is None or i.series == series]


def test_a_crossing_is_raised_once(session, make_person, make_dose, use_limit_set):
    use_limit_set("icrp103")
    person = make_person()
    make_dose(person, value=1.5, **OCTOBER)
    new = _raise(session, series=None)
    # common practice: 1.25 mSv Hp(10) in a quarter is level I (REFERENCE.md, investigation levels);
    # with no Hp(0.07) reported, the lens reads Hp(10) whole body too (lens quarterly level I:
    # 1.25 x 50 / 50 = 1.25 mSv, ICRP 118 lens limit 50 over the Hp(10) limit 50).
    assert sorted((i.series, i.quantity, i.location, i.period, i.period_start, i.level) for i in new) == [
        ("effective", "Hp(10)", "whole_body", "quarter", date(2026, 10, 1), "level_1"),
        ("lens", "Hp(10)", "whole_body", "quarter", date(2026, 10, 1), "level_1")]
    assert new[0].dose_msv == pytest.approx(1.5)
    assert _raise(session, series=None) == []
    assert session.scalar(sa.select(sa.func.count()).select_from(Investigation)) == 2


def test_a_jump_raises_the_level_reached_and_a_later_rise_raises_again(
        session, make_person, make_dose, use_limit_set):
    use_limit_set("icrp103")
    person = make_person()
    make_dose(person, value=1.5, **OCTOBER)
    assert [i.level for i in _raise(session)] == ["level_1"]
    make_dose(person, value=3.0, wear_start=date(2026, 11, 1), wear_end=date(2026, 11, 30))
    # common practice: 3.75 mSv Hp(10) in a quarter is level II (REFERENCE.md)
    assert [i.level for i in _raise(session)] == ["level_2"]
    other = make_person()
    make_dose(other, value=4.0, **OCTOBER)
    assert [(i.person_id, i.level) for i in _raise(session)] == [(other.id, "level_2")]


def test_a_crossing_under_a_higher_investigation_is_not_raised(
        session, make_person, make_dose, use_limit_set):
    use_limit_set("icrp103")
    person = make_person()
    record = make_dose(person, value=4.0, **OCTOBER)
    assert [i.level for i in _raise(session)] == ["level_2"]
    # Amended down (a new version; records are never edited): the level II review covers level I.
    amend_dose_record(session, record, replace(entry_of(record), value=2.0), "re-read by the service")
    session.commit()
    assert _raise(session) == []


def test_both_hands_series_raise_one_investigation(session, make_person, make_dose, use_limit_set):
    use_limit_set("icrp103")
    person = make_person()
    make_dose(person, value=40.0, **OCTOBER, quantity="Hp(0.07)",
              location="right_hand")
    # common practice scaled by the limit ratio: 3.75 x 500 / 50 = 37.5 mSv is level II for a hand
    assert [(i.series, i.location, i.period, i.level) for i in _raise(session, series=None)] == [
        ("right_hand", "right_hand", "quarter", "level_2")]


def test_a_lens_assessed_from_the_body_badge_is_raised_as_the_lens(
        session, make_person, make_dose, use_limit_set):
    use_limit_set("icrp103")
    person = make_person()
    make_dose(person, value=2.0, **OCTOBER, quantity="Hp(0.07)")
    (item,) = _raise(session, series=None)
    # common practice scaled: the lens (50 mSv a year, ICRP 2011 statement) has level I at
    # 1.25 mSv a quarter; the skin (500 mSv, ICRP 103 Table 6) only at 12.5 mSv.
    assert (item.series, item.quantity, item.location, item.level) == (
        "lens", "Hp(0.07)", "whole_body", "level_1")
    assert investigation_label(item) == (
        "lens from Hp(0.07) whole body, calendar quarter from 2026-10-01, level I")


def _rolling_lab(on: date, person_id: int) -> LabEvaluation:
    """One person with 2 mSv in January 2026 under a rolling-12-month level I of 1 mSv."""
    rule = LimitRuleSpec("adult_worker", "effective", "rolling_12_months", None,
                     level1=InvestigationLevel(LevelKind.ABSOLUTE, 1.0), clause="test")
    records = DoseRecords(person=[0], quantity=["Hp(10)"], location=["whole_body"],
                          wear_start=[date(2026, 1, 1)], wear_end=[date(2026, 1, 31)],
                          value=[2.0], result=["measured"], mrd=[np.nan])
    evaluation = evaluate(compute_doses(records, 1, on), LimitSetSpec("t", "test", (rule,)),
                          ["adult_worker"])
    return LabEvaluation(on, np.array([person_id]), evaluation)


def test_a_rolling_window_is_not_raised_again_each_day(session, make_person):
    person = make_person()
    first = raise_investigations(session, _rolling_lab(date(2026, 2, 1), person.id))
    assert [(i.period, i.period_start) for i in first] == [
        ("rolling_12_months", date(2025, 2, 2))]  # the 12 calendar months up to 1 Feb 2026
    assert raise_investigations(session, _rolling_lab(date(2026, 2, 2), person.id)) == []
    assert raise_investigations(session, _rolling_lab(date(2026, 12, 31), person.id)) == []


def _use(session, person, instrument, day: int):
    """A session of `person` on `instrument` on that day of November 2026."""
    started = datetime(2026, 11, day, 9, tzinfo=timezone.utc)
    session.add(InstrumentSession(instrument_id=instrument.id, operator_id=person.id,
                                  started_at=started, ended_at=started.replace(hour=11),
                                  kv=40, ma=30))
    session.commit()


def test_a_rise_asks_for_surveys_of_the_instruments_used(
        session, make_person, make_instrument, authorise, make_dose, use_limit_set):
    use_limit_set("icrp103")
    person = make_person(name="Ada Example")
    used, also_used, unused = make_instrument(), make_instrument(), make_instrument()
    authorise(person, used)
    _use(session, person, used, 3)
    _use(session, person, also_used, 20)
    make_dose(person, value=1.5, **NOVEMBER)
    new = _raise(session)
    tasks = raise_survey_tasks(session, new, ON, UTC)
    session.commit()
    assert sorted(t.instrument_id for t in tasks) == sorted([used.id, also_used.id])
    assert {t.trigger for t in tasks} == {"dose_rise"}
    for task in tasks:
        # Everyone sees survey tasks: who asked, not whose dose, which level or when.
        assert task.reason == "Asked for by the radiation safety officer. Survey the instrument."
    assert unused.id not in {t.instrument_id for t in tasks}
    # An open dose-rise task is not doubled by the next crossing.
    make_dose(person, value=3.0, wear_start=date(2026, 11, 29), wear_end=date(2026, 11, 30))
    assert raise_survey_tasks(session, _raise(session), ON, UTC) == []


def test_review_after_a_dose_change_returns_what_it_raised_and_asks_for_a_survey(
        session, make_person, make_instrument, authorise, make_dose, use_limit_set):
    use_limit_set("icrp103")
    person = make_person()
    instrument = make_instrument()
    authorise(person, instrument)
    _use(session, person, instrument, 3)
    make_dose(person, value=1.5, **NOVEMBER)
    raised = review_after_dose_change(session, ON)
    session.commit()
    # common practice: 1.25 mSv Hp(10) in a quarter is level I (REFERENCE.md, investigation levels).
    # The lens has no Hp(0.07) to stand in for Hp(3), so it reads the other whole-body quantity,
    # Hp(10): 1.5 mSv against the lens's 20 mSv/y scaled to the same 1.25 mSv quarterly level I.
    assert sorted((i.series, i.person_id, i.period, i.period_start, i.level) for i in raised) == [
        ("effective", person.id, "quarter", date(2026, 10, 1), "level_1"),
        ("lens", person.id, "quarter", date(2026, 10, 1), "level_1")]
    stored = session.scalars(sa.select(Investigation)).all()
    assert sorted(i.id for i in stored) == sorted(i.id for i in raised)
    tasks = session.scalars(sa.select(SurveyTask)).all()
    assert [(t.instrument_id, t.trigger) for t in tasks] == [(instrument.id, "dose_rise")]
    # Nothing new since: the next review raises nothing and asks for no second survey.
    assert review_after_dose_change(session, ON) == []
    assert session.scalar(sa.select(sa.func.count()).select_from(SurveyTask)) == 1


def test_no_survey_task_for_someone_not_authorised(
        session, make_person, make_instrument, make_dose, use_limit_set):
    use_limit_set("icrp103")
    person = make_person()
    _use(session, person, make_instrument(), 3)
    make_dose(person, value=1.5, **NOVEMBER)
    assert raise_survey_tasks(session, _raise(session), ON, UTC) == []
    assert session.scalar(sa.select(sa.func.count()).select_from(SurveyTask)) == 0


def test_review_then_sign_off_then_read_only(session, make_person, make_dose, use_limit_set):
    use_limit_set("icrp103")
    person = make_person()
    officer = make_person(roles=("safety_officer",))
    make_dose(person, value=1.5, **OCTOBER)
    (item,) = _raise(session)
    record_review(session, item, questions="Alignment work?", findings="", actions=None)
    with pytest.raises(Invalid) as refused:
        sign_off(session, item, officer)
    assert set(refused.value.errors) == {"findings", "actions"}
    record_review(session, item, questions="Alignment work?", findings="Badge left near tube.",
                  actions="Badge board moved.")
    sign_off(session, item, officer)
    session.commit()
    assert item.signed_off_by_id == officer.id and item.signed_off_at is not None
    with pytest.raises(Invalid, match="signed off"):
        record_review(session, item, questions="", findings="changed", actions="")
