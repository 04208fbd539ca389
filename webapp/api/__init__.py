"""JSON API v1 for instrument PCs (`v1`, CSRF-exempt) and the admin's token pages (`bp`)."""
from flask import Blueprint

from webapp.extensions import csrf

bp = Blueprint("api", __name__, template_folder="templates", cli_group="api")
# Instrument PCs send a bearer token, not a browser cookie, so there is no session to forge.
v1 = Blueprint("v1", __name__, url_prefix="/api/v1")
csrf.exempt(v1)

from webapp.api import tokens, views  # noqa: E402,F401

bp.register_blueprint(v1)
