"""Editing limit sets: rule checks with field messages, presets read-only, policies."""
import pytest

from models.core.errors import Invalid
from models.core.settings import lab_settings
from models.exposure.limit_set_ops import copy_limit_set, install_preset, remove_rule, save_rule, validate_rule
from models.exposure.rules_ops import choose_limit_set, set_policies

GOOD = {"category": "adult_worker", "series": "effective", "period": "year", "limit_msv": 20.0,
        "level1_kind": "fraction", "level1_value": 0.3, "level2_kind": "absolute",
        "level2_value": 10.0, "clause": "local rule"}


def test_a_good_rule_passes():
    rule = validate_rule(GOOD)
    assert rule.thresholds() == pytest.approx((6.0, 10.0, 20.0))


@pytest.mark.parametrize("change, field, words", [
    ({"limit_msv": -1.0}, "limit_msv", "greater than zero"),
    ({"limit_msv": 0.0}, "limit_msv", "greater than zero"),
    ({"level1_value": 1.5}, "level1_value", "at most 1"),
    ({"level1_value": 0.0}, "level1_value", "greater than zero"),
    ({"level1_value": None}, "level1_value", "Enter level I"),
    ({"level1_kind": "", "level1_value": 0.2}, "level1_kind", "fraction of the limit or mSv"),
    ({"level1_kind": "absolute", "level1_value": 12.0}, "level2_value", "below level I"),
    ({"level2_value": 25.0}, "level2_value", "above the limit (20 mSv)"),
    ({"limit_msv": None}, "level1_value", "needs a limit"),
    ({"limit_msv": None, "level1_kind": "", "level1_value": None, "level2_kind": "",
      "level2_value": None}, "limit_msv", "Give a limit"),
    ({"clause": "  "}, "clause", "Name the source"),
    ({"series": "fetus"}, "series", "declared pregnant worker"),
    ({"period": "pregnancy"}, "period", "embryo/fetus series only"),
    ({"category": "astronaut"}, "category", "Choose one of the listed values"),
])
def test_bad_rules_are_refused_beside_the_field(change, field, words):
    with pytest.raises(Invalid) as refused:
        validate_rule({**GOOD, **change})
    assert words in refused.value.errors[field]


def test_a_preset_is_read_only(session):
    preset = install_preset(session, "icrp103")
    with pytest.raises(Invalid, match="shipped preset"):
        save_rule(session, preset, GOOD, preset.rules[0])
    with pytest.raises(Invalid, match="shipped preset"):
        remove_rule(session, preset, preset.rules[0])


def test_a_copy_is_edited_added_to_and_trimmed(session):
    copy = copy_limit_set(session, install_preset(session, "icrp103"), "Our lab")
    year = next(r for r in copy.rules if (r.category, r.series, r.period)
                == ("adult_worker", "effective", "year"))
    save_rule(session, copy, GOOD, year)
    assert (year.limit_msv, year.level1_kind, year.level1_value) == (20.0, "fraction", 0.3)
    with pytest.raises(Invalid) as refused:  # a second rule for the same row
        save_rule(session, copy, GOOD)
    assert "already has a rule" in refused.value.errors["period"]
    added = save_rule(session, copy, {**GOOD, "period": "month", "limit_msv": 2.0,
                                      "level2_value": 1.0})
    assert added in copy.rules
    remove_rule(session, copy, added)
    assert added not in copy.rules


def test_choosing_and_policies(session, today):
    settings = lab_settings(session)
    change = {"from_on": today, "reason": "Test", "today": today, "by": None}
    with pytest.raises(Invalid):
        choose_limit_set(session, settings, None, **change)
    chosen = install_preset(session, "cfr10_20")
    choose_limit_set(session, settings, chosen, **change)
    assert settings.limit_set is chosen
    set_policies(session, settings, {"proration": "wear_end", "mrd_policy": "half",
                                     "lens_source": "hp10", "five_year_first_year": 2021}, **change)
    assert (settings.proration, settings.mrd_policy, settings.lens_source,
            settings.five_year_first_year) == ("wear_end", "half", "hp10", 2021)
    with pytest.raises(Invalid) as refused:
        set_policies(session, settings, {"proration": "weekly", "mrd_policy": "half",
                                         "lens_source": "hp10", "five_year_first_year": 99}, **change)
    assert set(refused.value.errors) == {"proration", "five_year_first_year"}
