"""Rules as they stood: a past date is evaluated with the limit set and policies in force on it; the
changes are made from a date with a reason (`flask limits use|policies`, the limits page) and listed
on the safety officer's history page."""
import json
from datetime import date

import pytest
import sqlalchemy as sa

from models.core.settings import lab_settings
from models.exposure.rules_ops import rule_history, rules_on
from models.exposure.tables import Investigation
from models.people.tables import Role
from webapp.extensions import db

EURATOM = "Council Directive 2013/59/Euratom"
ICRP = "ICRP 103 (2007) with the ICRP 2011 lens statement"


def _cli(app, *args):
    return app.test_cli_runner().invoke(args=list(args))


def _year_row(app, login: str, on: date) -> dict:
    """The person's effective-dose calendar-year row from `flask exposure show --json --on`."""
    result = _cli(app, "exposure", "show", "--person", login, "--on", on.isoformat(), "--json")
    assert result.exit_code == 0, result.output
    return next(r for r in json.loads(result.output) if (r["series"], r["period"]) == ("effective", "year"))


def test_a_past_date_is_evaluated_with_the_set_in_force_then(app, make_person, make_dose, use_limit_set, login):
    use_limit_set("euratom2013")  # from 1950-01-01
    trainee = make_person("tim", name="Tim Trainee", category="trainee")
    make_dose(trainee, value=7.0, wear_start=date(2025, 1, 1), wear_end=date(2025, 12, 31))
    used = _cli(app, "limits", "use", "icrp103", "--from", "2026-06-01", "--reason", "Lab moved to ICRP 103")
    assert used.exit_code == 0, used.output
    assert "from 2026-06-01" in used.output

    # 31 December 2025 stood under 2013/59/Euratom: Art. 11(2) limits apprentices/students 16-18
    # to 6 mSv a year; 7 >= 6, the limit is reached.
    then = _year_row(app, "tim", date(2025, 12, 31))
    assert (then["limit_set"], then["dose_msv"], then["limit_msv"], then["level"]) == (
        EURATOM, 7.0, 6.0, "limit_reached")
    # From 1 June 2026 ICRP 103 applies, whose Table 6 has no row for apprentices: nothing is
    # assessed and the row says so (the 2026 year has no result, so no dose either).
    now = _year_row(app, "tim", date(2026, 6, 1))
    assert (now["limit_set"], now["dose_msv"], now["limit_msv"], now["level"]) == (ICRP, None, None, "no_limit")
    # The day before the change still stands under the old set.
    assert _year_row(app, "tim", date(2026, 5, 31))["limit_set"] == EURATOM

    header = _cli(app, "exposure", "show", "--person", "tim", "--on", "2025-12-31")
    assert f"Limit set:  {EURATOM}" in header.output

    officer = login(make_person("rso", roles=(Role.SAFETY_OFFICER,)))
    page = officer.get(f"/exposure/person/{trainee.id}?on=2025-12-31").data.decode()
    assert EURATOM in page and "limit reached" in page and ICRP not in page
    page = officer.get(f"/exposure/person/{trainee.id}?on=2026-06-01").data.decode()
    assert ICRP in page and "no limit in this set" in page
    # Today's copy in the settings follows the history.
    db.session.expire_all()
    assert lab_settings(db.session).limit_set.preset_key == "icrp103"


def test_a_policy_changed_from_a_date_counts_only_from_then(app, make_person, make_dose, use_limit_set):
    use_limit_set("icrp103")
    ada = make_person("ada")
    # 30 days of wear, 17 December 2025 to 15 January 2026: 15 of them in 2026.
    make_dose(ada, value=3.0, wear_start=date(2025, 12, 17), wear_end=date(2026, 1, 15))
    result = _cli(app, "limits", "policies", "--proration", "wear_end", "--from", "2026-06-01",
                  "--reason", "Dosimetry service reports by wear end")
    assert result.exit_code == 0, result.output
    # Before 1 June the days are prorated: 3.0 x 15 / 30 = 1.5 mSv in 2026.
    assert _year_row(app, "ada", date(2026, 3, 31))["dose_msv"] == pytest.approx(1.5)
    # From 1 June the whole record counts in the year of its wear end: 3.0 mSv in 2026.
    assert _year_row(app, "ada", date(2026, 6, 30))["dose_msv"] == pytest.approx(3.0)
    # The limit set is kept: the policies change alone.
    limit_set, policies = rules_on(db.session, date(2026, 6, 1))
    assert (limit_set.key, policies.proration, policies.mrd) == ("icrp103", "wear_end", "zero")
    assert rules_on(db.session, date(2026, 5, 31))[1].proration == "prorate_days"


def test_a_change_of_the_set_raises_investigations_at_once(app, make_person, make_dose, use_limit_set):
    use_limit_set("icrp103")
    tim = make_person("tim", category="trainee")
    # 2 mSv in the current quarter (October to 2 December 2026).
    make_dose(tim, value=2.0, wear_start=date(2026, 10, 1), wear_end=date(2026, 11, 30))
    result = _cli(app, "limits", "use", "euratom2013", "--from", "2026-01-01", "--reason", "EU lab")
    assert result.exit_code == 0, result.output
    # Common-practice quarterly levels scaled to 2013/59/Euratom's trainee limits: effective (Art.
    # 11(2), 6 mSv) level II 3.75 x 6 / 20 = 1.125 mSv, 2 is past it; lens (Art. 11(3)(a), 15 mSv,
    # from Hp(10) as no Hp(0.07) was reported) level I 1.25 x 15 / 20 = 0.9375, level II 2.8125.
    assert "2 new investigation(s) raised" in result.output
    raised = db.session.scalars(sa.select(Investigation).where(Investigation.person_id == tim.id)).all()
    assert {(i.series, i.period, i.level) for i in raised} == {
        ("effective", "quarter", "level_2"), ("lens", "quarter", "level_1")}


@pytest.mark.parametrize("args, message", [
    (["limits", "use", "icrp103", "--from", "1949-12-31", "--reason", "x"],
     "--from: Enter a date between 1950 and 2100."),
    (["limits", "use", "icrp103", "--from", "2026-12-03", "--reason", "x"], "--from: A change applies from today"),
    (["limits", "use", "icrp103", "--from", "31/12/2025", "--reason", "x"], "--from"),
    (["limits", "use", "nonsense", "--from", "2026-01-01", "--reason", "x"],
     "key: No preset or saved set is called 'nonsense'"),
    (["limits", "use", "icrp103", "--from", "2026-01-01"], "--reason"),
    (["limits", "use", "icrp103", "--reason", "  "], "--reason: Give a reason"),
    (["limits", "policies", "--mrd", "half", "--from", "2101-01-01", "--reason", "x"], "--from: Enter a date"),
    (["limits", "policies", "--mrd", "half"], "--reason"),
    (["limits", "policies", "--mrd", "half", "--reason", ""], "--reason: Give a reason"),
])
def test_rule_changes_from_the_command_line_are_refused_with_the_option_named(app, args, message):
    result = _cli(app, *args)
    assert result.exit_code != 0 and message in result.output
    assert all(change.reason != "x" for change in rule_history(db.session))


@pytest.mark.parametrize("roles", [(Role.OPERATOR,), (Role.ADMIN,)])
def test_only_the_safety_officer_sees_the_history(client, make_person, login, roles):
    assert client.get("/exposure/limits/history").status_code == 302  # anonymous: to the login page
    assert login(make_person("someone", roles=roles)).get("/exposure/limits/history").status_code == 403


def _cfr_id() -> int:
    """The id of the installed 10 CFR 20 preset (installed here if need be)."""
    from models.exposure.limit_set_ops import install_preset

    stored = install_preset(db.session, "cfr10_20")
    db.session.commit()
    return stored.id


def test_the_history_lists_each_change_with_date_who_when_and_why(app, make_person, login, use_limit_set):
    use_limit_set("euratom2013")
    officer = make_person("rso", name="Rita Safety", roles=(Role.SAFETY_OFFICER,))
    client = login(officer)
    chosen = client.post("/exposure/limits/choose", data={
        "limit_set_id": _cfr_id(), "from_on": "2026-06-01", "reason": "Licence now under 10 CFR 20"})
    assert chosen.status_code == 302
    refused = client.post("/exposure/limits/policies", data={
        "proration": "wear_end", "mrd_policy": "half", "lens_source": "hp10", "five_year_first_year": "2021",
        "from_on": "2026-12-03", "reason": "Too early"})
    assert refused.status_code == 400 and "A change applies from today" in refused.data.decode()
    assert client.post("/exposure/limits/policies", data={
        "proration": "wear_end", "mrd_policy": "half", "lens_source": "hp10", "five_year_first_year": "2021",
        "reason": "Dosimetry service advice"}).status_code == 302
    page = client.get("/exposure/limits/history")
    text = page.data.decode()
    assert page.status_code == 200
    for expected in ("2026-06-01", "US 10 CFR Part 20", "Licence now under 10 CFR 20", "Rita Safety",
                     "2026-12-02", "Dosimetry service advice", "counts as half the MRD", "Test set-up.",
                     "1950-01-01", EURATOM, "set in force today", "policies in force today"):
        assert expected in text
    assert "Too early" not in text
    assert "history" in client.get("/exposure/limits/").data.decode().lower()
    assert "/exposure/limits/history" in client.get("/settings/").data.decode()
