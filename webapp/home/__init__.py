"""Each role's home page, the safety officer's attention list and the scope page."""
from flask import Blueprint

bp = Blueprint("home", __name__, template_folder="templates")

from webapp.home import panels, views  # noqa: E402,F401
