"""Logging in and out."""
from flask import Blueprint

bp = Blueprint("auth", __name__, template_folder="templates")

from webapp.auth import views  # noqa: E402,F401
