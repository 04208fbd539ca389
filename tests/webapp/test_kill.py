"""kill -9 of a serving process mid-writes and of `flask doses import` mid-import, on both databases.

Afterwards the database is whole (SQLite's integrity check; PostgreSQL opens and answers), the audit
trail verifies, every session the server acknowledged with 201 is there, and an import is there
entirely or not at all.
"""
from __future__ import annotations

import http.client
import json
import os
import resource
import signal
import sqlite3
import subprocess
import threading
from datetime import UTC, date, datetime, timedelta

import pytest
import sqlalchemy as sa

from bench.imports import report_bytes
from models.doses.tables import DoseRecord, ImportBatch
from models.sessions.tables import InstrumentSession
from tests.child import ROOT, command, environment, server
from tests.conftest import free_port
from webapp.extensions import db

pytestmark = pytest.mark.slow

LOGGERS = 4
FIRST_SLOT = datetime(2026, 3, 2, tzinfo=UTC)
ACKNOWLEDGED_BEFORE_KILL = 40
IMPORT_ROWS = 30_000
# Kill points for the import, in seconds of CPU the child has used past loading the app (measured
# first): through reading and checking the rows to the commit. One that lands after the commit ends
# the series.
CPU_STEP_S = 0.5


class Loggers:
    """Threads posting finished sessions, each in slots of its own, noting every 201's session id."""

    def __init__(self, port: int, tokens: list[str], operator: str):
        self.port, self.tokens, self.operator = port, tokens, operator
        self.acknowledged: list[int] = []
        self.errors: list[str] = []  # 5xx answers and failures of a logger itself
        self.changed = threading.Condition()
        self.stop = threading.Event()
        self.threads = [threading.Thread(target=self._log, args=(n,)) for n in range(len(tokens))]

    def _post(self, token: str, slot: int) -> int | None:
        """Post one session; its id when acknowledged, None when refused or unanswered."""
        start = FIRST_SLOT + timedelta(minutes=15 * slot)
        body = {"operator": self.operator, "kv": 40, "ma": 30, "pre_use_checks_confirmed": True,
                "started_at": start.isoformat(), "ended_at": (start + timedelta(minutes=10)).isoformat()}
        connection = http.client.HTTPConnection("127.0.0.1", self.port, timeout=60)
        try:
            connection.request("POST", "/api/v1/sessions/finished", body=json.dumps(body),
                               headers={"Authorization": f"Bearer {token}", "Content-Type": "application/json"})
            response = connection.getresponse()
            answer = json.loads(response.read() or b"null")
        except (ConnectionError, http.client.HTTPException, json.JSONDecodeError):
            return None  # the server died under this request: not acknowledged
        finally:
            connection.close()
        if response.status != 201:  # distinct slots: anything but 201 from a live server is wrong
            self.errors.append(f"{response.status}: {answer}")
            return None
        return answer["id"]

    def _log(self, n: int) -> None:
        """Logger n's slots are n, n + LOGGERS, n + 2 LOGGERS, ..., so no two loggers overlap."""
        slot = n
        try:
            while not self.stop.is_set():
                session_id = self._post(self.tokens[n], slot)
                if session_id is not None:
                    with self.changed:
                        self.acknowledged.append(session_id)
                        self.changed.notify_all()
                slot += LOGGERS
        except Exception as error:  # reported by the test, not lost with the thread
            with self.changed:
                self.errors.append(repr(error))
                self.changed.notify_all()

    def __enter__(self):
        for thread in self.threads:
            thread.start()
        return self

    def wait_for(self, count: int) -> None:
        """Block until at least `count` sessions were acknowledged."""
        with self.changed:
            self.changed.wait_for(lambda: len(self.acknowledged) >= count or self.errors)

    def __exit__(self, *_exc):
        self.stop.set()
        for thread in self.threads:
            thread.join()


def _check_whole(app, database_url: str) -> None:
    """The database is whole and the audit trail verifies."""
    db.session.remove()  # a fresh look, after the children wrote
    if database_url.startswith("sqlite"):
        with sqlite3.connect(database_url.removeprefix("sqlite:///")) as connection:
            assert connection.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
            assert connection.execute("PRAGMA journal_mode").fetchone() == ("wal",)  # as the app left it
    else:
        assert db.session.scalar(sa.text("SELECT 1")) == 1
    result = app.test_cli_runner().invoke(args=["audit", "verify"])
    assert result.exit_code == 0 and "The audit trail is intact" in result.output, result.output


def test_a_server_killed_mid_write_loses_no_acknowledged_session(
        app, database_url, make_person, make_instrument, authorise, api_token, client):
    operator = make_person("op")
    instrument = make_instrument()
    authorise(operator, instrument, trained_on=date(2026, 1, 5), refresher_due=date(2027, 1, 5))
    tokens = [api_token(instrument) for _ in range(LOGGERS)]
    port = free_port()
    with server(database_url, port) as child, Loggers(port, tokens, operator.login) as loggers:
        loggers.wait_for(ACKNOWLEDGED_BEFORE_KILL)
        child.send_signal(signal.SIGKILL)  # with every logger's request in flight
        child.wait()
    assert loggers.errors == []
    _check_whole(app, database_url)
    stored = set(db.session.scalars(sa.select(InstrumentSession.id)))
    assert set(loggers.acknowledged) <= stored
    # The database takes writes again at once: no lock or transaction outlived the process.
    after = client.post("/api/v1/sessions/finished", headers={"Authorization": f"Bearer {tokens[0]}"}, json={
        "operator": operator.login, "kv": 40, "ma": 30, "pre_use_checks_confirmed": True,
        "started_at": "2026-02-02T09:00:00Z", "ended_at": "2026-02-02T10:00:00Z"})
    assert after.status_code == 201, after.get_json()


def _cpu_seconds(pid: int) -> float:
    """User and system CPU time a process has used (Linux /proc)."""
    with open(f"/proc/{pid}/stat") as stat:
        fields = stat.read().rsplit(")", 1)[1].split()
    return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")


def _import_killed_after(database_url: str, report: str, cpu_s: float) -> bool:
    """Run the import and SIGKILL it once it used `cpu_s` of CPU; False when it finished first."""
    # The context closes the pipes and waits, also when an assertion below fails.
    with subprocess.Popen(command("flask", "doses", "import", report), cwd=ROOT,
                          env=environment(database_url), stdout=subprocess.PIPE, stderr=subprocess.PIPE) as child:
        try:
            while child.poll() is None:
                assert _imported() in {(0, 0), (IMPORT_ROWS, 1)}, "a partial import is visible"
                try:
                    if _cpu_seconds(child.pid) >= cpu_s:
                        child.send_signal(signal.SIGKILL)
                        break
                except FileNotFoundError:
                    break  # gone between the poll and the read
                threading.Event().wait(0.01)
            _out, err = child.communicate()
        finally:
            if child.poll() is None:
                child.kill()
    if child.returncode == -signal.SIGKILL:
        return True
    assert child.returncode == 0, err.decode()[-2000:]
    return False


def _cpu_to_load_the_app(database_url: str) -> float:
    """CPU seconds a child uses to load the app and run a trivial command."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    subprocess.run(command("flask", "audit", "anchor"), cwd=ROOT, env=environment(database_url),
                   capture_output=True, check=True)
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def _imported() -> tuple[int, int]:
    """Dose records and import batches on file, counted in one statement.

    One statement reads one snapshot on both databases; two would let the import's commit land
    between them and show its batch without its rows.
    """
    db.session.remove()
    count = sa.select(sa.func.count())
    return tuple(db.session.execute(sa.select(count.select_from(DoseRecord).scalar_subquery(),
                                              count.select_from(ImportBatch).scalar_subquery())).one())


def test_an_import_killed_mid_way_is_all_or_nothing(app, database_url, make_person, tmp_path):
    # 200 people, so 30,000 monthly results span 1980-1992 (bench.imports.report_bytes).
    logins = [make_person().login for _ in range(200)]
    report = tmp_path / "report.csv"
    report.write_bytes(report_bytes(logins, IMPORT_ROWS))
    kills, cpu_s = 0, _cpu_to_load_the_app(database_url)
    while _import_killed_after(database_url, str(report), cpu_s):
        kills += 1
        assert _imported() in {(0, 0), (IMPORT_ROWS, 1)}, f"a partial import after a kill at {cpu_s} s of CPU"
        _check_whole(app, database_url)
        if _imported() == (IMPORT_ROWS, 1):
            break
        cpu_s += CPU_STEP_S
    assert kills > 0, "the import finished before the first kill point"
    if _imported() == (0, 0):
        assert not _import_killed_after(database_url, str(report), float("inf"))  # run to the end
    assert _imported() == (IMPORT_ROWS, 1)
    _check_whole(app, database_url)
