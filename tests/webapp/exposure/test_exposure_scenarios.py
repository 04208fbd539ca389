"""The issue's scenarios, worked by hand, through `flask exposure show --json` and the person's page."""
import json
from datetime import date

import pytest

from models.exposure.pregnancy_ops import declare
from models.people.tables import Role
from webapp.extensions import db

ON = date(2026, 3, 31)


def _month(month: int) -> dict:
    """Wear period of one calendar month of 2026."""
    ends = {1: 31, 2: 28, 3: 31, 4: 30}
    return {"wear_start": date(2026, month, 1), "wear_end": date(2026, month, ends[month])}


def _rows(app, login: str, on: date) -> list[dict]:
    result = app.test_cli_runner().invoke(
        args=["exposure", "show", "--person", login, "--on", on.isoformat(), "--json"])
    assert result.exit_code == 0, result.output
    return json.loads(result.output)


def _row(rows, series: str, period: str) -> dict:
    return next(r for r in rows if (r["series"], r["period"]) == (series, period))


def test_lens_year_counts_the_stand_in_where_no_eye_dosimeter_was_worn(
        app, make_person, make_dose, use_limit_set, login):
    use_limit_set("euratom2013")
    person = make_person("ada")
    for month in (1, 2, 3):
        make_dose(person, value=4.0, quantity="Hp(0.07)", **_month(month))
    make_dose(person, value=1.0, quantity="Hp(3)", location="eye", **_month(3))
    # January 4.0 + February 4.0 (Hp(0.07) whole body, no eye dosimeter) + March 1.0 (Hp(3)
    # worn every day of March) = 9.0 mSv; 2013/59/Euratom Art. 9(3)(a) lens limit 20 mSv a year.
    lens = _row(_rows(app, "ada", ON), "lens", "year")
    assert lens["dose_msv"] == pytest.approx(9.0)
    assert lens["limit_msv"] == 20.0
    assert lens["limit_set"] == "Council Directive 2013/59/Euratom"
    officer = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    page = login(officer).get(f"/exposure/person/{person.id}?on={ON.isoformat()}")
    assert page.status_code == 200
    assert "9.000" in page.data.decode()


def test_fetal_dose_takes_the_whole_body_badge_before_the_abdomen_dosimeter(
        app, make_person, make_dose, use_limit_set):
    use_limit_set("euratom2013")
    person = make_person("bea")
    declare(db.session, person.id, date(2026, 3, 1), today=date(2026, 3, 1))
    db.session.commit()
    make_dose(person, value=1.0, **_month(3))
    make_dose(person, value=0.9, **_month(4))
    make_dose(person, value=0.4, location="abdomen", **_month(4))
    # March 1.0 (whole body, no abdomen dosimeter) + April 0.4 (abdomen) = 1.4 mSv against the
    # 1 mSv of 2013/59/Euratom Art. 10(1): the limit is reached, not "below level I".
    fetus = _row(_rows(app, "bea", date(2026, 4, 30)), "fetus", "pregnancy")
    assert fetus["dose_msv"] == pytest.approx(1.4)
    assert fetus["level"] == "limit_reached"


@pytest.mark.parametrize(
    "key, year_limit, year_level, quarter_level",
    [
        # ICRP 103 Table 6 has no apprentice row: nothing assessed, and the rows say so.
        ("icrp103", None, "no_limit", "no_limit"),
        # 2013/59/Euratom Art. 11(3)(c): 150 mSv a year to the extremities of apprentices 16-18;
        # 140 < 150. The common-practice quarterly level II is 3.75 x 150 / 20 = 28.125 mSv.
        ("euratom2013", 150.0, "below_1", "level_2"),
        # 10 CFR 20.1207: minors 10 % of the adult 500 mSv (20.1201(a)(2)(ii)) = 50 mSv; 140 >= 50.
        # Quarterly level II 3.75 x 50 / 50 = 3.75 mSv.
        ("cfr10_20", 50.0, "limit_reached", "level_2"),
        # IRR17 Schedule 3: trainees' extremities 150 mSv a year; level II 3.75 x 150 / 20.
        ("irr17", 150.0, "below_1", "level_2"),
    ],
)
def test_a_trainee_with_140_msv_to_one_hand_by_february(app, make_person, make_dose, use_limit_set,
                                                       key, year_limit, year_level, quarter_level):
    use_limit_set(key)
    tom = make_person("tom", category="trainee")
    make_dose(tom, value=140.0, quantity="Hp(0.07)", location="right_hand",
              wear_start=date(2026, 1, 1), wear_end=date(2026, 2, 28))
    rows = _rows(app, "tom", date(2026, 2, 28))
    year, quarter = _row(rows, "right_hand", "year"), _row(rows, "right_hand", "quarter")
    assert (year["limit_msv"], year["level"], quarter["level"]) == (year_limit, year_level, quarter_level)


def test_a_database_with_no_set_chosen_assesses_nothing_and_says_so(app, make_person, make_dose, login):
    person = make_person("ada")
    make_dose(person, value=2.0, **_month(1))
    rows = _rows(app, "ada", ON)
    assert {r["level"] for r in rows} == {"no_limit"}
    assert {r["limit_set"] for r in rows} == {"No limit set chosen"}
    officer = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    home = login(officer).get("/").data.decode()
    assert "No limit set is in force" in home


def test_every_page_answers_with_two_declarations_in_force_then_one(
        app, make_person, make_dose, use_limit_set, login):
    from models.exposure.pregnancy_ops import WITHDRAWN, end_declaration

    use_limit_set("icrp103")
    officer = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    first, second = make_person("ann"), make_person("eva")
    declarations = [declare(db.session, p.id, date(2026, 1, 10), today=date(2026, 1, 10))
                    for p in (first, second)]
    for p in (first, second):
        make_dose(p, value=0.2, **_month(1))
    db.session.commit()

    def pages_answer():
        for viewer, subject in ((officer, first), (officer, second), (first, first), (second, second)):
            client = login(viewer)
            for url in (f"/exposure/person/{subject.id}", f"/exposure/person/{subject.id}?on=2026-01-31",
                        f"/exposure/person/{subject.id}/chart.svg", f"/doses/person/{subject.id}/pregnancy",
                        "/exposure/me", "/"):
                assert client.get(url, follow_redirects=True).status_code == 200, (viewer.login, url)
        assert login(officer).get("/exposure/people").status_code == 200

    pages_answer()
    end_declaration(db.session, declarations[0], date(2026, 2, 1), WITHDRAWN, today=date(2026, 2, 1))
    db.session.commit()
    pages_answer()


def _declare(app, *args):
    return app.test_cli_runner().invoke(args=["people", "pregnancy", *args])


@pytest.mark.parametrize(
    "key, dates, expected_dose, expected_start",
    [
        # 10 CFR 20.1208(a), "during the entire pregnancy": conception 1 Jan, so January to April
        # count: 4 x 1.0 = 4.0 mSv.
        ("cfr10_20", ["--conception", "2026-01-01"], 4.0, "2026-01-01"),
        # No conception date: expected end 23 Sep 2026 less 266 days (38 weeks) = 31 Dec 2025
        # (1 Jan + 265 days is 23 Sep), so again January to April: 4.0 mSv.
        ("cfr10_20", ["--expected-end", "2026-09-23"], 4.0, "2025-12-31"),
        # ICRP 103 para 186 counts from the declaration on 1 April: April only, 1.0 mSv.
        ("icrp103", ["--conception", "2026-01-01"], 1.0, "2026-04-01"),
    ],
)
def test_a_declaration_after_months_of_dose(app, make_person, make_dose, use_limit_set,
                                             key, dates, expected_dose, expected_start):
    use_limit_set(key)
    person = make_person("cat")
    for month in (1, 2, 3, 4):
        make_dose(person, value=1.0, **_month(month))
    result = _declare(app, "cat", "--declared", "2026-04-01", *dates)
    assert result.exit_code == 0, result.output
    fetus = _row(_rows(app, "cat", date(2026, 4, 30)), "fetus", "pregnancy")
    assert fetus["dose_msv"] == pytest.approx(expected_dose)
    assert fetus["start"] == expected_start


def test_the_projection_runs_to_the_expected_end(app, make_person, make_dose, use_limit_set):
    use_limit_set("cfr10_20")
    person = make_person("cat")
    for month in (1, 2, 3, 4):
        make_dose(person, value=1.0, **_month(month))
    assert _declare(app, "cat", "--declared", "2026-04-01", "--expected-end", "2026-09-23").exit_code == 0
    fetus = _row(_rows(app, "cat", date(2026, 4, 30)), "fetus", "pregnancy")
    # 4.0 mSv in the 121 days 31 Dec 2025 - 30 Apr 2026, continued over the 267 days to 23 Sep:
    # 4.0 x 267 / 121 = 8.826 mSv, over the 5 mSv of 20.1208(a).
    assert fetus["end"] == "2026-09-23"
    assert fetus["projected_msv"] == pytest.approx(4.0 * 267 / 121)
    assert fetus["projected_level"] == "limit_reached"
    # local-choice levels: 5 x 1.25 / 50 = 0.125 and 5 x 3.75 / 50 = 0.375 mSv; 4.0 is past II
    assert fetus["level"] == "level_2"


@pytest.mark.parametrize("args, field", [
    (["--declared", "2026-04-01", "--conception", "2026-04-02"], "conception_on"),
    (["--declared", "2026-04-01", "--expected-end", "2026-03-01"], "expected_end_on"),
    (["--declared", "2100-01-01"], "declared_on"),
    (["--withdrawn", "2026-04-01"], "withdrawn"),
    ([], "--declared"),
])
def test_people_pregnancy_refuses_with_the_field_named(app, make_person, args, field):
    make_person("cat")
    result = _declare(app, "cat", *args)
    assert result.exit_code == 1 and field in result.output


@pytest.mark.parametrize(
    "monthly, may, limit, level",
    [
        # 1.2 mSv in each of January-April: 4.8 mSv by the declaration on 1 May, within 0.5 mSv of
        # 5 mSv, so 10 CFR 20.1208(d) allows 0.5 more: limit 4.8 + 0.5 = 5.3. With May's 0.3 the
        # fetus has 5.1 mSv: over 20.1208(a)'s 5 but inside the allowance; level II (0.375, local
        # choice) reached, not the limit.
        (1.2, 0.3, 4.8 + 0.5, "level_2"),
        # 0.75 a month: 3.0 by the declaration, not within 0.5 of 5: the limit stays 5 mSv and
        # 3.0 + 0.3 = 3.3 is at level II.
        (0.75, 0.3, 5.0, "level_2"),
        # 4.8 by the declaration and 0.6 in May: 5.4 > 5.3, the allowance is used up.
        (1.2, 0.6, 4.8 + 0.5, "limit_reached"),
    ],
)
def test_10_cfr_20_1208_d_allowance_after_a_late_declaration(app, make_person, make_dose, use_limit_set,
                                                             monthly, may, limit, level):
    use_limit_set("cfr10_20")
    person = make_person("dee")
    for month in (1, 2, 3, 4):
        make_dose(person, value=monthly, **_month(month))
    make_dose(person, value=may, wear_start=date(2026, 5, 1), wear_end=date(2026, 5, 31))
    assert _declare(app, "dee", "--declared", "2026-05-01", "--conception", "2026-01-01").exit_code == 0
    fetus = _row(_rows(app, "dee", date(2026, 5, 31)), "fetus", "pregnancy")
    assert fetus["dose_msv"] == pytest.approx(4 * monthly + may)
    assert fetus["limit_msv"] == pytest.approx(limit)
    assert fetus["level"] == level
    # The row cites the clause that set its limit: 20.1208(a), and 20.1208(d) where that raised it.
    assert "20.1208(a)" in fetus["clause"]
    assert ("20.1208(d)" in fetus["clause"]) == (limit != 5.0)
