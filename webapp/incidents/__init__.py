"""Incident reports and their follow-up."""
from flask import Blueprint

bp = Blueprint("incidents", __name__, template_folder="templates", cli_group="incidents")

from webapp.incidents import views  # noqa: E402,F401
