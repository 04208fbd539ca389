"""Instruments: the list, each instrument's page, the admin's forms and `flask instruments`."""
from flask import Blueprint

bp = Blueprint("instruments", __name__, template_folder="templates", cli_group="instruments")

from webapp.instruments import cli, panels, views  # noqa: E402,F401
