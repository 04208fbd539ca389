"""CSV exports of every list: who may have which, filters, and text that stays text."""
import csv
import io
from datetime import UTC, date, datetime

from models.people.tables import Role
from models.reports.export_ops import LISTS


def _rows(response) -> list[list[str]]:
    return list(csv.reader(io.StringIO(response.get_data(as_text=True))))


def test_every_list_downloads_for_the_safety_officer(make_person, login):
    client = login(make_person("rso", roles=(Role.SAFETY_OFFICER,)))
    for name, export in LISTS.items():
        response = client.get(f"/exports/{name}.csv")
        assert response.status_code == 200, name
        assert response.mimetype == "text/csv"
        assert _rows(response)[0] == list(export.header)


def test_a_name_beginning_with_equals_stays_text(make_person, make_instrument, make_session_entry, login):
    attacker = make_person("eve", name="=HYPERLINK(\"http://example.org\",\"click\")")
    make_session_entry(make_instrument(name="pxrd"), attacker,
                       started_at=datetime(2026, 11, 2, 9, tzinfo=UTC),
                       ended_at=datetime(2026, 11, 2, 10, tzinfo=UTC))
    client = login(make_person("rso", roles=(Role.SAFETY_OFFICER,)))
    header, row = _rows(client.get("/exports/sessions.csv"))
    assert row[header.index("operator")] == "'=HYPERLINK(\"http://example.org\",\"click\")"
    assert row[header.index("instrument")] == "pxrd"


def test_the_date_range_is_inclusive_in_the_lab_zone(make_person, make_instrument, make_session_entry, login):
    operator = make_person("ada")
    instrument = make_instrument(name="pxrd")
    # The lab is on UTC in a fresh database: 23:30 on 1 Nov belongs to 1 Nov, 00:30 on 3 Nov to 3 Nov.
    for start in (datetime(2026, 11, 1, 23, 30, tzinfo=UTC), datetime(2026, 11, 2, 12, tzinfo=UTC),
                  datetime(2026, 11, 3, 0, 30, tzinfo=UTC)):
        make_session_entry(instrument, operator, started_at=start, ended_at=start.replace(minute=45))
    client = login(make_person("rso", roles=(Role.SAFETY_OFFICER,)))
    rows = _rows(client.get("/exports/sessions.csv?from=2026-11-02&to=2026-11-02"))
    assert [r[4] for r in rows[1:]] == ["2026-11-02T12:00+00:00"]
    rows = _rows(client.get("/exports/sessions.csv?from=2026-11-01&to=2026-11-03"))
    assert len(rows) == 1 + 3


def test_the_sessions_export_follows_the_list_filters(make_person, make_instrument, make_session_entry, login):
    ada, bo = make_person("ada"), make_person("bo")
    one, two = make_instrument(name="pxrd"), make_instrument(name="xrf")
    started = datetime(2026, 11, 2, 9, tzinfo=UTC)
    make_session_entry(one, ada, started_at=started, ended_at=started.replace(hour=10))
    make_session_entry(two, bo, started_at=started, ended_at=started.replace(hour=10))
    client = login(make_person("rso", roles=(Role.SAFETY_OFFICER,)))
    rows = _rows(client.get(f"/exports/sessions.csv?instrument={two.id}"))
    assert [r[1] for r in rows[1:]] == ["xrf"]
    rows = _rows(client.get(f"/exports/sessions.csv?person={ada.id}"))
    assert [r[2] for r in rows[1:]] == ["ada"]


def test_bad_dates_are_refused_beside_the_field(make_person, login):
    client = login(make_person("rso", roles=(Role.SAFETY_OFFICER,)))
    response = client.get("/exports/sessions.csv?from=9999-01-01")
    assert response.status_code == 422
    assert "between 1950 and 2100" in response.get_data(as_text=True)
    response = client.get("/exports/sessions.csv?from=2026-11-03&to=2026-11-01")
    assert response.status_code == 422
    assert "before the first" in response.get_data(as_text=True)
    assert client.get("/exports/nothing.csv").status_code == 404


def test_dose_lists_stay_with_the_safety_officer(make_person, make_dose, login):
    person = make_person("ada")
    make_dose(person, wear_start=date(2026, 10, 1), wear_end=date(2026, 10, 31), value=0.25)
    admin = login(make_person("boss", roles=(Role.ADMIN,)))
    assert admin.get("/exports/dose_records.csv").status_code == 403
    assert admin.get("/exports/investigations.csv").status_code == 403
    page = admin.get("/exports/").get_data(as_text=True)
    assert "/exports/dose_records.csv" not in page and "/exports/sessions.csv" in page
    audit = _rows(admin.get("/exports/audit.csv"))
    record_types = {r[3] for r in audit[1:]}
    assert "person" in record_types and "dose_record" not in record_types
    operator = login(make_person("op"))
    assert operator.get("/exports/sessions.csv").status_code == 403
    rso = login(make_person("rso", roles=(Role.SAFETY_OFFICER,)))
    doses = _rows(rso.get("/exports/dose_records.csv"))
    assert [(r[1], r[8]) for r in doses[1:]] == [("ada", "0.25")]
    assert "dose_record" in {r[3] for r in _rows(rso.get("/exports/audit.csv"))[1:]}


def test_the_command_writes_the_list(app, make_person, make_dose, tmp_path):
    make_dose(make_person("ada"), wear_start=date(2026, 10, 1), wear_end=date(2026, 10, 31), value=0.25)
    out = tmp_path / "doses.csv"
    result = app.test_cli_runner().invoke(args=["export", "dose_records", "--from", "2026-10-01",
                                                "--to", "2026-10-31", "--out", str(out)])
    assert result.exit_code == 0, result.output
    assert "(1 rows)" in result.output
    with out.open(encoding="utf-8") as handle:
        rows = list(csv.reader(handle))
    assert rows[1][1] == "ada" and rows[1][8] == "0.25"
    result = app.test_cli_runner().invoke(args=["export", "dose_records", "--from", "2026-11-01",
                                                "--to", "2026-10-31", "--out", str(out)])
    assert result.exit_code != 0 and "--from is after --to" in result.output
    result = app.test_cli_runner().invoke(args=["export", "sessions", "--from", "1900-01-01", "--out", str(out)])
    assert result.exit_code != 0 and "between 1950 and 2100" in result.output


def test_the_audit_page_filters_by_type_person_and_date(make_person, login):
    rso = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    make_person("ada", name="Ada Example")
    client = login(rso)
    page = client.get("/audit/?entity=person&from=2000-01-01&to=2100-12-31").get_data(as_text=True)
    assert "Ada Example" in page and "person" in page
    page = client.get("/audit/?entity=person&from=2100-12-31").get_data(as_text=True)
    assert "No events." in page
    assert client.get("/audit/?before=99999999999999999999999999999999999999").status_code == 200
    assert client.get("/audit/?from=9999-99-99&person=abc").status_code == 200
