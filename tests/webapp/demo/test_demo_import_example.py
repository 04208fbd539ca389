"""The README's first import, the file shipped for the demo, goes into a fresh demo lab cleanly."""
from __future__ import annotations

from datetime import date
from pathlib import Path

import sqlalchemy as sa

from models.doses.tables import DoseRecord
from models.people.tables import Person
from tests.conftest import PASSWORD_HASH
from webapp.demo.lab import load_demo_lab
from webapp.extensions import db

EXAMPLE = Path(__file__).parents[3] / "webapp" / "demo" / "example_report.csv"


def test_the_shipped_example_imports_into_the_fresh_demo(app):
    load_demo_lab(db.session, date(2026, 11, 20), PASSWORD_HASH)
    db.session.commit()
    runner = app.test_cli_runner()
    dry = runner.invoke(args=["doses", "import", str(EXAMPLE), "--dry-run"])
    assert dry.exit_code == 0, dry.output
    done = runner.invoke(args=["doses", "import", str(EXAMPLE)])
    assert done.exit_code == 0, done.output
    visitor = db.session.scalar(sa.select(Person).where(Person.login == "sgray"))
    records = db.session.scalars(sa.select(DoseRecord).where(DoseRecord.person_id == visitor.id)).all()
    assert len(records) == 2  # the file's two rows
    # The same file again adds nothing: one import batch per file.
    again = runner.invoke(args=["doses", "import", str(EXAMPLE)])
    assert "nothing added" in again.output


def test_the_readme_shows_the_shipped_file_and_the_port():
    readme = (Path(__file__).parents[3] / "README.md").read_text(encoding="utf-8")
    assert "webapp/demo/example_report.csv" in readme
    assert EXAMPLE.read_text(encoding="utf-8").strip() in readme
    assert "make run PORT=8080 HOST=0.0.0.0" in readme
