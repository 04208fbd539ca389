"""Pages read the stored evaluation: a rolled-back change leaves them as they were, and a change
made through one app instance shows through another on its next request."""
import json
from datetime import date

from models.doses.record_ops import add_dose_record
from models.exposure.investigation_ops import review_after_dose_change
from models.people.tables import Role
from tests.conftest import LAB_TODAY, PASSWORD, base_config
from tests.models.exposure.test_figures import entry
from webapp import create_app
from webapp.extensions import db

OCTOBER = {"wear_start": date(2026, 10, 1), "wear_end": date(2026, 10, 31)}
NOVEMBER = {"wear_start": date(2026, 11, 1), "wear_end": date(2026, 11, 30)}
# common practice: 1.25 mSv Hp(10) in a quarter is level I (REFERENCE.md, investigation levels)
LEVEL_ONE_LINE = "Name ada: Hp(10) whole body, calendar quarter: 1.500 mSv, level I"


def quarter_dose(app, login: str) -> float:
    """The person's Hp(10) whole-body dose this quarter, from `flask exposure show --json`."""
    result = app.test_cli_runner().invoke(args=["exposure", "show", "--person", login, "--json"])
    assert result.exit_code == 0, result.output
    return next(r["dose_msv"] for r in json.loads(result.output)
                if r["series"] == "effective" and r["period"] == "quarter")


def test_a_rolled_back_dose_change_leaves_every_page_as_it_was(
        app, session, make_person, make_dose, make_instrument, login, use_limit_set):
    use_limit_set("icrp103")
    ada = make_person("ada", name="Name ada")
    make_dose(ada, value=1.5, **OCTOBER)
    officer = login(make_person("rso", roles=(Role.SAFETY_OFFICER,)))
    assert LEVEL_ONE_LINE in officer.get("/").get_data(as_text=True)

    # A change evaluated in its transaction (the review stores the figures), then rolled back.
    add_dose_record(session, entry(ada, 60.0, **NOVEMBER))
    assert review_after_dose_change(session, LAB_TODAY)  # 61.5 mSv: over the annual limit
    session.rollback()
    make_instrument()  # a later write, which on SQLite takes the rolled-back ids again

    home = officer.get("/").get_data(as_text=True)
    assert LEVEL_ONE_LINE in home and "61.500" not in home
    page = officer.get(f"/exposure/person/{ada.id}").get_data(as_text=True)
    assert "1.500" in page and "61.500" not in page
    assert quarter_dose(app, "ada") == 1.5


def test_a_dose_saved_through_one_app_instance_shows_on_the_others_next_request(
        app, database_url, session, make_person, make_dose, login):
    ada = make_person("ada")
    make_dose(ada, value=0.42, **OCTOBER)
    officer = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    first = login(officer)
    other_app = create_app(base_config(database_url))
    second = other_app.test_client()
    assert second.post("/login", data={"login": "rso", "password": PASSWORD}).status_code == 302
    page = f"/exposure/person/{ada.id}"
    for client in (first, second):
        text = client.get(page).get_data(as_text=True)
        assert "0.420" in text and "0.790" not in text
    saved = first.post("/doses/new", data={
        "person": ada.id, "dosimeter": "", "wear_start": "2026-11-01", "wear_end": "2026-11-30",
        "quantity": "Hp(10)", "location": "whole_body", "result": "measured", "value": "0.37",
        "unit": "mSv", "mrd": "", "source": "dosimetry_report", "basis": ""}, follow_redirects=True)
    assert "Dose record saved" in saved.get_data(as_text=True)
    # Hp(10) this quarter: 0.42 (October) + 0.37 (November) = 0.79 mSv, on both instances.
    for client in (second, first):
        assert "0.790" in client.get(page).get_data(as_text=True)
    with other_app.app_context():
        db.engine.dispose()
