"""The production app, telling in a header which gunicorn worker answered (for the load script and tests)."""
import os

from wsgi import app as _app


def app(environ, start_response):
    """Add X-Worker-Pid to every response."""
    def start(status, headers, exc_info=None):
        return start_response(status, [*headers, ("X-Worker-Pid", str(os.getpid()))], exc_info)
    return _app(environ, start)
