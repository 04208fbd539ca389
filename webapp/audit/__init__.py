"""The audit trail: browsing it and `flask audit verify`."""
from flask import Blueprint

bp = Blueprint("audit", __name__, template_folder="templates", cli_group="audit")

from webapp.audit import cli, views  # noqa: E402,F401
