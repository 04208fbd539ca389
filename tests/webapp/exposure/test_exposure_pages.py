"""The person's exposure page, its chart, the operator's gauges and the people overview."""
import csv
import io
import xml.etree.ElementTree as ElementTree
from dataclasses import replace
from datetime import date, timedelta

import pytest

from models.core.codes import Result
from models.core.settings import lab_settings
from models.doses.record_ops import amend_dose_record, entry_of
from models.exposure.tables import PregnancyDeclaration
from models.people.tables import Role
from tests.conftest import LAB_TODAY, put_in_force

D = date
RSO, ADMIN = (Role.SAFETY_OFFICER,), (Role.ADMIN,)


@pytest.fixture
def lab(session, make_person):
    """An operator, a colleague, the safety officer and an admin, under ICRP 103."""
    put_in_force(session, "icrp103")
    session.commit()
    return {"op": make_person("op"), "other": make_person("other"),
            "rso": make_person("rso", roles=RSO), "admin": make_person("admin", roles=ADMIN)}


def _this_month() -> dict:
    """A wear period from the first of this month to today (the pages show today's figures)."""
    today = LAB_TODAY
    return {"wear_start": today.replace(day=1), "wear_end": today}


def _as(client, login, person):
    client.post("/logout")
    return login(person)


def _amend(session, record, value, reason):
    """Correct a record by a new version."""
    version = amend_dose_record(session, record, replace(entry_of(record), value=value), reason)
    session.commit()
    return version


def _page(client, person, on=None):
    suffix = f"?on={on}" if on else ""
    return client.get(f"/exposure/person/{person.id}{suffix}")


def test_logged_out_people_are_sent_to_log_in(client, lab):
    response = client.get(f"/exposure/person/{lab['op'].id}")
    assert response.status_code == 302 and "/login" in response.headers["Location"]


def test_me_leads_to_my_own_page(client, login, lab):
    _as(client, login, lab["op"])
    response = client.get("/exposure/me")
    assert response.headers["Location"].endswith(f"/exposure/person/{lab['op'].id}")


def test_a_wear_period_across_new_year_is_prorated_on_the_page(client, login, lab, make_dose):
    make_dose(lab["op"], value=3.1, wear_start=D(2025, 12, 15), wear_end=D(2026, 1, 14))
    _as(client, login, lab["rso"])
    # 17 of the 31 wear days are in 2025 and 14 in 2026 (PRODUCT.md section 3, proration)
    december = _page(client, lab["op"], "2025-12-31").data.decode()
    assert "1.700 mSv" in december and "2025-01-01 to 2025-12-31" in december
    january = _page(client, lab["op"], "2026-01-31").data.decode()
    assert "1.400 mSv" in january and "2026-01-01 to 2026-12-31" in january


def test_display_in_mrem(client, login, lab, make_dose, session):
    make_dose(lab["op"], value=3.1, wear_start=D(2025, 12, 15), wear_end=D(2026, 1, 14))
    lab_settings(session).display_unit = "mrem"
    session.commit()
    _as(client, login, lab["rso"])
    page = _page(client, lab["op"], "2025-12-31").data.decode()
    assert "170.0 mrem" in page  # 1 mSv = 100 mrem (10 CFR 20.1004)
    assert "5000 mrem" in page  # the 50 mSv annual limit, ICRP Publication 103, Table 6


def test_policies_and_limit_set_are_shown(client, login, lab):
    _as(client, login, lab["op"])
    page = _page(client, lab["op"]).data.decode()
    for words in ("ICRP 103 (2007) with the ICRP 2011 lens statement",
                  "Spread each record over its wear days",
                  "Below the minimum reportable dose counts as zero",
                  "Lens from Hp(0.07) whole body", "not the official dose record"):
        assert words in page


def test_missing_results_and_versions_are_shown(client, login, lab, make_dose, session):
    first = make_dose(lab["op"], value=5.0, wear_start=D(2026, 3, 1), wear_end=D(2026, 3, 31))
    _amend(session, first, 0.5, "Badge read for the wrong wearer")
    make_dose(lab["op"], value=None, wear_start=D(2026, 4, 1), wear_end=D(2026, 4, 30), result=Result.LOST)
    _as(client, login, lab["rso"])
    page = _page(client, lab["op"], "2026-04-30").data.decode()
    assert "1 result missing" in page
    assert "5.000 mSv" in page and "0.500 mSv" in page
    assert "version 1, replaced" in page and "Correction: Badge read for the wrong wearer" in page


def test_strong_caution_at_an_investigation_level(client, login, lab, make_dose, today):
    # the lab's zone is UTC in tests; the operator's page shows today
    # common practice: 1.25 mSv Hp(10) in a quarter is level I (REFERENCE.md)
    make_dose(lab["op"], value=1.5, wear_start=today.replace(day=1), wear_end=today)
    _as(client, login, lab["op"])
    page = _page(client, lab["op"]).data.decode()
    assert "Dose at or above an investigation level." in page
    assert "Tell the radiation safety officer" in page
    _as(client, login, lab["rso"])
    quiet = _page(client, lab["op"], today.replace(day=1) - timedelta(days=1)).data.decode()
    assert "Dose at or above an investigation level." not in quiet


def test_a_bad_date_gives_a_message_not_an_error(client, login, lab):
    _as(client, login, lab["rso"])
    response = _page(client, lab["op"], "2026-13-45")
    assert response.status_code == 200
    assert "is not a date" in response.data.decode()
    assert "Choose a date between" in _page(client, lab["op"], "0001-01-01").data.decode()
    assert client.get(f"/exposure/person/{lab['op'].id}/chart.svg?on=nonsense").status_code == 200


def test_an_operator_cannot_move_the_date(client, login, lab, make_dose):
    make_dose(lab["op"], value=3.1, wear_start=D(2025, 12, 15), wear_end=D(2026, 1, 14))
    _as(client, login, lab["op"])
    page = _page(client, lab["op"], "2025-12-31").data.decode()
    assert "Evaluated on 2025-12-31" not in page


def _svg(response):
    assert response.mimetype == "image/svg+xml"
    return ElementTree.fromstring(response.data)


def test_chart_is_svg_with_the_limit_line(client, login, lab, make_dose, session):
    make_dose(lab["op"], value=3.1, wear_start=D(2025, 12, 15), wear_end=D(2026, 1, 14))
    _as(client, login, lab["op"])
    root = _svg(client.get(f"/exposure/person/{lab['op'].id}/chart.svg"))
    assert root.tag.endswith("svg")
    text = ElementTree.tostring(root, encoding="unicode")
    assert 'id="annual-limit"' in text
    assert "Annual limit 50 mSv" in text  # ICRP Publication 103, Table 6
    assert "Monthly dose (mSv)" in text and "Year to date (mSv)" in text
    lab_settings(session).display_unit = "mrem"
    session.commit()
    text = client.get(f"/exposure/person/{lab['op'].id}/chart.svg").data.decode()
    assert "Annual limit 5000 mrem" in text  # 1 mSv = 100 mrem (10 CFR 20.1004)


def test_pregnancy_shows_only_to_the_person_and_the_safety_officer(client, login, lab, session,
                                                                   make_dose):
    session.add(PregnancyDeclaration(person_id=lab["op"].id, declared_on=D(2026, 1, 10)))
    session.commit()
    make_dose(lab["op"], value=0.31, wear_start=D(2026, 1, 1), wear_end=D(2026, 1, 31))
    _as(client, login, lab["op"])
    own = _page(client, lab["op"]).data.decode()
    assert "Declared pregnancy" in own and "Embryo/fetus" in own
    assert "Embryo" not in client.get("/").data.decode()  # the home gauges leave it out
    _as(client, login, lab["rso"])
    assert "Declared pregnancy" in _page(client, lab["op"], "2026-02-28").data.decode()
    for url in ("/exposure/people", "/exposure/people.csv", "/"):
        text = client.get(url).data.decode().lower()
        assert "pregnan" not in text and "fetus" not in text and "fetal" not in text
    for viewer in ("other", "admin"):
        _as(client, login, lab[viewer])
        assert _page(client, lab["op"]).status_code == 403
        for url in ("/", "/exposure/people", "/exposure/people.csv"):
            assert "pregnan" not in client.get(url).data.decode().lower()


def test_operator_home_shows_my_gauges(client, login, lab, make_dose):
    make_dose(lab["op"], value=5.0, **_this_month())
    _as(client, login, lab["op"])
    home = client.get("/").data.decode()
    assert "My dose this year" in home and "My exposure page" in home
    for series in ("Whole body, Hp(10)", "Skin, Hp(0.07)", "Lens of the eye", "Left hand",
                   "Right hand"):
        assert series in home
    _as(client, login, lab["admin"])
    assert "My dose this year" not in client.get("/").data.decode()


def test_a_series_without_a_dosimeter_result_shows_no_dose_and_no_level(client, login, lab, make_dose):
    # A whole-body Hp(10) result only: the hands wore nothing, so neither the home gauges nor the
    # exposure page may show them as 0 mSv "below level I".
    make_dose(lab["op"], value=5.0, **_this_month())
    _as(client, login, lab["op"])
    for page in (client.get("/").data.decode(), _page(client, lab["op"]).data.decode()):
        right_hand = page[page.index("Right hand"):]
        right_hand = right_hand[:right_hand.index("</tr>")]
        assert "no dosimeter result" in right_hand and "below level I" not in right_hand
        assert "0.000 mSv" not in right_hand and "—" in right_hand


def test_people_overview_is_for_the_safety_officer(client, login, lab, make_dose):
    make_dose(lab["op"], value=2.0, **_this_month())
    make_dose(lab["other"], value=0.5, **_this_month())
    _as(client, login, lab["rso"])  # the others get 403: tests/webapp/test_route_matrix.py
    page = client.get("/exposure/people?sort=effective_year&order=desc").data.decode()
    assert page.index("Person op") < page.index("Person other")
    page = client.get("/exposure/people?sort=effective_year&order=asc").data.decode()
    assert page.index("Person other") < page.index("Person op")
    response = client.get("/exposure/people.csv")
    assert response.mimetype == "text/csv"
    rows = {row["login"]: row for row in csv.DictReader(io.StringIO(response.data.decode()))}
    assert set(rows) == {"op", "other"}  # operators and people with records; not the admin
    assert float(rows["op"]["effective_year_dose_msv"]) == pytest.approx(2.0, abs=1e-4)
    assert rows["op"]["effective_year_limit_msv"] == "50"  # ICRP Publication 103, Table 6
    # Hp(10) only, and no ring: the skin and hand columns give no dose and no level, in the CSV and on
    # the page (year and quarter of each).
    assert (rows["op"]["worst_hand_year_dose_msv"], rows["op"]["worst_hand_year_level"]) == ("", "no_result")
    op_line = page[page.index("Person op"):]
    assert op_line[:op_line.index("</tr>")].count('<span class="muted">no result</span>') == 4
