"""Instrument sessions and authorisations."""
from flask import Blueprint

bp = Blueprint("sessions", __name__, template_folder="templates", cli_group="sessions")

from webapp.sessions import authorisations, views  # noqa: E402,F401
