"""The lab's year in figures, on a scenario worked by hand."""
import io
from datetime import UTC, date, datetime

import pytest
from pypdf import PdfReader

from models.core.codes import Result, Series, WorkerCategory
from models.exposure.lab_ops import evaluate_lab
from models.people.tables import Role
from models.reports.year_ops import dose_band, lab_year


@pytest.mark.parametrize(("dose", "below_mrd_only", "band"), [
    (0.0, True, 0),      # every result below the MRD
    (0.0, False, 1),     # a measured zero is still "up to 1 mSv"
    (1.0, False, 1),     # the edge belongs to the lower band: "up to 1"
    (1.001, False, 2),
    (6.0, False, 2),     # "over 1 to 6"
    (20.0, False, 3),    # "over 6 to 20"
    (20.5, False, 4),
])
def test_bands(dose, below_mrd_only, band):
    assert dose_band(dose, below_mrd_only) == band


@pytest.fixture
def year_2025(session, make_person, make_dose, make_instrument, make_session_entry, record_a_check,
              use_limit_set):
    use_limit_set("icrp103")
    quiet = make_person("quiet")
    make_dose(quiet, wear_start=date(2025, 3, 1), wear_end=date(2025, 3, 31), value=None,
              result=Result.BELOW_MRD, mrd=0.1)
    for login, value in (("b", 0.8), ("c", 1.0), ("d", 5.0), ("e", 7.0), ("f", 25.0)):
        make_dose(make_person(login), wear_start=date(2025, 5, 1), wear_end=date(2025, 5, 31), value=value)
    make_dose(make_person("t", category=WorkerCategory.TRAINEE), wear_start=date(2024, 5, 1),
              wear_end=date(2024, 5, 31), value=3.0)  # worn in 2024 only: not monitored in 2025
    pxrd = make_instrument(name="pxrd")
    rso = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    first = datetime(2025, 4, 1, 9, tzinfo=UTC)
    s1 = make_session_entry(pxrd, rso, started_at=first, ended_at=first.replace(hour=11), kv=40, ma=30,
                            beam_on_minutes=120)
    s1.alignment = True
    make_session_entry(pxrd, rso, started_at=first.replace(day=2), ended_at=first.replace(day=2, hour=10),
                       kv=20, ma=10, beam_on_minutes=60)
    session.commit()
    record_a_check(pxrd, rso, performed_at=datetime(2025, 1, 5, 9, tzinfo=UTC))
    record_a_check(pxrd, rso, performed_at=datetime(2025, 2, 20, 9, tzinfo=UTC))  # 46 days after: late
    record_a_check(pxrd, rso, fail=(0,), performed_at=datetime(2025, 3, 1, 9, tzinfo=UTC))  # 9 days: on time
    return evaluate_lab(session, date(2025, 12, 31))


def test_the_year_worked_by_hand(session, year_2025):
    figures = lab_year(session, 2025, year_2025, UTC)
    assert figures.people_by_category == {WorkerCategory.ADULT_WORKER: 6}
    # 0 + 0.8 + 1.0 + 5.0 + 7.0 + 25.0 = 38.8 person-mSv Hp(10); nobody measured Hp(0.07).
    assert figures.collective_msv[Series.EFFECTIVE] == pytest.approx(38.8)
    # below MRD: quiet; up to 1: b, c; over 1 to 6: d; over 6 to 20: e; over 20: f.
    assert figures.bands == [1, 2, 1, 1, 1]
    assert figures.highest_hp10_msv == pytest.approx(25.0)
    (pxrd,) = figures.instruments
    # 40 kV x 30 mA for 2 h = 2.4 kWh, 20 kV x 10 mA for 1 h = 0.2 kWh; 3 beam hours.
    assert (pxrd.sessions, pxrd.beam_hours, round(pxrd.energy_kwh, 6)) == (2, 3.0, 2.6)
    assert (pxrd.kv_range, pxrd.ma_range) == ((20, 40), (10, 30))
    assert (pxrd.alignment_sessions, pxrd.permit_sessions) == (1, 0)
    assert (pxrd.checks, pxrd.checks_late, pxrd.checks_failed) == (3, 1, 1)


def test_out_of_service_periods_come_from_the_trail(session, monkeypatch, make_instrument, year_2025):
    from models.instruments.instrument_ops import return_to_service, set_out_of_service

    xrf = make_instrument(name="xrf")
    for moment, change in ((datetime(2024, 12, 20, 9, tzinfo=UTC), "out"),
                           (datetime(2025, 1, 10, 9, tzinfo=UTC), "back"),
                           (datetime(2025, 6, 2, 9, tzinfo=UTC), "out")):
        monkeypatch.setattr("models.instruments.instrument_ops.utcnow", lambda m=moment: m)
        monkeypatch.setattr("models.audit.audit_ops.utcnow", lambda m=moment: m)
        if change == "out":
            set_out_of_service(session, xrf, "tube replaced")
        else:
            return_to_service(session, xrf)
        session.commit()
    figures = lab_year(session, 2025, year_2025, UTC)
    held = next(i for i in figures.instruments if i.name == "xrf")
    # Out from 20 Dec 2024 to 10 Jan 2025 (overlaps 2025), and again from 2 June 2025 on.
    assert held.out_of_service == [(date(2024, 12, 20), date(2025, 1, 10)), (date(2025, 6, 2), None)]


def test_page_pdf_and_command(app, make_person, login, year_2025, tmp_path):
    client = login(make_person("officer", roles=(Role.SAFETY_OFFICER,)))
    page = client.get("/reports/year/2025").get_data(as_text=True)
    assert "38.800" in page and "Over 20 mSv" in page
    assert client.get("/reports/year/2025/bands.png").mimetype == "image/png"
    assert login(make_person("boss", roles=(Role.ADMIN,))).get("/reports/year/2025").status_code == 403
    out = tmp_path / "year.pdf"
    result = app.test_cli_runner().invoke(args=["reports", "lab", "--year", "2025", "--out", str(out)])
    assert result.exit_code == 0, result.output
    text = "\n".join(p.extract_text() for p in PdfReader(io.BytesIO(out.read_bytes())).pages)
    assert "The lab's year 2025" in text and "38.800" in text and "not the official dose record" in text
