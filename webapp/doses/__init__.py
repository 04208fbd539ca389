"""Dosimeters, dose records, imports and pregnancy declarations."""
from flask import Blueprint

bp = Blueprint("doses", __name__, template_folder="templates", cli_group="doses")
