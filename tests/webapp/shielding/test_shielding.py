"""The shielding page, its chart, `flask shielding estimate` and "what would it take" on a failed survey."""
import json

import pytest
import sqlalchemy as sa

from models.people.tables import Role
from models.surveys.tables import Survey, SurveyPoint
from webapp.demo.lab import DEMO_PASSWORD, FAILED_POINT, SAFETY_OFFICER

MATERIAL_LABELS = ("Lead", "Steel (as iron)", "Aluminium", "Copper", "Brass", "Lead glass", "PMMA (acrylic)",
                   "Polycarbonate")


@pytest.fixture
def rso(make_person):
    return make_person("rso", roles=(Role.SAFETY_OFFICER,))


def _failed_point(session, rso, make_instrument, make_meter):
    """A failed survey of a Cu tube at 50 kV: 6.3 uSv/h net against 2.5."""
    from datetime import UTC, date, datetime

    from models.surveys.survey_ops import PointInput, SurveyInput, record_survey

    instrument, meter = make_instrument(), make_meter(calibrated_on=date(2026, 1, 15))
    at = datetime(2026, 3, 2, 10, tzinfo=UTC)
    survey = record_survey(session, SurveyInput(
        instrument=instrument, performed_at=at, survey_date=at.date(), performed_by=rso,
        trigger="periodic", kv=50.0, ma=30.0, meter=meter, unit="uSv/h",
        points=[PointInput("Top panel", 6.4, 0.1)]), now=at)
    session.commit()
    return survey.points[0]


def test_only_the_safety_officer_opens_the_page(login, make_person):
    operator = make_person("op", roles=(Role.OPERATOR,))
    assert login(operator).get("/shielding/?anode=Cu&kv=50&reading=40&target_usv_h=2.5").status_code == 403


def test_page_gives_a_thickness_per_material_with_its_assumptions(login, rso):
    page = login(rso).get("/shielding/?anode=Cu&kv=50&reading=40&unit=uSv/h&distance_cm=5"
                          "&target_usv_h=2.5&margin=1").data.decode()
    assert "What it would take" in page and "a 16-fold cut" in page  # 40 / 2.5
    for label in MATERIAL_LABELS:
        assert f"<td>{label}</td>" in page
    assert "not a shielding design" in page and "build-up" in page and "survey" in page
    assert "/shielding/chart.svg?" in page


def test_planned_current_and_distance_scale_the_rate_to_shield(login, rso):
    page = login(rso).get("/shielding/?anode=Cu&kv=50&reading=40&unit=uSv/h&distance_cm=5&target_usv_h=2.5"
                          "&margin=1&ma=30&planned_ma=60&at_cm=10&materials=Pb").data.decode()
    # 40 x 60/30 x (5/10)^2 = 40 x 2 / 4 = 20 uSv/h, an 8-fold cut to 2.5.
    assert "<strong>20 µSv/h</strong>" in page and "a 8-fold cut" in page
    assert "inverse square" in page and "extended source" in page
    assert "<td>Lead</td>" in page and "<td>Aluminium</td>" not in page


def test_a_reading_below_the_target_needs_nothing(login, rso):
    page = login(rso).get("/shielding/?anode=Cu&kv=50&reading=1&unit=uSv/h&distance_cm=5&target_usv_h=2.5"
                          "&margin=1&materials=Pb").data.decode()
    assert "no added shielding is needed" in page


@pytest.mark.parametrize(
    ("query", "field", "message"),
    [
        ("kv=abc", "kv", "Enter a number."),
        ("kv=500", "kv", "Between 5 and 160 kV"),
        ("kv=2", "kv", "Between 5 and 160 kV"),
        ("kv=nan", "kv", "Enter a number."),
        ("reading=inf", "reading", "Enter a number."),
        ("reading=-1", "reading", "Zero or more"),
        ("margin=0.5", "margin", "Between 1 and 1000."),
        ("planned_ma=5", "planned_ma", "Enter the tube current during the reading too."),
        ("kv=5%00", "kv", "Enter a number."),
    ],
)
def test_bad_input_is_named_beside_its_field(login, rso, query, field, message):
    base = {"anode": "Cu", "kv": "50", "reading": "40", "unit": "uSv/h", "distance_cm": "5",
            "target_usv_h": "2.5", "margin": "1"}
    name = query.split("=")[0]
    base.pop(name, None)
    response = login(rso).get(f"/shielding/?{query}&" + "&".join(f"{k}={v}" for k, v in base.items()))
    assert response.status_code == 200
    page = response.data.decode()
    assert message in page and "What it would take" not in page


def test_chart_is_svg_and_says_why_when_there_is_none(login, rso):
    client = login(rso)
    ok = client.get("/shielding/chart.svg?anode=Cu&kv=50&reading=40&unit=uSv/h&distance_cm=5"
                    "&target_usv_h=2.5&margin=1&materials=Pb&materials=Fe")
    assert ok.status_code == 200 and ok.mimetype == "image/svg+xml"
    assert b"Lead" in ok.data and b"Steel (as iron)" in ok.data
    refused = client.get("/shielding/chart.svg?anode=Cu&kv=999")
    assert refused.mimetype == "image/svg+xml" and b"No chart" in refused.data and b"Lead" not in refused.data


def test_failed_survey_page_shows_what_it_would_take(login, session, rso, make_instrument, make_meter):
    point = _failed_point(session, rso, make_instrument, make_meter)
    page = login(rso).get(f"/surveys/{point.survey_id}").data.decode()
    assert "What would it take" in page
    for label in MATERIAL_LABELS:
        assert f"<td>{label}</td>" in page
    assert "not a shielding design" in page and "already hardened" in page
    assert f"/shielding/?point={point.id}" in page


def test_cli_json_for_scripts(app):
    result = app.test_cli_runner().invoke(args=[
        "shielding", "estimate", "--anode", "Cu", "--kv", "50", "--reading", "40", "--unit", "uSv/h",
        "--target", "2.5", "--material", "Pb", "--material", "Fe", "--json"])
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert data["reduction"] == 16.0  # 40 / 2.5
    assert [m["key"] for m in data["materials"]] == ["Pb", "Fe"]
    lead, steel = data["materials"]
    # A 16-fold cut lies between one and two tenth-value layers (10 < 16 < 100).
    for material in (lead, steel):
        assert material["tvl_mm"] < material["added_mm"] < 2 * material["tvl_mm"]
    assert data["assumptions"] and "not a shielding design" in data["caution"]
    # No --distance: the output does not claim one.
    assert data["how"] == ["40 µSv/h, distance not given"]


@pytest.mark.parametrize(
    ("args", "named"),
    [
        (["--kv", "50", "--reading", "40", "--target", "2.5"], "--anode"),
        (["--anode", "Cu", "--kv", "500", "--reading", "40", "--target", "2.5"], "--kv"),
        (["--anode", "Cu", "--kv", "50", "--reading", "40", "--target", "2.5", "--material", "gold"],
         "--material"),
        (["--point", "999999"], "--point"),
        (["--anode", "Cu", "--kv", "50", "--reading", "40", "--target", "2.5", "--planned-ma", "5"],
         "needs the current during the reading"),
        (["--anode", "Cu", "--kv", "50", "--reading", "40", "--target", "2.5", "--at", "30"], "--distance"),
    ],
)
def test_cli_refuses_bad_input_naming_the_option(app, args, named):
    result = app.test_cli_runner().invoke(args=["shielding", "estimate", *args])
    assert result.exit_code == 2
    assert named in result.output


def test_demo_failed_point_gets_a_thickness_per_material_from_command_and_page(app, session):
    runner = app.test_cli_runner()
    assert runner.invoke(args=["demo", "load", "--if-empty", "--today", "2026-05-14"]).exit_code == 0
    point = session.scalar(sa.select(SurveyPoint).join(Survey).where(
        Survey.passed.is_(False), SurveyPoint.location == FAILED_POINT[0]))
    # The demo's point: 6.4 read, 0.1 background, meter factor 1: 6.3 uSv/h net against 2.5.
    assert point.net_usv_h == pytest.approx(6.3)
    result = runner.invoke(args=["shielding", "estimate", "--point", str(point.id), "--json"])
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert (data["anode"], data["kv"], data["target_usv_h"]) == ("Cu", 50.0, 2.5)
    assert all(m["added_mm"] > 0 for m in data["materials"]) and len(data["materials"]) == 8
    assert any("hardened" in line for line in data["assumptions"])
    client = app.test_client()
    assert client.post("/login", data={"login": SAFETY_OFFICER, "password": DEMO_PASSWORD}).status_code == 302
    page = client.get(f"/shielding/?point={point.id}").data.decode()
    assert "What it would take" in page and "Assumptions" in page
    for label in MATERIAL_LABELS:
        assert f"<td>{label}</td>" in page
