"""Import of a dosimetry report at size: rows per second and peak memory, beside a raw executemany;
and how long another writer waits while a report of the largest size accepted goes in.

The timing runs in a child process (`python -m bench.imports DB CSV`) so its peak resident memory
is the import's own and not the bench's. `python -m bench.imports --writer-wait sqlite|postgresql`
runs the waiting writer's part alone.
"""
from __future__ import annotations

import json
import multiprocessing
import os
import subprocess
import sys
import tempfile
import threading
import time
from dataclasses import dataclass
from datetime import date

from dateutil.relativedelta import relativedelta

ROWS_PER_S_TARGET = 25_000
PEAK_MB_TARGET = 300
RAW_RATIO_TARGET = 2.0
WRITER_WAIT_TARGET_S = 1.0
# The largest report the app accepts (MAX_ROWS), over this many people.
WAIT_ROWS, WAIT_PEOPLE = 50_000, 100
# The other writer's pause between its transactions.
WRITER_PAUSE_S = 0.02
HEADER = "person,dosimeter,wear_start,wear_end,quantity,location,value,unit,result,mrd\n"
# Wear periods well before the synthetic lab's years, so no row repeats a record on file.
FIRST_MONTH = date(1980, 1, 1)


@dataclass(frozen=True)
class ImportFigures:
    """One import measured: rows, seconds, peak memory, and the raw executemany of the same rows."""

    rows: int
    seconds: float
    peak_mb: float
    raw_seconds: float

    @property
    def rows_per_s(self) -> float:
        """Rows checked and written per second."""
        return self.rows / self.seconds


def report_bytes(logins: list[str], n_rows: int) -> bytes:
    """A report in the logbook's own layout: monthly Hp(10) results, the people in turn."""
    lines = [HEADER]
    for i in range(n_rows):
        start = FIRST_MONTH + relativedelta(months=i // len(logins))
        end = start + relativedelta(months=1, days=-1)
        lines.append(f"{logins[i % len(logins)]},,{start},{end},Hp(10),whole_body,"
                     f"{(i % 13) * 0.01:.2f},mSv,measured,\n")
    return "".join(lines).encode()


def measure(db_path: str, csv_path: str) -> ImportFigures:
    """Run the import of `csv_path` into the SQLite file `db_path` in a child process."""
    done = subprocess.run([sys.executable, "-m", "bench.imports", db_path, csv_path],
                          capture_output=True, text=True,
                          cwd=os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
    if done.returncode:
        raise RuntimeError(f"the import bench failed:\n{done.stderr[-3000:]}")
    return ImportFigures(**json.loads(done.stdout.strip().splitlines()[-1]))


def _peak_mb() -> float:
    """This process's peak resident memory since it started its program.

    Not getrusage's ru_maxrss: Linux carries that over exec from the process that forked us.
    """
    with open("/proc/self/status") as status:
        kb = next(int(line.split()[1]) for line in status if line.startswith("VmHWM:"))
    return kb / 1024


def _child(db_path: str, csv_path: str) -> ImportFigures:
    """Check and add the report as `flask doses import` does, then time a raw executemany."""
    import sqlalchemy as sa

    from models.doses import import_ops
    from models.doses.import_ops import PRODUCT_LAYOUT, import_report
    from models.doses.tables import DoseRecord
    from webapp import create_app
    from webapp.extensions import db

    app = create_app({"SQLALCHEMY_DATABASE_URI": f"sqlite:///{os.path.abspath(db_path)}",
                      "WTF_CSRF_ENABLED": False, "RATELIMIT_ENABLED": False, "MAIL_SERVER": ""})
    with app.app_context(), open(csv_path, "rb") as report:
        data = report.read()
        # The bench's size (100,000 rows by default) is above the limit the app sets for one file.
        import_ops.MAX_ROWS = max(import_ops.MAX_ROWS, data.count(b"\n"))
        started = time.perf_counter()
        preview = import_report(db.session, data, PRODUCT_LAYOUT, os.path.basename(csv_path))
        db.session.commit()
        seconds = time.perf_counter() - started
        peak_mb = _peak_mb()
        # The same rows read back as plain dicts, inserted by one executemany and rolled back.
        rows = db.session.execute(sa.select(DoseRecord.__table__).where(
            DoseRecord.import_batch_id.is_not(None)).order_by(DoseRecord.id.desc()).limit(preview.row_count))
        values = [{k: v for k, v in row._mapping.items() if k not in ("id", "import_batch_id")} for row in rows]
        db.session.rollback()
        with db.engine.connect() as connection:
            started = time.perf_counter()
            connection.execute(sa.insert(DoseRecord.__table__), values)
            raw_seconds = time.perf_counter() - started
            connection.rollback()
    return ImportFigures(preview.row_count, seconds, peak_mb, raw_seconds)


def writer_wait(database: str, n_rows: int = WAIT_ROWS) -> tuple[float, int]:
    """The longest a concurrent writer waited for one transaction while a report of `n_rows` was
    imported into a fresh `database` ('sqlite' or 'postgresql'), and how many transactions it made.

    The writer is a process of its own (so the import's Python work does not hold it up), adding
    a person through the ORM (audited, so it needs the write lock) every WRITER_PAUSE_S.
    """
    from bench.server import SECRET_KEY, fresh_database
    from models.people.person_ops import add_person
    from models.people.tables import Role
    from webapp import create_app
    from webapp.extensions import db

    logins = [f"wearer{i:03d}" for i in range(WAIT_PEOPLE)]
    with tempfile.TemporaryDirectory(prefix="bench-import-") as directory, \
            fresh_database(database, directory) as url:
        app = create_app({"SQLALCHEMY_DATABASE_URI": url, "SECRET_KEY": SECRET_KEY, "MAIL_SERVER": ""})
        with app.app_context():
            for login in logins:
                add_person(db.session, login=login, name=login, email=f"{login}@example.org",
                           roles={Role.OPERATOR}, password_hash="!")
            db.session.commit()
            context = multiprocessing.get_context("spawn")
            stop, answer = context.Event(), context.Queue()
            writer = context.Process(target=_writer, args=(url, stop, answer))
            writer.start()
            _answer(answer)  # the writer is ready: its app is built and it has written once
            done = threading.Event()
            threading.Thread(target=_import_then_set, args=(app, report_bytes(logins, n_rows), done)).start()
            done.wait()
            stop.set()
            longest, count = _answer(answer)
            writer.join()
            db.engine.dispose()
    return longest, count


def _answer(answer) -> tuple[float, int]:
    """The writer's next message; its error, raised here, when it failed."""
    message = answer.get(timeout=600)
    if isinstance(message, str):
        raise RuntimeError(f"the concurrent writer failed: {message}")
    return message


def _import_then_set(app, data: bytes, done: threading.Event) -> None:
    """Import and commit the report, as `flask doses import` does, then say so."""
    from models.doses.import_ops import PRODUCT_LAYOUT, import_report
    from webapp.extensions import db

    try:
        with app.app_context():
            import_report(db.session, data, PRODUCT_LAYOUT, "wait.csv")
            db.session.commit()
    finally:
        done.set()


def _writer(url: str, stop, answer) -> None:
    """Add a person every WRITER_PAUSE_S until told to stop; send the longest transaction's time."""
    from bench.server import SECRET_KEY
    from webapp import create_app
    from webapp.extensions import db

    app = create_app({"SQLALCHEMY_DATABASE_URI": url, "SECRET_KEY": SECRET_KEY, "MAIL_SERVER": ""})
    with app.app_context():
        try:
            _write_until(stop, answer)
        except Exception as error:  # noqa: BLE001 (any failure is the bench's answer)
            answer.put(repr(error))
        db.engine.dispose()


def _write_until(stop, answer) -> None:
    """The writer's loop (see _writer)."""
    from models.people.person_ops import add_person
    from models.people.tables import Role
    from webapp.extensions import db

    longest, count = 0.0, 0
    while True:
        started = time.perf_counter()
        add_person(db.session, login=f"other{count}", name=f"Other {count}", email=f"other{count}@example.org",
                   roles={Role.OPERATOR}, password_hash="!")
        db.session.commit()
        if count:  # the first transaction only warms up (connection, caches) and says "ready"
            longest = max(longest, time.perf_counter() - started)
        else:
            answer.put((0.0, 0))
        count += 1
        if stop.is_set():
            break
        time.sleep(WRITER_PAUSE_S)
    answer.put((longest, count))


if __name__ == "__main__":
    if sys.argv[1] == "--writer-wait":
        longest_s, transactions = writer_wait(sys.argv[2])
        print(f"{sys.argv[2]}: the longest wait of another writer during a {WAIT_ROWS:,}-row import: "
              f"{1000 * longest_s:,.0f} ms ({transactions} transactions; target < {WRITER_WAIT_TARGET_S:g} s)")
    else:
        figures = _child(sys.argv[1], sys.argv[2])
        print(json.dumps(figures.__dict__))
