"""Settings pages; other areas add their own sections."""
from __future__ import annotations

from flask import flash, redirect, render_template, url_for
from flask_login import current_user

from models.core.errors import Invalid
from models.people.person_ops import OFFICER_ADDRESS
from models.people.tables import Role
from webapp.access import roles_required
from webapp.extensions import db
from webapp.formatting import settings
from webapp.forms import validate_with
from webapp.settings import bp
from webapp.settings.forms import LabForm
from webapp.slots import settings_sections

FIELDS = ("lab_name", "timezone", "display_unit", "due_soon_days", "safety_officer_email",
          "idle_timeout_minutes", "session_lifetime_hours", "public_authorisation", "late_check_policy", "investigation_policy")


@bp.route("/settings/", methods=["GET", "POST"])
@roles_required(Role.SAFETY_OFFICER, Role.ADMIN)
def index():
    """The lab's name, time zone, display unit and alert address."""
    lab = settings()
    form = LabForm(obj=lab)
    if validate_with(form, lambda f: _officer_address_kept(f, lab)):
        for name in FIELDS:
            setattr(lab, name, form[name].data or (None if name == "safety_officer_email" else ""))
        db.session.commit()
        flash("Settings saved.", "info")
        return redirect(url_for("settings.index"))
    return render_template("settings/index.html", form=form,
                           sections=settings_sections.render_for(current_user, lab))


def _officer_address_kept(form, lab) -> None:
    """Alerts for the safety officer are redirected only by a safety officer."""
    if (form.safety_officer_email.data or None) != lab.safety_officer_email and \
            not current_user.has_role(Role.SAFETY_OFFICER):
        raise Invalid.one("safety_officer_email", OFFICER_ADDRESS)
