"""`flask backup FILE`: a consistent copy of the live database."""
from flask import Blueprint

bp = Blueprint("backup", __name__, cli_group=None)

from webapp.backup import cli  # noqa: E402,F401
