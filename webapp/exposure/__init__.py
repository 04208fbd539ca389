"""Dose evaluation: limits, exposure pages, investigations."""
from flask import Blueprint

bp = Blueprint("exposure", __name__, template_folder="templates", cli_group="exposure")

from webapp.exposure import cli, limit_pages, pages, views  # noqa: E402,F401
