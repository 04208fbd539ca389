"""The safety officer's limit pages: presets read-only, copies edited with checks and reasons."""
import re

import pytest
import sqlalchemy as sa

from models.audit.tables import AuditEvent
from models.core.settings import lab_settings
from models.exposure.limit_set_ops import install_preset
from models.exposure.tables import LimitRule, LimitSet
from models.people.tables import Role

RULE = {"category": "adult_worker", "series": "effective", "period": "year", "limit_msv": "20",
        "level1_kind": "fraction", "level1_value": "0.3", "level2_kind": "absolute",
        "level2_value": "10", "clause": "local rule", "reason": "Local rules tightened"}


def _errors(response) -> list[str]:
    return re.findall(r'<span class="error" role="alert">([^<]*)</span>', response.data.decode())


@pytest.fixture
def rso(make_person, login, session):
    # The settings row is made on first use; a committed one keeps rolled-back forms from
    # taking it with them in tests, where requests share the test's session.
    lab_settings(session)
    session.commit()
    return login(make_person("rso", roles=(Role.SAFETY_OFFICER,)))


def _year_rule(limit_set) -> LimitRule:
    return next(r for r in limit_set.rules
                if (r.category, r.series, r.period) == ("adult_worker", "effective", "year"))


def test_install_show_and_choose_a_preset(rso, session):
    assert "UK IRR17 Schedule 3" in rso.get("/exposure/limits/").data.decode()
    response = rso.post("/exposure/limits/install/icrp103")
    stored = session.scalar(sa.select(LimitSet).where(LimitSet.preset_key == "icrp103"))
    assert response.headers["Location"].endswith(f"/exposure/limits/{stored.id}")
    page = rso.get(f"/exposure/limits/{stored.id}").data.decode()
    assert "ICRP Publication 103, Table 6 (any single year)" in page
    assert "ICRP Publication 118, statement on tissue reactions (2011)" in page
    assert "common practice</span>" in page and "preset, read-only" in page
    refused = rso.post("/exposure/limits/choose", data={"limit_set_id": stored.id, "reason": ""})
    assert refused.status_code == 400
    assert "Say why; the audit trail keeps the reason." in _errors(refused)
    assert lab_settings(session).limit_set_id is None
    rso.post("/exposure/limits/choose", data={"limit_set_id": stored.id,
                                              "reason": "Adopting ICRP 103"})
    session.expire_all()
    assert lab_settings(session).limit_set_id == stored.id
    event = session.scalar(sa.select(AuditEvent).where(AuditEvent.entity == "lab_settings")
                           .order_by(AuditEvent.id.desc()))
    assert event.reason == "Adopting ICRP 103"


def test_a_preset_cannot_be_edited(rso, session):
    preset = install_preset(session, "icrp103")
    session.commit()
    rule = _year_rule(preset)
    assert rso.get(f"/exposure/limits/{preset.id}/rules/{rule.id}").status_code == 403
    assert rso.post(f"/exposure/limits/{preset.id}/rules/{rule.id}", data=RULE).status_code == 403
    assert rso.post(f"/exposure/limits/{preset.id}/rules/{rule.id}/remove",
                    data={"reason": "x"}).status_code == 403
    session.expire_all()
    assert session.get(LimitRule, rule.id).limit_msv == 50.0  # ICRP Publication 103, Table 6


def test_copy_and_edit_the_copy(rso, session):
    preset = install_preset(session, "icrp103")
    session.commit()
    taken = rso.post(f"/exposure/limits/{preset.id}/copy", data={"name": preset.name})
    assert taken.status_code == 400 and any("already exists" in e for e in _errors(taken))
    rso.post(f"/exposure/limits/{preset.id}/copy", data={"name": "Our lab rules"})
    copy = session.scalar(sa.select(LimitSet).where(LimitSet.name == "Our lab rules"))
    assert copy.preset_key is None and len(copy.rules) == len(preset.rules)
    rule = _year_rule(copy)
    url = f"/exposure/limits/{copy.id}/rules/{rule.id}"
    assert 'value="50.0"' in rso.get(url).data.decode()
    assert rso.post(url, data=RULE).status_code == 302
    session.expire_all()
    rule = session.get(LimitRule, rule.id)
    assert (rule.limit_msv, rule.level1_kind, rule.level1_value, rule.level2_value) == (
        20.0, "fraction", 0.3, 10.0)
    event = session.scalar(sa.select(AuditEvent).where(AuditEvent.entity == "limit_rule")
                           .order_by(AuditEvent.id.desc()))
    assert event.reason == "Local rules tightened"


@pytest.mark.parametrize("change, message", [
    ({"limit_msv": "-5"}, "The limit must be greater than zero."),
    ({"level1_value": "1.5"}, "Level I as a fraction of the limit is at most 1, not 1.5."),
    ({"level1_kind": "absolute", "level1_value": "12"},
     "Level II (10 mSv) must not be below level I (12 mSv)."),
    ({"level2_value": "25"}, "Level II (25 mSv) must not be above the limit (20 mSv)."),
    ({"clause": ""}, "Name the source of this rule: a clause, or &#39;local rule&#39;."),
    ({"reason": ""}, "Say why; the audit trail keeps the reason."),
    ({"limit_msv": "lots"}, "Not a valid float value."),
])
def test_bad_rule_input_is_explained_and_nothing_changes(rso, session, change, message):
    copy = LimitSet(name="Local", rules=[])
    session.add(copy)
    session.commit()
    events = session.scalar(sa.select(sa.func.count()).select_from(AuditEvent))
    response = rso.post(f"/exposure/limits/{copy.id}/rules/new", data={**RULE, **change})
    assert response.status_code == 400
    assert message in _errors(response)
    session.expire_all()
    assert session.get(LimitSet, copy.id).rules == []
    assert session.scalar(sa.select(sa.func.count()).select_from(AuditEvent)) == events


def test_add_and_remove_a_rule_in_a_copy(rso, session):
    copy = LimitSet(name="Local", rules=[])
    session.add(copy)
    session.commit()
    assert rso.post(f"/exposure/limits/{copy.id}/rules/new", data=RULE).status_code == 302
    session.expire_all()
    (rule,) = session.get(LimitSet, copy.id).rules
    rso.post(f"/exposure/limits/{copy.id}/rules/{rule.id}/remove", data={"reason": ""})
    session.expire_all()
    assert len(session.get(LimitSet, copy.id).rules) == 1
    rso.post(f"/exposure/limits/{copy.id}/rules/{rule.id}/remove",
             data={"reason": "Duplicate of the national rule"})
    session.expire_all()
    assert session.get(LimitSet, copy.id).rules == []


def test_policies_are_changed_with_a_reason(rso, session):
    data = {"proration": "wear_end", "mrd_policy": "half", "lens_source": "hp10",
            "five_year_first_year": "2021", "reason": "Dosimetry service advice"}
    bad = rso.post("/exposure/limits/policies", data={**data, "five_year_first_year": "20"})
    assert bad.status_code == 400 and "Enter a year between 1950 and 2200." in _errors(bad)
    assert rso.post("/exposure/limits/policies", data=data).status_code == 302
    session.expire_all()
    lab = lab_settings(session)
    assert (lab.proration, lab.mrd_policy, lab.lens_source, lab.five_year_first_year) == (
        "wear_end", "half", "hp10", 2021)
    settings_page = rso.get("/settings/").data.decode()
    assert "Whole record in the period of its wear-period end date" in settings_page
    assert "counts as half the MRD" in settings_page


def test_admin_settings_page_has_no_limit_section(make_person, login):
    client = login(make_person(roles=(Role.ADMIN,)))
    assert "Dose limits and counting" not in client.get("/settings/").data.decode()
