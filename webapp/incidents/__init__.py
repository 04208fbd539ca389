"""Incident reports and their follow-up."""
from flask import Blueprint

bp = Blueprint("incidents", __name__, template_folder="templates", cli_group="incidents")
