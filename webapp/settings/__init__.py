"""The lab's settings."""
from flask import Blueprint

bp = Blueprint("settings", __name__, template_folder="templates")

from webapp.settings import views  # noqa: E402,F401
