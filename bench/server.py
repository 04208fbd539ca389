"""The production server for measurements and tests: a fresh database and gunicorn over it."""
from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time
import urllib.error
import urllib.request
import uuid
from collections.abc import Iterator
from concurrent.futures import ThreadPoolExecutor
from contextlib import contextmanager

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
POSTGRES_ADMIN_URL = os.environ.get("BENCH_POSTGRES_URL", "postgresql://postgres@127.0.0.1:5432/postgres")
SECRET_KEY = "bench-secret-key-not-for-production"
# Loading the app (numpy, matplotlib, xraydb) in each worker takes seconds on a busy machine.
START_TIMEOUT_S = 120
# wsgi:app plus a header naming the worker, so readiness can wait for every worker.
APP = "bench.pid_app:app"
STOP_TIMEOUT_S = 15


def migrate(database_url: str) -> None:
    """Build the schema the way production does: by running the migrations."""
    from flask_migrate import upgrade

    from webapp import create_app
    from webapp.extensions import db

    app = create_app({"SQLALCHEMY_DATABASE_URI": database_url, "SECRET_KEY": SECRET_KEY})
    with app.app_context():
        upgrade()
        db.engine.dispose()


@contextmanager
def fresh_database(kind: str, directory: str) -> Iterator[str]:
    """A migrated, empty database ('sqlite' in `directory`, or 'postgresql'), dropped afterwards."""
    if kind == "sqlite":
        url = f"sqlite:///{os.path.join(directory, 'logbook.sqlite')}"
        migrate(url)
        yield url
        return
    import psycopg

    name = f"logbook_bench_{uuid.uuid4().hex[:12]}"
    with psycopg.connect(POSTGRES_ADMIN_URL, autocommit=True, connect_timeout=5) as admin:
        admin.execute(f'CREATE DATABASE "{name}"')
        url = (POSTGRES_ADMIN_URL.rsplit("/", 1)[0].replace("postgresql://", "postgresql+psycopg://")
               + f"/{name}")
        try:
            migrate(url)
            yield url
        finally:
            admin.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')


def _probe(base_url: str) -> str | None:
    """The pid of the worker that answered the public OpenAPI document, or None."""
    try:
        with urllib.request.urlopen(f"{base_url}/api/v1/openapi.json", timeout=5) as response:
            return response.headers.get("X-Worker-Pid") if response.status == 200 else None
    except (urllib.error.URLError, ConnectionError, TimeoutError):
        return None


def _wait_until_serving(base_url: str, workers: int, process: subprocess.Popen, log_path: str) -> None:
    """Probe in parallel until every worker has answered once (loaded the app), or fail with the log."""
    deadline, answered = time.monotonic() + START_TIMEOUT_S, set()
    with ThreadPoolExecutor(workers + 1) as pool:
        while time.monotonic() < deadline and process.poll() is None:
            answered.update(pid for pid in pool.map(_probe, [base_url] * (workers + 1)) if pid)
            if len(answered) >= workers:
                return
            time.sleep(0.2)
    with open(log_path, encoding="utf-8", errors="replace") as log:
        raise RuntimeError(f"gunicorn did not start {workers} workers within {START_TIMEOUT_S} s "
                           f"({len(answered)} answered):\n{log.read()[-3000:]}")


@contextmanager
def gunicorn(database_url: str, port: int, *, workers: int = 4, app: str = APP,
             env: dict[str, str] | None = None) -> Iterator[str]:
    """Serve the app with gunicorn on loopback, every worker loaded; always stopped (TERM, then KILL)."""
    environment = {**os.environ, "DATABASE_URL": database_url, "SECRET_KEY": SECRET_KEY,
                   "MAIL_SERVER": "", **(env or {})}
    log = tempfile.NamedTemporaryFile(prefix="gunicorn-", suffix=".log", delete=False)
    command = [sys.executable, "-m", "gunicorn", "--workers", str(workers),
               "--bind", f"127.0.0.1:{port}", "--timeout", "30", "--graceful-timeout", "5",
               "--log-level", "warning", app]
    process = subprocess.Popen(command, cwd=ROOT, env=environment, stdout=log, stderr=log)
    base_url = f"http://127.0.0.1:{port}"
    try:
        _wait_until_serving(base_url, workers, process, log.name)
        yield base_url
    finally:
        process.terminate()
        try:
            process.wait(STOP_TIMEOUT_S)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait()
        log.close()
        os.unlink(log.name)
