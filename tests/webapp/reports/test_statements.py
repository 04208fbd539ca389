"""Annual dose statements: the figures of the exposure page, in a PDF, for the person and the officer."""
import io
import json
import zipfile
from datetime import date

import pytest
from pypdf import PdfReader

from models.people.tables import Role


def _text(data: bytes) -> str:
    return "\n".join(page.extract_text() for page in PdfReader(io.BytesIO(data)).pages)


@pytest.fixture
def dosed(make_person, make_dose, use_limit_set):
    use_limit_set("icrp103")
    ada = make_person("ada", name="Ada Example")
    # Hand-worked: 0.4 + 0.6 + 0.5 mSv Hp(10) in Q1 2025 gives 1.5 mSv for the year and the quarter.
    for month, value in ((1, 0.4), (2, 0.6), (3, 0.5)):
        end = date(2025, month, 28)
        make_dose(ada, wear_start=date(2025, month, 1), wear_end=end, value=value)
    return ada


def test_the_statement_matches_the_exposure_figures(app, dosed, tmp_path):
    out = tmp_path / "ada.pdf"
    result = app.test_cli_runner().invoke(args=["reports", "person", "ada", "--year", "2025", "--out", str(out)])
    assert result.exit_code == 0, result.output
    text = _text(out.read_bytes())
    shown = json.loads(app.test_cli_runner().invoke(
        args=["exposure", "show", "--person", "ada", "--on", "2025-12-31", "--json"]).output)
    year = next(r for r in shown if r["series"] == "effective" and r["period"] == "year")
    assert year["dose_msv"] == pytest.approx(1.5)
    assert "Annual dose statement 2025: Ada Example" in text
    assert "figures as on 2025-12-31" in text
    assert "1.500" in text  # the year's Hp(10), as the exposure page shows it
    assert "not the official dose record" in text
    assert "ICRP" in text  # the limit set in force is named
    assert "2025-01-01 – 2025-01-28" in text.replace("\n", " ")


def test_only_the_person_and_the_officer_get_it(dosed, make_person, login):
    url = f"/reports/person/{dosed.id}/2025.pdf"
    assert login(make_person("bo")).get(url).status_code == 403
    assert login(make_person("boss", roles=(Role.ADMIN,))).get(url).status_code == 403
    own = login(dosed).get(url)
    assert own.status_code == 200 and own.mimetype == "application/pdf"
    assert "no-store" in own.headers["Cache-Control"]
    officer = login(make_person("rso", roles=(Role.SAFETY_OFFICER,)))
    assert officer.get(f"/reports/person/{dosed.id}/9999.pdf").status_code == 404
    archive = zipfile.ZipFile(io.BytesIO(officer.get("/reports/statements/2025.zip").data))
    assert archive.namelist() == ["dose-statement-ada-2025.pdf"]
    assert login(dosed).get("/reports/statements/2025.zip").status_code == 403


def test_an_unknown_login_is_named(app, tmp_path):
    result = app.test_cli_runner().invoke(
        args=["reports", "person", "nobody", "--year", "2025", "--out", str(tmp_path / "x.pdf")])
    assert result.exit_code != 0 and "no person with login 'nobody'" in result.output


def test_a_past_year_states_the_rules_that_stood_then(app, dosed, tmp_path):
    changed = app.test_cli_runner().invoke(args=[
        "limits", "use", "euratom2013", "--from", "2026-06-01", "--reason", "Lab moved to the Directive"])
    assert changed.exit_code == 0, changed.output
    policies = app.test_cli_runner().invoke(args=[
        "limits", "policies", "--mrd", "half", "--from", "2026-06-01", "--reason", "Service advice"])
    assert policies.exit_code == 0, policies.output
    out = tmp_path / "ada.pdf"
    result = app.test_cli_runner().invoke(args=["reports", "person", "ada", "--year", "2025", "--out", str(out)])
    assert result.exit_code == 0, result.output
    text = " ".join(_text(out.read_bytes()).split())
    # 31 December 2025 stood under ICRP 103 with below-MRD results counted as zero.
    assert "ICRP 103" in text and "Euratom" not in text
    assert "counts as zero" in text and "half the MRD" not in text
