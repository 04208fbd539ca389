"""`python -m bench`: the whole picture in one table, each figure beside its target and the ratio.

Builds the synthetic lab (people x years of monthly dosimetry, a session log, instruments and
authorisations) in a fresh SQLite file, times the engine against the read floor and pandas, then
serves the lab with gunicorn and times pages over HTTP, imports a large report, and runs the
concurrent API loggers on each database. The bench asserts nothing about time: it prints.
"""
from __future__ import annotations

import argparse
import os
import sqlite3
import time
from collections.abc import Iterator
from dataclasses import dataclass
from datetime import UTC, datetime

import sqlalchemy as sa

from bench import imports, loggers, pages, pandas_windows, sessions_list, synthetic, timing
from bench.pid_app import FLOOR_PATH
from bench.server import gunicorn
from models.people.tables import Person

OUT = os.path.join(os.path.dirname(__file__), "out")
FULL = {"people": 1000, "years": 10, "sessions": 1_000_000, "authorisations": 4000, "import_rows": 100_000,
        "loggers": 32, "logger_seconds": 20.0, "workers": 4, "runs": 21}
QUICK = {"people": 20, "years": 1, "sessions": 3000, "authorisations": 60, "import_rows": 2000,
         "loggers": 8, "logger_seconds": 3.0, "workers": 2, "runs": 5}


@dataclass(frozen=True)
class Line:
    """One figure: what, how much, its target, and how it compares ('' when there is no target)."""

    what: str
    value: str
    target: str = ""
    ratio: str = ""


def ms(seconds: float) -> str:
    """Seconds as milliseconds for the table."""
    return f"{1000 * seconds:,.1f} ms"


def under(seconds: float, target_s: float) -> tuple[str, str]:
    """Target and ratio of a time that must stay under `target_s`."""
    return f"< {1000 * target_s:,.0f} ms", f"{seconds / target_s:.2f}"


def main(argv=None) -> None:
    """Parse the sizes, run every part, print the table as the figures come in."""
    parser = argparse.ArgumentParser(prog="python -m bench", description=__doc__)
    for name, value in FULL.items():
        parser.add_argument(f"--{name.replace('_', '-')}", type=type(value), default=None)
    parser.add_argument("--quick", action="store_true", help="a small lab for CI (under two minutes)")
    parser.add_argument("--databases", default="sqlite,postgresql", help="where the API loggers run")
    parser.add_argument("--port", type=int, default=5130)
    parser.add_argument("--path", default=os.path.join(OUT, "bench.sqlite"))
    args = parser.parse_args(argv)
    sizes = {**(QUICK if args.quick else FULL),
             **{k: v for k, v in vars(args).items() if k in FULL and v is not None}}
    os.makedirs(os.path.dirname(os.path.abspath(args.path)), exist_ok=True)
    width = 58
    print("ratio = measured / target (for 'at least' targets, target / measured): at most 1 meets it")
    print(f"{'what':<{width}} {'measured':>14} {'target':>12} {'ratio':>7}", flush=True)
    for line in run(args.path, sizes, args.databases.split(","), args.port):
        if isinstance(line, str):
            print(line, flush=True)
        else:
            print(f"{line.what:<{width}} {line.value:>14} {line.target:>12} {line.ratio:>7}", flush=True)


def run(path: str, sizes: dict, databases: list[str], port: int) -> Iterator[Line | str]:
    """Every part in turn: the lab, the engine, the pages, the import, the loggers."""
    from webapp.extensions import db

    on = datetime.now(UTC).date()
    started = time.perf_counter()
    app, lab = synthetic.build(path, sizes["people"], sizes["years"], on)
    with app.app_context():
        person_ids = list(db.session.scalars(sa.select(Person.id)))
        with db.engine.begin() as connection:
            sessions_list.insert_sessions(connection, sizes["sessions"], person_ids, on)
            pages.add_authorisations(connection, sizes["authorisations"], on)
        db.engine.dispose()
    yield (f"# {lab.n_people:,} people x {lab.n_months} months = {lab.n_records:,} dose records, "
           f"{sizes['sessions']:,} sessions on {sessions_list.N_INSTRUMENTS} instruments, "
           f"{sizes['authorisations']:,} authorisations; built in {time.perf_counter() - started:.0f} s")
    yield from engine_lines(app, on, sizes["runs"])
    floor: list[float] = []
    yield from page_lines(app, path, sizes, port, on, floor)
    yield from import_lines(path, sizes["import_rows"], sizes["people"], databases)
    for database in databases:
        yield from logger_lines(database, sizes, port + 1, floor[0])


def engine_lines(app, on, runs: int) -> Iterator[Line]:
    """The engine alone, the read floor, and pandas doing the same windows."""
    from models.core.settings import lab_settings
    from webapp.extensions import db

    with app.app_context():
        read_s, records = timing.time_read(db.session, max(3, runs // 4))
        engine_s = timing.time_engine(db.session, records, on, runs)
        first_year = lab_settings(db.session).five_year_first_year
        rows = db.session.execute(timing.lab_ops._record_columns()).all()
        pandas_s = pandas_windows.time_pandas(rows, on, first_year, max(1, runs // 7))
        db.engine.dispose()
    yield Line("engine: compute_doses + evaluate, everyone", ms(engine_s), "<= 0.1 x read",
               f"{engine_s / read_s / 0.1:.2f}")
    yield Line("read floor: one query into the engine's arrays", ms(read_s))
    yield Line("pandas, the same fixed windows (rows already read)", ms(pandas_s), ">= 3 x engine",
               f"{3 * engine_s / pandas_s:.2f}")


def page_lines(app, path: str, sizes: dict, port: int, on, floor_out: list[float]) -> Iterator[Line]:
    """Pages over HTTP through gunicorn: warm p50/p95, the first request after a dose change, the floor.

    The floor's p50 is appended to `floor_out` for the loggers' comparison.
    """
    runs, workers = sizes["runs"], sizes["workers"]
    url = f"sqlite:///{os.path.abspath(path)}"
    with gunicorn(url, port, workers=workers, app="bench.pid_app:app",
                  env={"RATELIMIT_ENABLED": "0"}) as base_url:
        officer = pages.Browser(base_url)
        officer.log_in(synthetic.OFFICER_LOGIN, synthetic.OFFICER_PASSWORD)
        floor = officer.spread(FLOOR_PATH, runs, workers)
        home = officer.spread("/", runs, workers)
        person_page = f"/exposure/person/{_first_worker_id(app)}"
        exposure = officer.spread(person_page, runs, workers)
        listing = officer.spread("/sessions/", runs, workers)
        pages.change_a_dose(app, "worker0000", on)
        first_home = officer.timed("/")
        first_person = officer.timed(person_page)
    floor_out.append(floor.p50)
    yield Line("bare JSON endpoint (framework floor), p50", ms(floor.p50))
    yield Line("safety officer's home page, warm p50", ms(home.p50), *under(home.p50, 0.100))
    yield Line("safety officer's home page, warm p95", ms(home.p95))
    yield Line("safety officer's home page, first after a dose change", ms(first_home), *under(first_home, 0.300))
    yield Line("a person's exposure page, warm p50", ms(exposure.p50), *under(exposure.p50, 0.100))
    yield Line("a person's exposure page, warm p95", ms(exposure.p95))
    yield Line("a person's exposure page, first after a dose change", ms(first_person))
    yield Line(f"sessions list, newest page of {sizes['sessions']:,}, p50", ms(listing.p50),
               *under(listing.p50, sessions_list.PAGE_TARGET_S))


def _first_worker_id(app) -> int:
    """The id of the first synthetic worker."""
    from webapp.extensions import db

    with app.app_context():
        found = db.session.scalar(sa.select(Person.id).where(Person.login == "worker0000"))
        db.engine.dispose()
    return found


def import_lines(path: str, n_rows: int, n_people: int, databases: list[str]) -> Iterator[Line]:
    """A report imported into a copy of the lab, beside a raw executemany of the same rows; then
    the longest another writer waits during an import of the largest file accepted, on each database."""
    copy = path + ".import.sqlite"
    # SQLite's backup API: what still sits in the write-ahead log comes along.
    with sqlite3.connect(path) as source, sqlite3.connect(copy) as target:
        source.backup(target)
    report = path + ".report.csv"
    with open(report, "wb") as out:
        out.write(imports.report_bytes([f"worker{i:04d}" for i in range(n_people)], n_rows))
    try:
        figures = imports.measure(copy, report)
    finally:
        os.remove(copy)
        os.remove(report)
    yield Line(f"import of {n_rows:,} rows: rows per second", f"{figures.rows_per_s:,.0f}/s",
               f">= {imports.ROWS_PER_S_TARGET:,}/s", f"{imports.ROWS_PER_S_TARGET / figures.rows_per_s:.2f}")
    yield Line("import: peak resident memory of the process", f"{figures.peak_mb:,.0f} MB",
               f"< {imports.PEAK_MB_TARGET} MB", f"{figures.peak_mb / imports.PEAK_MB_TARGET:.2f}")
    yield Line("import time / raw executemany of the same rows", f"{figures.seconds:.2f} s",
               f"<= {imports.RAW_RATIO_TARGET:g} x raw",
               f"{figures.seconds / figures.raw_seconds / imports.RAW_RATIO_TARGET:.2f}")
    wait_rows = min(imports.WAIT_ROWS, n_rows)
    for database in databases:
        longest, _count = imports.writer_wait(database, wait_rows)
        yield Line(f"another writer's longest wait, {wait_rows:,}-row import, {database}", ms(longest),
                   *under(longest, imports.WRITER_WAIT_TARGET_S))


def logger_lines(database: str, sizes: dict, port: int, floor_s: float) -> Iterator[Line]:
    """The concurrent API loggers on one database, their median beside the framework floor's."""
    result = loggers.run(database, sizes["logger_seconds"], sizes["loggers"], sizes["workers"], port)
    t = result.tally
    name = f"{result.loggers} API loggers, {database}"
    yield Line(f"{name}: requests per second", f"{t.requests / result.seconds:,.1f}/s")
    yield Line(f"{name}: latency p50", f"{result.p50_ms:,.1f} ms")
    yield Line(f"{name}: p50 / the floor's p50 (queueing included)", f"{result.p50_ms / 1000 / floor_s:.1f} x",
               "<= 3 x", f"{result.p50_ms / 1000 / floor_s / 3:.2f}")
    yield Line(f"{name}: latency p99", f"{result.p99_ms:,.1f} ms",
               *((under(result.p99_ms / 1000, 0.300)) if database == "sqlite" else ("", "")))
    yield Line(f"{name}: 5xx", f"{t.server_errors}", "0")
    yield Line(f"{name}: no answer within the client's timeout", f"{t.no_answer}", "0")
    yield Line(f"{name}: acknowledged but missing", f"{result.missing}", "0")
    yield Line(f"{name}: double bookings", f"{result.double_bookings}", "0")


if __name__ == "__main__":
    main()
