"""People and accounts: the admin's pages and `flask people`."""
from flask import Blueprint

bp = Blueprint("people", __name__, template_folder="templates", cli_group="people")

from webapp.people import cli, views  # noqa: E402,F401
