"""The demo lab."""
from flask import Blueprint

bp = Blueprint("demo", __name__, template_folder="templates", cli_group="demo")
