"""What is due: due lists, reminders and calendar feeds."""
from flask import Blueprint

bp = Blueprint("due", __name__, template_folder="templates", cli_group="reminders")
