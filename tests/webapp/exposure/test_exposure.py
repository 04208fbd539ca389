"""`flask exposure show` and `review`, investigation pages, the dose lines of the attention list."""
import json
from datetime import date
from zoneinfo import ZoneInfo

import pytest
import sqlalchemy as sa

from models.core.settings import lab_settings
from models.exposure import figures_ops
from models.exposure.tables import Investigation
from models.people.tables import Role
from tests.conftest import LAB_NOW
from webapp.slots import Attention, Registration, Severity, attention

ON = date(2026, 11, 15)  # day 46 of the 92-day fourth quarter: half of it has gone
OCTOBER = {"wear_start": date(2026, 10, 1), "wear_end": date(2026, 10, 31)}
KEYS = {"quantity", "location", "period", "start", "end", "dose_msv", "limit_msv", "fraction",
        "level", "projected_msv"}


def _show(app, *args):
    return app.test_cli_runner().invoke(args=["exposure", "show", *args])


def _rows(app, login, on):
    result = _show(app, "--person", login, "--on", on, "--json")
    assert result.exit_code == 0, result.output
    return json.loads(result.output)


def _row(rows, quantity, location, period):
    return next(r for r in rows if (r["quantity"], r["location"], r["period"]) ==
                (quantity, location, period))


def test_show_json_splits_a_wear_period_across_the_new_year(app, make_person, make_dose,
                                                            use_limit_set):
    use_limit_set("icrp103")
    person = make_person("ada")
    # 31 days, both ends inclusive
    make_dose(person, value=3.1, wear_start=date(2025, 12, 15), wear_end=date(2026, 1, 14))
    first_year = _row(_rows(app, "ada", "2025-12-31"), "Hp(10)", "whole_body", "year")
    assert first_year["start"] == "2025-01-01" and first_year["end"] == "2025-12-31"
    assert first_year["dose_msv"] == pytest.approx(3.1 * 17 / 31)  # 15-31 December: 17 days
    rows = _rows(app, "ada", "2026-01-31")
    next_year = _row(rows, "Hp(10)", "whole_body", "year")
    assert next_year["dose_msv"] == pytest.approx(3.1 * 14 / 31)  # 1-14 January: 14 days
    assert next_year["limit_msv"] == 50.0  # ICRP Publication 103, Table 6: 50 mSv in one year
    assert next_year["fraction"] == pytest.approx(1.4 / 50)
    assert next_year["level"] == "below_1"
    # One month of the year has gone (31 of 365 days): the projection scales the rate so far.
    assert next_year["projected_msv"] == pytest.approx(1.4 * 365 / 31)
    month = _row(rows, "Hp(10)", "whole_body", "month")
    assert month["limit_msv"] is None and month["fraction"] is None
    assert month["level"] == "no_limit"  # ICRP 103 has no monthly rule: nothing assessed
    for row in rows:
        assert KEYS <= set(row)
        assert row["level"] in {"below_1", "level_1", "level_2", "limit_reached", "no_limit", "no_result"}
    assert {r["period"] for r in rows} == {"year", "rolling_12_months", "quarter", "month",
                                           "five_year_block", "rolling_five_years"}


def test_show_json_gives_the_level_reached(app, make_person, make_dose, use_limit_set):
    use_limit_set("icrp103")
    make_dose(make_person("ada"), value=1.5, **OCTOBER)
    quarter = _row(_rows(app, "ada", "2026-10-31"), "Hp(10)", "whole_body", "quarter")
    # common practice: 1.25 mSv Hp(10) in a quarter is level I (REFERENCE.md, investigation levels)
    assert quarter["level"] == "level_1"
    assert quarter["dose_msv"] == pytest.approx(1.5)


def test_show_prints_a_table_with_the_policies_in_force(app, make_person, make_dose,
                                                        use_limit_set):
    use_limit_set("icrp103")
    make_dose(make_person("ada", name="Ada Example"), value=1.5, **OCTOBER)
    result = _show(app, "--person", "ada", "--on", "2026-10-31")
    assert result.exit_code == 0, result.output
    text = result.output
    assert "Ada Example (ada) on 2026-10-31" in text
    assert "ICRP 103 (2007) with the ICRP 2011 lens statement" in text
    assert "Spread each record over its wear days" in text and "counts as zero" in text
    assert "not the official dose record" in text
    header = next(line for line in text.splitlines() if line.startswith("For "))
    quarter = next(line for line in text.splitlines()
                   if line.startswith("whole body, Hp(10)") and " calendar quarter " in line)
    assert "Hp(10)" in quarter and "whole body" in quarter
    assert "1.500" in quarter and "level I" in quarter
    # Aligned: the dose column ends where its heading ends.
    assert quarter.index("1.500") + len("1.500") == header.index("mSv", header.index("Dose")) + 3


def test_show_refuses_an_unknown_login_and_a_bad_date(app, make_person):
    make_person("ada")
    unknown = _show(app, "--person", "nobody", "--on", "2026-10-31")
    assert unknown.exit_code != 0 and "No person has the login 'nobody'" in unknown.output
    bad = _show(app, "--person", "ada", "--on", "31/10/2026")
    assert bad.exit_code != 0 and "--on" in bad.output


def test_show_defaults_to_today_in_the_lab_time_zone(app, session, make_person):
    make_person("ada")
    lab_settings(session).timezone = "Pacific/Kiritimati"
    session.commit()
    result = _show(app, "--person", "ada", "--json")
    assert result.exit_code == 0, result.output
    month = next(r for r in json.loads(result.output) if r["period"] == "month")
    today = LAB_NOW.astimezone(ZoneInfo("Pacific/Kiritimati")).date()
    assert month["start"] == today.replace(day=1).isoformat()


class TestReview:
    """`flask exposure review` with mail going to a real SMTP server on loopback."""

    @pytest.fixture
    def app_config(self, mail_app_config):
        return mail_app_config

    def test_each_new_investigation_mails_the_person_and_the_officer_once(
            self, app, session, smtp_server, make_person, make_dose, use_limit_set):
        _, mailbox = smtp_server
        use_limit_set("icrp103")
        make_person("rso", roles=(Role.SAFETY_OFFICER,), email="rso@example.org")
        person = make_person("ada", name="Ada Example", email="ada@example.org")
        make_dose(person, value=1.5, **OCTOBER)
        # the badge's Hp(0.07) reads nothing: the lens, which reads it, stays below its levels
        make_dose(person, value=0.0, quantity="Hp(0.07)", **OCTOBER)
        runner = app.test_cli_runner()
        result = runner.invoke(args=["exposure", "review", "--on", "2026-11-30"])
        assert result.exit_code == 0, result.output
        assert "1 new investigation" in result.output
        assert sorted(m["To"] for m in mailbox.messages) == ["ada@example.org", "rso@example.org"]
        to_officer = next(m for m in mailbox.messages if m["To"] == "rso@example.org")
        item = session.scalar(sa.select(Investigation))
        assert f"/exposure/investigations/{item.id}" in to_officer.get_content()
        assert "Ada Example" in to_officer["Subject"]
        assert "level I" in next(m for m in mailbox.messages if m["To"] == "ada@example.org")[
            "Subject"]
        again = runner.invoke(args=["exposure", "review", "--on", "2026-11-30"])
        assert "0 new investigation" in again.output
        assert len(mailbox.messages) == 2


@pytest.fixture
def crossing(session, make_person, make_dose, use_limit_set):
    """An open level I investigation of Ada's quarter."""
    from models.exposure.investigation_ops import raise_investigations
    from models.exposure.lab_ops import evaluate_lab

    use_limit_set("icrp103")
    person = make_person("ada", name="Ada Example")
    make_dose(person, value=1.5, **OCTOBER)
    # the badge's Hp(0.07) reads nothing: the lens, which reads it, stays below its levels
    make_dose(person, value=0.0, quantity="Hp(0.07)", **OCTOBER)
    (item,) = raise_investigations(session, evaluate_lab(session, ON))
    session.commit()
    return item


def test_the_person_concerned_cannot_open_their_own_investigation(session, login, crossing):
    assert login(crossing.person).get(f"/exposure/investigations/{crossing.id}").status_code == 403


def test_review_and_sign_off(session, make_person, login, crossing):
    client = login(make_person("rso", roles=(Role.SAFETY_OFFICER,)))
    url = f"/exposure/investigations/{crossing.id}"
    listing = client.get("/exposure/investigations/").get_data(as_text=True)
    assert "Ada Example" in listing and "Hp(10) whole body, calendar quarter from 2026-10-01" in listing
    page = client.get(url).get_data(as_text=True)
    assert "Hp(10) whole body, calendar quarter from 2026-10-01, level I" in page
    assert f'href="/exposure/person/{crossing.person_id}"' in page
    assert "During the window, 2026-10-01 to 2026-12-31" in page
    assert "No sessions logged in this window." in page
    refused = client.post(url, data={"questions": "Alignment?", "sign": "1"})
    assert refused.status_code == 200
    assert "Write the findings before signing off." in refused.get_data(as_text=True)
    session.refresh(crossing)
    assert crossing.questions is None and crossing.signed_off_at is None
    saved = client.post(url, data={"questions": "Alignment?", "findings": "Badge near tube.",
                                   "actions": "", "save": "1"})
    assert saved.status_code == 302
    session.refresh(crossing)
    assert crossing.findings == "Badge near tube." and crossing.signed_off_at is None
    signed = client.post(url, data={"questions": "Alignment?", "findings": "Badge near tube.",
                                    "actions": "Badge board moved.", "sign": "1"})
    assert signed.status_code == 302
    session.refresh(crossing)
    assert crossing.signed_off_at is not None and crossing.actions == "Badge board moved."
    read_only = client.get(url).get_data(as_text=True)
    assert "<textarea" not in read_only and "Signed off" in read_only
    late = client.post(url, data={"findings": "rewritten", "save": "1"})
    assert "can no longer change" in late.get_data(as_text=True)
    session.refresh(crossing)
    assert crossing.findings == "Badge near tube."


def test_the_attention_list_puts_doses_first_in_order_of_severity(
        session, monkeypatch, make_person, login, make_dose, use_limit_set):
    monkeypatch.setattr("webapp.exposure.views.lab_today", lambda: ON)
    use_limit_set("icrp103")
    # ICRP Publication 103, Table 6: 50 mSv in a year; common practice quarterly levels 1.25 / 3.75
    for login_name, value in [("projected", 1.0), ("one", 1.5), ("two", 4.0), ("limit", 60.0),
                              ("calm", 0.1)]:
        make_dose(make_person(login_name, name=f"Name {login_name}"), value=value, **OCTOBER)
    session.add(Investigation(person_id=make_person("old", name="Name old").id,
                              series="effective", quantity="Hp(10)", location="whole_body",
                              period="quarter", period_start=date(2026, 7, 1), level="level_1",
                              dose_msv=1.3))
    session.commit()
    other = Attention(Severity.OUT_OF_SERVICE, "Name instrument out of service", "/x", "")
    monkeypatch.setattr(attention, "entries", [*attention.entries,
                                               Registration(0, frozenset(), "test", lambda: [other])])
    page = login(make_person("rso", roles=(Role.SAFETY_OFFICER,))).get("/")
    html = page.get_data(as_text=True)
    order = ["Name limit", "Name two", "Name one", "Name projected", "Investigation open: Name old",
             "Name instrument"]
    positions = [html.index(name) for name in order]
    assert positions == sorted(positions)
    assert "Name calm" not in html
    assert "Name one: Hp(10) whole body, calendar quarter: 1.500 mSv, level I" in html
    assert ("Name projected: Hp(10) whole body, calendar quarter: 1.000 mSv, projected to reach level I "
            "by its end") in html
    assert 'href="/exposure/person/' in html


def test_the_home_page_reads_stored_figures_and_a_dose_change_evaluates_its_person_only(
        session, monkeypatch, make_person, login, make_dose):
    person = make_person("ada")
    client = login(make_person("rso", roles=(Role.SAFETY_OFFICER,)))
    client.get("/")
    calls = []
    real = figures_ops.evaluate_lab
    monkeypatch.setattr(figures_ops, "evaluate_lab", lambda *a: calls.append(a[2:]) or real(*a))
    client.get("/")
    client.get("/")
    assert calls == []
    make_dose(person, value=1.0, **OCTOBER)
    client.get("/")
    assert calls == [([person.id],)]


def test_the_attention_list_follows_the_review(session, monkeypatch, make_person, make_dose, use_limit_set, app):
    from models.exposure.investigation_ops import raise_investigations, sign_off
    from models.exposure.lab_ops import evaluate_lab

    monkeypatch.setattr("webapp.exposure.views.lab_today", lambda: ON)
    use_limit_set("icrp103")
    officer = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    ada = make_person("ada", name="Ada Example")
    # Hp(10) 1.5 mSv and Hp(0.07) 2.0 mSv in October: the effective dose and the lens (read from
    # Hp(0.07)) are both past the quarterly level I of 1.25 mSv (common practice; lens 1.25 x 50 / 50).
    make_dose(ada, value=1.5, **OCTOBER)
    make_dose(ada, value=2.0, quantity="Hp(0.07)", **OCTOBER)

    def lines():
        with app.test_request_context():
            return [line for line in attention.collect()
                    if line.text.startswith("Ada Example") and line.label != "projected"]

    assert sorted((line.label, line.text.split(":")[1].strip()) for line in lines()) == [
        ("level I", "Hp(10) whole body, calendar quarter"), ("level I", "lens from Hp(0.07) whole body, calendar quarter")]
    for item in raise_investigations(session, evaluate_lab(session, ON)):
        item.findings, item.actions = "Badge left near the tube.", "Badge rack moved."
        sign_off(session, item, officer)
    session.commit()
    assert {line.label for line in lines()} == {"reviewed"}
    # 2.5 mSv more Hp(10) in November: 4.0 in the quarter, past level II (3.75): a new line.
    make_dose(ada, value=2.5, wear_start=date(2026, 11, 1), wear_end=date(2026, 11, 14))
    # the badge's Hp(0.07) reads nothing in November, so the lens stays at 2.0 (reviewed)
    make_dose(ada, value=0.0, quantity="Hp(0.07)", wear_start=date(2026, 11, 1), wear_end=date(2026, 11, 14))
    labels = {line.text.split(":")[1].strip(): line.label for line in lines()}
    assert labels["Hp(10) whole body, calendar quarter"] == "level II"
    assert labels["lens from Hp(0.07) whole body, calendar quarter"] == "reviewed"
