"""The bench's generator and timing functions, on a tiny lab (smoke tests, no timing assertions)."""
from datetime import date

import numpy as np
import pytest
import sqlalchemy as sa

from bench import synthetic, timing
from bench.__main__ import main
from models.core.codes import PeriodKind, Series, code
from models.core.settings import lab_settings
from models.doses.tables import DoseRecord
from models.exposure.engine import compute_doses
from models.exposure.lab_ops import read_records
from models.exposure.rules_ops import rules_on
from tests.conftest import free_port
from webapp.extensions import db

ON = date(2026, 11, 30)


def test_the_issue_sized_lab_has_exactly_360000_records():
    lab = synthetic.generate(1000, 10, ON)
    # 120 months x (2 whole-body x 1,000 + 2 rings x 300 + 1 lens x 400)
    assert lab.n_records == lab.expected_records() == 360_000


def test_wear_periods_end_before_the_evaluation_date_and_straddle_months():
    lab = synthetic.generate(4, 1, ON)
    ends = lab.columns["wear_end"]
    assert ends.max() < np.datetime64(ON)
    starts = lab.columns["wear_start"].astype(object)
    assert {d.day for d in starts} == {1, 15}


@pytest.fixture
def tiny(tmp_path):
    """A 10-person, 2-year lab in a fresh SQLite file."""
    app, lab = synthetic.build(str(tmp_path / "bench.sqlite"), 10, 2, ON)
    with app.app_context():
        yield app, lab
        db.engine.dispose()


def test_the_plain_loop_gives_the_engine_sums(tiny):
    app, lab = tiny
    people, _ = timing.people_of(db.session)
    records = read_records(db.session, people)
    _, policies = rules_on(db.session, ON)
    totals = compute_doses(records, len(people), ON, policies)
    rows = db.session.execute(timing.lab_ops._record_columns()).all()
    sums = timing.plain_loop(rows, ON, policies.first_block_year)
    for row, person_id in enumerate(people[:-1]):  # the last person is the safety officer
        for kind in (PeriodKind.YEAR, PeriodKind.QUARTER, PeriodKind.ROLLING_12_MONTHS):
            expected = totals.dose[row, code(Series.EFFECTIVE), code(kind)]
            assert sums.get((person_id, "Hp(10)", "whole_body", kind), 0.0) == pytest.approx(
                expected)


def test_old_lost_results_have_an_estimate_that_replaces_them(tiny):
    app, lab = tiny
    assert lab.estimated.sum() > 0
    rows = db.session.scalar(sa.select(sa.func.count()).select_from(DoseRecord))
    assert rows == lab.n_records + lab.estimated.sum()
    people, _ = timing.people_of(db.session)
    assert len(read_records(db.session, people)) == lab.n_records


def test_each_timing_runs(tiny):
    app, lab = tiny
    seconds, records = timing.time_read(db.session, 1)
    assert len(records) == lab.n_records and seconds > 0
    assert timing.time_engine(db.session, records, ON, 1) > 0
    assert timing.time_loop(db.session, ON, 1) > 0
    with app.test_client() as client:
        cold, warm, _ = timing.time_home(client, synthetic.OFFICER_LOGIN,
                                             synthetic.OFFICER_PASSWORD, 2)
    assert cold > 0 and warm > 0


def test_the_quick_command_prints_every_line(tmp_path, capsys):
    """`python -m bench --quick` end to end on SQLite: every line of the table is there."""
    main(["--quick", "--databases", "sqlite", "--port", str(free_port()),
          "--path", str(tmp_path / "bench.sqlite")])
    text = capsys.readouterr().out
    for label in ("engine: compute_doses", "read floor", "pandas, the same fixed windows",
                  "bare JSON endpoint", "home page, warm p50", "home page, first after a dose change",
                  "exposure page, warm p95", "sessions list, newest page of 3,000",
                  "import of 2,000 rows", "peak resident memory", "raw executemany",
                  "another writer's longest wait, 2,000-row import, sqlite",
                  "8 API loggers, sqlite: latency p99", "double bookings"):
        assert label in text, label


def test_the_pandas_job_gives_the_plain_loop_sums(tiny):
    from bench import pandas_windows

    settings = lab_settings(db.session)
    rows = db.session.execute(timing.lab_ops._record_columns()).all()
    by_loop = timing.plain_loop(rows, ON, settings.five_year_first_year)
    by_pandas = pandas_windows.windows_sums(pandas_windows.frame(rows), ON, settings.five_year_first_year)
    assert by_pandas.keys() == {(int(k[0]), str(k[1]), str(k[2]), k[3]) for k in by_loop}
    for (person, quantity, location, kind), value in by_loop.items():
        assert by_pandas[(int(person), str(quantity), str(location), kind)] == pytest.approx(value)
