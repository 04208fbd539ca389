"""Survey meters, surveys, survey tasks and bypass permits."""
from flask import Blueprint

from models.surveys.survey_ops import shown_reason

bp = Blueprint("surveys", __name__, template_folder="templates", cli_group="surveys")
# Survey task lists appear on shared pages of several areas.
bp.add_app_template_global(shown_reason)

from webapp.surveys import cli, meter_views, panels, permit_views, survey_views  # noqa: E402,F401
