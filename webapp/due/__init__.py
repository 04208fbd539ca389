"""What is due: due lists, reminders and calendar feeds."""
from flask import Blueprint

bp = Blueprint("due", __name__, template_folder="templates", cli_group="reminders")

from webapp.due import cli, views  # noqa: E402,F401  (registers routes, panels and the command)
