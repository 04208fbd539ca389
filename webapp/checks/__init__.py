"""Safety-device checks, checklist templates and temporary controls."""
from flask import Blueprint

bp = Blueprint("checks", __name__, template_folder="templates", cli_group="checks")

from webapp.checks import views  # noqa: E402,F401  (registers routes and page sections)
