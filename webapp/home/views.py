"""Home pages and the scope page."""
from __future__ import annotations

from pathlib import Path

from flask import current_app, render_template
from flask_login import current_user, login_required

from models.people.tables import Role
from webapp.home import bp
from webapp.slots import attention, home_panels


@bp.route("/")
@login_required
def index():
    """The page fit for the person's roles: panels, and the attention list for the safety officer."""
    lines = attention.collect() if current_user.has_role(Role.SAFETY_OFFICER) else None
    return render_template("home/index.html", attention=lines,
                           panels=home_panels.render_for(current_user, current_user))


@bp.route("/safety")
def safety():
    """SAFETY.md as a page: scope and limits of the logbook."""
    path = Path(current_app.root_path).parent / "SAFETY.md"
    return render_template("home/safety.html", text=path.read_text(encoding="utf-8"))
