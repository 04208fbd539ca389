"""Dosimeters, dose records, imports and pregnancy declarations."""
from flask import Blueprint

bp = Blueprint("doses", __name__, template_folder="templates", cli_group="doses")

from webapp.doses import cli, dosimeter_views, import_views, pregnancy_views, views  # noqa: E402,F401
