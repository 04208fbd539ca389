"""Each role's home page, the safety officer's attention list and the scope page."""
from flask import Blueprint

bp = Blueprint("home", __name__, template_folder="templates")

from webapp.home import views  # noqa: E402,F401
from webapp.home import panels  # noqa: E402,F401
