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
from contextlib import contextmanager

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
POSTGRES_ADMIN_URL = os.environ.get("BENCH_POSTGRES_URL", "postgresql://postgres@127.0.0.1:5432/postgres")
SECRET_KEY = "bench-secret-key-not-for-production"
START_TIMEOUT_S = 30
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


def _wait_until_serving(base_url: str, process: subprocess.Popen, log_path: str) -> None:
    """Poll the public OpenAPI document until gunicorn answers, or fail with its log."""
    deadline = time.monotonic() + START_TIMEOUT_S
    while time.monotonic() < deadline:
        if process.poll() is not None:
            break
        try:
            with urllib.request.urlopen(f"{base_url}/api/v1/openapi.json", timeout=2) as response:
                if response.status == 200:
                    return
        except (urllib.error.URLError, ConnectionError, TimeoutError):
            time.sleep(0.2)
    with open(log_path, encoding="utf-8", errors="replace") as log:
        raise RuntimeError(f"gunicorn did not start within {START_TIMEOUT_S} s:\n{log.read()[-3000:]}")


@contextmanager
def gunicorn(database_url: str, port: int, *, workers: int = 4, app: str = "wsgi:app",
             env: dict[str, str] | None = None) -> Iterator[str]:
    """Serve the app with gunicorn on loopback; always stopped (TERM, then KILL) on the way out."""
    environment = {**os.environ, "DATABASE_URL": database_url, "SECRET_KEY": SECRET_KEY,
                   "MAIL_SERVER": "", **(env or {})}
    log = tempfile.NamedTemporaryFile(prefix="gunicorn-", suffix=".log", delete=False)
    command = [sys.executable, "-m", "gunicorn", "--workers", str(workers),
               "--bind", f"127.0.0.1:{port}", "--timeout", "30", "--graceful-timeout", "5",
               "--log-level", "warning", app]
    process = subprocess.Popen(command, cwd=ROOT, env=environment, stdout=log, stderr=log)
    base_url = f"http://127.0.0.1:{port}"
    try:
        _wait_until_serving(base_url, process, log.name)
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
