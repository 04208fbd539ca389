"""Survey meters, surveys, survey tasks and bypass permits."""
from flask import Blueprint

bp = Blueprint("surveys", __name__, template_folder="templates", cli_group="surveys")

from webapp.surveys import cli, meter_views, panels, permit_views, survey_views  # noqa: E402,F401
