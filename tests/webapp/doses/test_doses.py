"""Dose pages: entry and correction, import all-or-none, dosimeters, and who may see what."""
import hashlib
import io
import re
from collections import deque
from datetime import date, timedelta

import pytest
import sqlalchemy as sa

from models.core.codes import Result
from models.doses.tables import DoseRecord, ImportBatch, ImportMapping
from models.exposure.pregnancy_ops import declare
from models.exposure.tables import PregnancyDeclaration
from models.people.tables import Role
from tests.conftest import LAB_TODAY
from tests.models.doses.test_dose_import import report, thousand_rows

OFFICER = (Role.SAFETY_OFFICER,)


@pytest.fixture
def app_config(tmp_path):
    """Keep uploaded reports in the test's own folder."""
    return {"DOSE_IMPORT_FOLDER": str(tmp_path / "imports")}


def count(session) -> int:
    """Dose records on file, every version included."""
    return session.scalar(sa.select(sa.func.count()).select_from(DoseRecord))


def sha(data: bytes) -> str:
    """The hash an uploaded report is kept under."""
    return hashlib.sha256(data).hexdigest()


def upload(client, data: bytes, layout: str = "", name: str = "report.csv"):
    """Upload a report and follow to its preview (or mapping) page."""
    return client.post("/doses/import", data={"file": (io.BytesIO(data), name), "layout": layout},
                       content_type="multipart/form-data", follow_redirects=True)


def commit_from(client, preview_html: str):
    """Press the preview's import button."""
    action = re.search(r'action="(/doses/import/[0-9a-f]{64}/commit)"', preview_html).group(1)
    layout = re.search(r'name="layout" value="([^"]*)"', preview_html).group(1)
    return client.post(action, data={"layout": layout, "filename": "report.csv"}, follow_redirects=True)


def test_import_one_bad_row_then_corrected_then_again(session, make_person, login):
    logins = [make_person(f"w{i}").login for i in range(20)]
    client = login(make_person("rso", roles=OFFICER))
    rows = thousand_rows(logins)
    good_row = rows[99]
    rows[99] = good_row.replace(",Hp(10),", ",Hp(11),")
    page = upload(client, report(rows)).get_data(as_text=True)
    assert "1 with errors" in page and "Unknown quantity &#39;Hp(11)&#39;" in page
    assert ">101</td>" in page  # the bad row's line: header is line 1
    assert "Import all" not in page
    # Forcing the commit anyway adds nothing.
    forced = client.post(f"/doses/import/{sha(report(rows))}/commit", data={"layout": ""},
                         follow_redirects=True)
    assert "1 of 1000 rows have errors; nothing was imported." in forced.get_data(as_text=True)
    assert count(session) == 0

    rows[99] = good_row
    page = upload(client, report(rows)).get_data(as_text=True)
    assert "all rows are valid" in page
    done = commit_from(client, page).get_data(as_text=True)
    assert "Imported 1000 dose records" in done
    assert count(session) == 1000

    again = upload(client, report(rows)).get_data(as_text=True)
    assert "Importing it again adds nothing" in again and "Import all" not in again
    forced = client.post(f"/doses/import/{sha(report(rows))}/commit", data={"layout": ""},
                         follow_redirects=True)
    assert "already imported" in forced.get_data(as_text=True)
    assert count(session) == 1000
    assert session.scalar(sa.select(sa.func.count()).select_from(ImportBatch)) == 1


def test_cli_import_all_or_none_and_only_once(app, session, make_person, tmp_path):
    logins = [make_person(f"w{i}").login for i in range(20)]
    rows = thousand_rows(logins)
    good_row = rows[500]
    rows[500] = good_row.replace(",mSv,", ",Sv,")
    path = tmp_path / "report.csv"
    path.write_bytes(report(rows))
    runner = app.test_cli_runner()
    result = runner.invoke(args=["doses", "import", str(path)])
    assert result.exit_code != 0
    assert "Line 502: Unit: Unknown unit 'Sv': use mSv or mrem." in result.output
    assert "1 of 1000 rows have errors; nothing imported." in result.output
    assert count(session) == 0

    rows[500] = good_row
    path.write_bytes(report(rows))
    dry = runner.invoke(args=["doses", "import", str(path), "--dry-run"])
    assert dry.exit_code == 0 and "All 1000 rows are valid" in dry.output and count(session) == 0
    result = runner.invoke(args=["doses", "import", str(path)])
    assert result.exit_code == 0, result.output
    assert count(session) == 1000
    again = runner.invoke(args=["doses", "import", str(path)])
    assert again.exit_code == 0 and "nothing added" in again.output
    # The same rows under another name and with one more blank line: refused row by row.
    copy = tmp_path / "copy.csv"
    copy.write_bytes(report(rows) + b"\n")
    result = runner.invoke(args=["doses", "import", str(copy)])
    assert result.exit_code != 0 and "1000 of 1000 rows have errors" in result.output
    assert count(session) == 1000


def test_cli_import_with_a_saved_mapping(app, session, make_person, make_dosimeter, tmp_path):
    make_dosimeter(make_person("ann"), serial="B-1")
    session.add(ImportMapping(name="Service", columns={
        "dosimeter": "Badge", "wear_start": "From", "wear_end": "To", "quantity": "Q", "location": "L",
        "value": "mrem"}, date_format="%m/%d/%Y", default_unit="mrem"))
    session.commit()
    path = tmp_path / "service.csv"
    path.write_text("Badge,From,To,Q,L,mrem\nB-1,01/01/2026,01/31/2026,Hp(10),whole_body,20\n")
    runner = app.test_cli_runner()
    assert "No mapping named 'Other'" in runner.invoke(args=["doses", "import", str(path), "--mapping", "Other"]).output
    result = runner.invoke(args=["doses", "import", str(path), "--mapping", "Service"])
    assert result.exit_code == 0, result.output
    assert session.scalar(sa.select(DoseRecord.value_msv)) == pytest.approx(0.2)  # 20 mrem = 0.2 mSv (10 CFR 20.1004)


def test_new_mapping_from_the_browser(session, make_person, make_dosimeter, login):
    make_dosimeter(make_person("ann"), serial="B-1")
    client = login(make_person("rso", roles=OFFICER))
    data = b"Badge;Start;End;Qty;Where;Dose\nB-1;01.03.2026;31.03.2026;Hp(10);whole_body;0.05\n"
    page = upload(client, data, layout="new").get_data(as_text=True)
    assert "Map the columns" in page
    refused = client.post(f"/doses/import/{sha(data)}/mapping?filename=a.csv", data={
        "name": "", "date_format": "%d.%m.%Y", "default_unit": "mSv", "dosimeter": "Badge"})
    assert "Name the mapping" in refused.get_data(as_text=True)
    assert "Choose the column that gives the wear period start" in refused.get_data(as_text=True)
    page = client.post(f"/doses/import/{sha(data)}/mapping?filename=a.csv", data={
        "name": "Service B", "date_format": "%d.%m.%Y", "default_unit": "mSv", "dosimeter": "Badge",
        "wear_start": "Start", "wear_end": "End", "quantity": "Qty", "location": "Where", "value": "Dose"},
        follow_redirects=True).get_data(as_text=True)
    assert "all rows are valid" in page
    assert "Imported 1 dose records" in commit_from(client, page).get_data(as_text=True)
    assert "Service B" in client.get("/doses/import").get_data(as_text=True)  # offered next time


def test_enter_and_amend_keeps_both_versions(session, make_person, login):
    ann = make_person("ann")
    client = login(make_person("rso", roles=OFFICER))
    response = client.post("/doses/new", data={
        "person": ann.id, "dosimeter": "", "wear_start": "2026-01-01", "wear_end": "2026-01-31",
        "quantity": "Hp(10)", "location": "whole_body", "result": "lost", "value": "", "unit": "mSv",
        "mrd": "", "source": "dosimetry_report", "basis": ""})
    assert response.status_code == 302
    lost = session.scalar(sa.select(DoseRecord))
    form = {"dosimeter": "", "wear_start": "2026-01-01", "wear_end": "2026-01-31", "quantity": "Hp(10)",
            "location": "whole_body", "result": "measured", "value": "0.12", "unit": "mSv", "mrd": "",
            "source": "rso_estimate", "basis": "", "reason": ""}
    refused = client.post(f"/doses/record/{lost.id}/amend", data=form).get_data(as_text=True)
    assert "Say why the record is corrected." in refused and "needs its written basis" in refused
    assert count(session) == 1
    form.update(basis="Mean of the previous three months, same diffractometer work.",
                reason="Badge lost in the laundry.")
    response = client.post(f"/doses/record/{lost.id}/amend", data=form, follow_redirects=True)
    page = response.get_data(as_text=True)
    assert "v1" in page and "v2" in page and "Badge lost in the laundry." in page
    assert "Mean of the previous three months" in page and "lost" in page
    assert count(session) == 2
    session.expire_all()
    assert session.get(DoseRecord, lost.id).result is Result.LOST
    # Amending the superseded version leads to the latest one.
    assert client.get(f"/doses/record/{lost.id}/amend").status_code == 302
    # The original's own page shows both versions too.
    assert "Badge lost in the laundry." in client.get(f"/doses/record/{lost.id}").get_data(as_text=True)
    # And there is no way to delete.
    assert client.delete(f"/doses/record/{lost.id}").status_code == 405


def test_entry_errors_show_beside_the_fields_and_write_nothing(session, make_person, login):
    ann = make_person("ann")
    client = login(make_person("rso", roles=OFFICER))
    page = client.post("/doses/new", data={
        "person": ann.id, "wear_start": "2026-02-01", "wear_end": "2026-01-31", "quantity": "Hp(3)",
        "location": "left_hand", "result": "below_mrd", "value": "-1", "unit": "mSv", "mrd": "",
        "source": "dosimetry_report"}).get_data(as_text=True)
    for words in ("before it starts", "is not recorded at left hand", "cannot be negative"):
        assert words in page
    assert client.post("/doses/new", data={"person": "x", "value": "abc", "quantity": "Hp(99)"}).status_code == 200
    assert count(session) == 0


def test_operator_sees_only_their_own(session, make_person, make_dose, login):
    ann, bob = make_person("ann"), make_person("bob")
    own, other = make_dose(ann, value=0.31), make_dose(bob, value=0.47)
    client = login(ann)
    mine = client.get("/doses/mine", follow_redirects=True).get_data(as_text=True)
    assert "0.310 mSv" in mine and "0.470" not in mine
    assert client.get(f"/doses/record/{own.id}").status_code == 200
    # Who may open which dose page, with whose ids: tests/webapp/test_route_matrix.py.
    assert client.get(f"/doses/record/{other.id}").status_code == 403


def crawl(client, start: str = "/") -> dict[str, str]:
    """Every page a logged-in client can reach by following links, by URL."""
    seen, queue = {}, deque([start])
    while queue and len(seen) < 300:
        url = queue.popleft()
        if url in seen:
            continue
        response = client.get(url)
        seen[url] = response.get_data(as_text=True) if response.status_code == 200 else ""
        for link in re.findall(r'href="(/[^"#]*)"', seen[url]):
            if not link.startswith("/static") and link not in seen:
                queue.append(link.replace("&amp;", "&"))
    return seen


def test_a_declaration_is_seen_only_by_the_person_and_the_officer(session, make_person, make_dose, login):
    ann = make_person("ann", name="Ann Quist")
    make_dose(ann)
    declared = date(2025, 11, 3)
    declare(session, ann.id, declared, today=LAB_TODAY)
    session.commit()
    for viewer in (make_person("bob"), make_person("boss", roles=(Role.ADMIN,))):
        client = login(viewer)
        pages = crawl(client)
        assert len(pages) > 3
        for url, html in pages.items():
            assert declared.isoformat() not in html, url
            assert not ("Ann Quist" in html and "regnan" in html), url
        client.post("/logout")
    rso = login(make_person("rso", roles=OFFICER))
    assert declared.isoformat() in rso.get("/doses/pregnancies").get_data(as_text=True)


def test_declare_withdraw_and_end(session, make_person, login, client):
    ann = make_person("ann")
    today = LAB_TODAY
    login(ann)
    page = client.get("/doses/pregnancy", follow_redirects=True).get_data(as_text=True)
    assert "A declaration changes the limits that apply." in page
    future = client.post(f"/doses/person/{ann.id}/pregnancy/declare",
                         data={"declared_on": (today + timedelta(days=3)).isoformat()})
    assert future.status_code == 400 and "in the future" in future.get_data(as_text=True)
    assert client.post(f"/doses/person/{ann.id}/pregnancy/declare",
                       data={"declared_on": today.isoformat()}).status_code == 302
    assert client.post(f"/doses/person/{ann.id}/pregnancy/ended",
                       data={"ended_on": today.isoformat()}).status_code == 403  # the officer records an end
    assert client.post(f"/doses/person/{ann.id}/pregnancy/withdrawn",
                       data={"ended_on": today.isoformat()}).status_code == 302
    declaration = session.scalar(sa.select(PregnancyDeclaration))
    assert (declaration.ended_on, declaration.end_reason) == (today, "withdrawn")
    client.post("/logout")
    login(make_person("rso", roles=OFFICER))
    assert client.post(f"/doses/person/{ann.id}/pregnancy/declare",
                       data={"declared_on": today.isoformat()}).status_code == 302
    assert client.post(f"/doses/person/{ann.id}/pregnancy/ended",
                       data={"ended_on": today.isoformat()}).status_code == 302
    assert client.post(f"/doses/person/{ann.id}/pregnancy/withdrawn",
                       data={"ended_on": today.isoformat()}).status_code == 403


def test_dosimeters_issue_return_and_not_returned(session, make_person, make_dose, login):
    ann = make_person("ann", name="Ann Quist")
    client = login(make_person("rso", roles=OFFICER))
    long_ago = LAB_TODAY - timedelta(days=200)
    response = client.post("/doses/dosimeters/new", data={
        "wearer": ann.id, "serial": "WB-9", "worn": "ring_left", "issued_on": long_ago.isoformat(),
        "exchange_cycle": "monthly"})
    assert response.status_code == 302
    taken = client.post("/doses/dosimeters/new", data={
        "wearer": ann.id, "serial": "WB-9", "worn": "eye", "issued_on": long_ago.isoformat(),
        "exchange_cycle": "monthly"}).get_data(as_text=True)
    assert "already recorded" in taken
    listed = client.get("/doses/dosimeters/not-returned").get_data(as_text=True)
    assert "WB-9" in listed and "no result" in listed
    home = client.get("/").get_data(as_text=True)
    assert "Ann Quist: dosimeter WB-9" in home
    dosimeter_id = session.scalar(sa.text("SELECT id FROM dosimeter"))
    early = client.post(f"/doses/dosimeters/{dosimeter_id}/return",
                        data={"returned_on": (long_ago - timedelta(days=1)).isoformat()}, follow_redirects=True)
    assert "before the issue date" in early.get_data(as_text=True)
    done = client.post(f"/doses/dosimeters/{dosimeter_id}/return",
                       data={"returned_on": LAB_TODAY.isoformat()}, follow_redirects=True)
    assert "returned on" in done.get_data(as_text=True)


def test_operator_home_lists_their_dosimeters(session, make_person, make_dosimeter, login):
    ann = make_person("ann")
    make_dosimeter(ann, serial="MINE-1")
    assert "MINE-1" in login(ann).get("/").get_data(as_text=True)


def test_admin_audit_log_hides_dosimeters(make_person, login, make_dosimeter):
    admin = make_person("labadmin", roles=(Role.ADMIN,))
    wearer = make_person("wearer")
    from models.doses.tables import DosimeterKind

    make_dosimeter(wearer, serial="ABD-77", kind=DosimeterKind.ABDOMEN)
    page = login(admin).get("/audit/").data.decode()
    assert "ABD-77" not in page and "dosimeter" not in page


def test_a_declaration_takes_the_optional_dates_and_names_a_bad_one(session, make_person, login, client):
    ann = make_person("ann")
    login(ann)
    url = f"/doses/person/{ann.id}/pregnancy/declare"
    wrong = client.post(url, data={"declared_on": "2026-01-10", "conception_on": "2026-01-20"})
    assert wrong.status_code == 400
    assert "The estimated conception must be on or before the declaration" in wrong.get_data(as_text=True)
    assert session.scalar(sa.select(PregnancyDeclaration)) is None
    assert client.post(url, data={"declared_on": "2026-01-10", "conception_on": "2025-12-01",
                                  "expected_end_on": "2026-08-24"}).status_code == 302
    declaration = session.scalar(sa.select(PregnancyDeclaration))
    assert (declaration.conception_on, declaration.expected_end_on) == (date(2025, 12, 1), date(2026, 8, 24))
def test_the_audit_page_shows_an_import_as_one_batch_event(session, make_person, login):
    make_person("ann")
    client = login(make_person("rso", roles=OFFICER))
    rows = ["ann,,2026-01-01,2026-01-31,Hp(10),whole_body,0.1,mSv,measured,",
            "ann,,2026-02-01,2026-02-28,Hp(10),whole_body,0.2,mSv,measured,"]
    done = commit_from(client, upload(client, report(rows)).get_data(as_text=True))
    assert "Imported 2 dose records" in done.get_data(as_text=True)
    page = client.get("/audit/").get_data(as_text=True)
    assert page.count("bulk_create") == 1 and "dose record (a batch of rows)" in page
    assert f"file_sha256: {sha(report(rows))}" in page and "rows: 2" in page
