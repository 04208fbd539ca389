"""Instrument sessions and authorisations."""
from flask import Blueprint

bp = Blueprint("sessions", __name__, template_folder="templates", cli_group="sessions")
