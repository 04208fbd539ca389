"""The app in a child process with the tests' clock: `python -m tests.child serve PORT` or `... flask ARGS`.

Crash and concurrency tests kill or race real processes; the app in them reads its time through
`models.core.base.clock`, started here at LAB_NOW as the `lab_clock` fixture does in the tests' own
process, so what they write does not depend on the machine's clock. The app is configured from the
environment (DATABASE_URL, AUDIT_KEY, ...), as in production.
"""
from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from collections.abc import Iterator
from contextlib import contextmanager
from datetime import timedelta

from models.core import base
from tests.conftest import AUDIT_KEY, LAB_NOW

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
SERVING = "serving"


def environment(database_url: str, **extra: str) -> dict[str, str]:
    """The environment of a child app over `database_url`: no mail, no throttle, the tests' key."""
    return {**os.environ, "FLASK_APP": "wsgi.py", "DATABASE_URL": database_url, "AUDIT_KEY": AUDIT_KEY,
            "SECRET_KEY": "test", "MAIL_SERVER": "", "RATELIMIT_ENABLED": "0", "LAB_TIMEZONE": "UTC",
            **extra}


def command(*args: str) -> list[str]:
    """The command line that runs `args` (`serve PORT` or flask's arguments) in a child."""
    return [sys.executable, "-m", "tests.child", *args]


@contextmanager
def server(database_url: str, port: int) -> Iterator[subprocess.Popen]:
    """The app served on loopback by a child process, answering once this yields; killed after."""
    process = subprocess.Popen(command("serve", str(port)), cwd=ROOT, env=environment(database_url),
                               stdout=subprocess.PIPE, text=True)
    try:
        line = process.stdout.readline()  # blocks until the child is listening (or has died)
        assert line.strip() == SERVING, f"the server did not start (exit {process.poll()})"
        yield process
    finally:
        if process.poll() is None:
            process.send_signal(signal.SIGKILL)
        process.wait()
        process.stdout.close()


def _serve(port: int) -> None:
    """Serve the app on loopback, several requests at once, until killed."""
    from werkzeug.serving import make_server

    from webapp import create_app

    httpd = make_server("127.0.0.1", port, create_app(), threaded=True)
    print(SERVING, flush=True)
    httpd.serve_forever()


def main(args: list[str]) -> None:
    """Start the clock at LAB_NOW, then serve or run a flask command."""
    started = time.monotonic()
    base.clock = lambda: LAB_NOW + timedelta(seconds=time.monotonic() - started)
    if args[0] == "serve":
        _serve(int(args[1]))
        return
    from flask.cli import main as flask

    sys.argv = ["flask", *args[1:]]
    flask()


if __name__ == "__main__":
    main(sys.argv[1:])
