"""The demo lab."""
from flask import Blueprint

bp = Blueprint("demo", __name__, template_folder="templates", cli_group="demo")

from webapp.demo import cli  # noqa: E402,F401
