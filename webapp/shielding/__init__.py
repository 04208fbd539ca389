"""Shielding and dose-rate estimates: the safety officer's page, the chart and `flask shielding`."""
from flask import Blueprint

bp = Blueprint("shielding", __name__, template_folder="templates", cli_group="shielding")

from webapp.shielding import cli, views  # noqa: E402,F401
