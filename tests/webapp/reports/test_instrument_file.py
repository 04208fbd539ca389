"""An instrument's file for an inspection, and every document on the demo lab."""
import io
from datetime import UTC, date, datetime

import pytest
import sqlalchemy as sa
from pypdf import PdfReader

from models.instruments.tables import Instrument
from models.people.tables import Role
from tests.conftest import PASSWORD_HASH
from webapp.demo.lab import HIGH_DOSE_PERSON, load_demo_lab
from webapp.extensions import db


def _text(data: bytes) -> str:
    return "\n".join(p.extract_text() for p in PdfReader(io.BytesIO(data)).pages)


def test_the_file_holds_the_period_records(app, make_person, make_instrument, make_session_entry,
                                           record_a_check, login, tmp_path):
    rso = make_person("rso", roles=(Role.SAFETY_OFFICER,), name="Rae Safety")
    pxrd = make_instrument(name="pxrd")
    at = datetime(2026, 3, 2, 9, tzinfo=UTC)
    make_session_entry(pxrd, rso, started_at=at, ended_at=at.replace(hour=10), kv=40, ma=30, beam_on_minutes=50)
    make_session_entry(pxrd, rso, started_at=at.replace(month=5), ended_at=at.replace(month=5, hour=10))
    record_a_check(pxrd, rso, fail=(1,), performed_at=at.replace(day=3))
    out = tmp_path / "file.pdf"
    result = app.test_cli_runner().invoke(args=["reports", "instrument", "pxrd", "--from", "2026-03-01",
                                                "--to", "2026-03-31", "--out", str(out)])
    assert result.exit_code == 0, result.output
    text = _text(out.read_bytes())
    assert "Instrument file: pxrd" in text and "2026-03-01 to 2026-03-31" in text
    assert "Session log (1)" in text  # the May session is outside the period
    assert "Safety-device checks (1)" in text and "Does not work." in text
    assert "No surveys in this period." in text
    client = login(rso)
    assert f"/reports/instrument/{pxrd.id}.pdf" in client.get(f"/instruments/{pxrd.id}").get_data(as_text=True)
    response = client.get(f"/reports/instrument/{pxrd.id}.pdf?from=2026-03-01&to=2026-03-31")
    assert response.status_code == 200 and response.mimetype == "application/pdf"
    assert client.get(f"/reports/instrument/{pxrd.id}.pdf?from=2026-03-01").status_code == 422
    assert login(make_person("op")).get(f"/reports/instrument/{pxrd.id}.pdf?from=2026-03-01&to=2026-03-31"
                                        ).status_code == 403
    bad = app.test_cli_runner().invoke(args=["reports", "instrument", "nothing", "--from", "2026-03-01",
                                             "--to", "2026-03-31", "--out", str(out)])
    assert bad.exit_code != 0 and "no instrument named 'nothing'" in bad.output


def test_every_document_for_the_demo_lab(app, tmp_path, database_url):
    if not database_url.startswith("sqlite"):
        pytest.skip("two years of demo records are written once, on SQLite")
    load_demo_lab(db.session, date(2026, 11, 30), PASSWORD_HASH)
    db.session.commit()
    runner = app.test_cli_runner()
    name = db.session.scalar(sa.select(Instrument.name).order_by(Instrument.id).limit(1))
    for args in (["reports", "person", HIGH_DOSE_PERSON, "--year", "2026"],
                 ["reports", "lab", "--year", "2026"],
                 ["reports", "instrument", name, "--from", "2026-01-01", "--to", "2026-11-30"],
                 ["export", "sessions", "--from", "2026-11-01", "--to", "2026-11-30"]):
        out = tmp_path / f"{args[1]}.out"
        result = runner.invoke(args=[*args, "--out", str(out)])
        assert result.exit_code == 0, (args, result.output)
        if args[0] == "reports":
            assert len(PdfReader(io.BytesIO(out.read_bytes())).pages) >= 1
        else:
            assert out.read_text(encoding="utf-8").startswith("id,instrument,")
