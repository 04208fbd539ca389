"""The production app, telling in a header which gunicorn worker answered (for the load script and tests)."""
import os

from flask import jsonify

from wsgi import app as _app

FLOOR_PATH = "/bench/floor"
# The framework floor: the same app, hooks and middleware, a view that does nothing.
_app.add_url_rule(FLOOR_PATH, "bench_floor", lambda: jsonify(ok=True))


def app(environ, start_response):
    """Add X-Worker-Pid to every response."""
    def start(status, headers, exc_info=None):
        return start_response(status, [*headers, ("X-Worker-Pid", str(os.getpid()))], exc_info)
    return _app(environ, start)
