"""Reports: CSV exports of every list, and the documents made for year end and inspections."""
from flask import Blueprint

bp = Blueprint("reports", __name__, template_folder="templates", cli_group=None)

from webapp.reports import cli, views  # noqa: E402,F401
