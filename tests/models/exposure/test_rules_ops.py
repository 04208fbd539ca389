"""The rules' history: which limit set and policies stood on a date, and how a change is refused."""
from datetime import date

import pytest

from models.core.errors import Invalid
from models.core.settings import lab_settings
from models.exposure.engine import Policies
from models.exposure.figures_ops import lab_evaluation
from models.exposure.limit_set_ops import install_preset
from models.exposure.rules_ops import choose_limit_set, record_rule_change, rule_history, rules_on, set_policies
from tests.conftest import LAB_TODAY

POLICIES = {"proration": "wear_end", "mrd_policy": "full", "lens_source": "hp10", "five_year_first_year": 2021}


def _change(from_on: date, reason: str = "Test") -> dict:
    return {"from_on": from_on, "reason": reason, "today": LAB_TODAY, "by": None}


def test_each_date_takes_the_latest_change_on_or_before_it(session):
    settings = lab_settings(session)
    euratom, cfr = install_preset(session, "euratom2013"), install_preset(session, "cfr10_20")
    choose_limit_set(session, settings, euratom, **_change(date(2020, 1, 1)))
    choose_limit_set(session, settings, cfr, **_change(date(2026, 6, 1)))
    set_policies(session, settings, POLICIES, **_change(date(2026, 3, 1)))
    # Before the first change: the history's first row (migration 0031), no set, the default policies.
    limit_set, policies = rules_on(session, date(2019, 12, 31))
    assert (limit_set.key, policies) == ("none", Policies(first_block_year=2026))
    assert rules_on(session, date(2020, 1, 1))[0].key == "euratom2013"
    # The policy change from 1 March kept the set standing then (Euratom) and its own policies...
    limit_set, policies = rules_on(session, date(2026, 5, 31))
    assert (limit_set.key, policies) == ("euratom2013", Policies("wear_end", "full", "hp10", 2021))
    # ...and the set change from 1 June, recorded before it, leaves them standing: each keeps its own history.
    limit_set, policies = rules_on(session, date(2026, 6, 1))
    assert (limit_set.key, policies) == ("cfr10_20", Policies("wear_end", "full", "hp10", 2021))
    # Today's copy in the settings follows.
    assert (settings.limit_set, settings.proration, settings.five_year_first_year) == (cfr, "wear_end", 2021)


def test_on_one_date_the_later_recorded_change_wins(session):
    settings = lab_settings(session)
    for key in ("irr17", "icrp103"):
        choose_limit_set(session, settings, install_preset(session, key), **_change(date(2025, 1, 1)))
    assert rules_on(session, date(2025, 1, 1))[0].key == "icrp103"
    assert [c.limit_set.preset_key for c in rule_history(session)[:2]] == ["icrp103", "irr17"]


def test_a_change_into_the_past_leaves_later_changes_standing(session):
    settings = lab_settings(session)
    choose_limit_set(session, settings, install_preset(session, "cfr10_20"), **_change(date(2026, 6, 1)))
    choose_limit_set(session, settings, install_preset(session, "irr17"), **_change(date(2025, 1, 1)))
    assert rules_on(session, date(2026, 5, 31))[0].key == "irr17"
    assert rules_on(session, LAB_TODAY)[0].key == "cfr10_20"
    assert settings.limit_set.preset_key == "cfr10_20"


@pytest.mark.parametrize("from_on, reason, fields", [
    (date(1949, 12, 31), "why", {"from_on"}),
    (date(2101, 1, 1), "why", {"from_on"}),
    (date(2026, 12, 3), "why", {"from_on"}),  # the day after LAB_TODAY
    (None, "why", {"from_on"}),
    (date(2026, 1, 1), "  ", {"reason"}),
    (date(1900, 1, 1), "", {"from_on", "reason"}),
])
def test_a_change_is_refused_with_the_field_named(session, from_on, reason, fields):
    before = rule_history(session)  # the row the migrations begin the history with
    with pytest.raises(Invalid) as refused:
        record_rule_change(session, lab_settings(session), from_on=from_on, reason=reason, today=LAB_TODAY, by=None,
                           limit_set=install_preset(session, "icrp103"))
    assert set(refused.value.errors) == fields
    assert rule_history(session) == before


def test_the_stored_and_past_evaluations_see_a_change_into_the_past(session):
    settings = lab_settings(session)
    cfr = install_preset(session, "cfr10_20")  # before the first evaluation: no limit set is written after it
    choose_limit_set(session, settings, install_preset(session, "irr17"), **_change(date(2026, 6, 1)))
    session.commit()
    assert lab_evaluation(session, date(2025, 12, 31)).evaluation.limit_set.key == "none"
    # Today's rules (and their copy in the settings) stay as they are; 2025 changes.
    choose_limit_set(session, settings, cfr, **_change(date(2025, 1, 1)))
    session.commit()
    assert lab_evaluation(session, date(2025, 12, 31)).evaluation.limit_set.key == "cfr10_20"
    assert lab_evaluation(session, LAB_TODAY).evaluation.limit_set.key == "irr17"
