"""JSON API v1 for instrument PCs."""
from flask import Blueprint

bp = Blueprint("api", __name__, template_folder="templates", cli_group="api")
