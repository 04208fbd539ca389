"""Pregnancy declarations: seen and changed only by the person and the safety officer."""
from __future__ import annotations

from flask import abort, flash, redirect, render_template, url_for
from flask_login import current_user

from models.core.errors import Invalid
from models.exposure.investigation_ops import review_after_dose_change
from models.exposure.pregnancy_ops import (
    END_REASONS,
    ENDED,
    WITHDRAWN,
    declarations_of,
    declare,
    end_declaration,
    open_declaration,
    open_declarations,
)
from models.exposure.tables import Investigation
from models.people.tables import Role
from webapp.access import roles_required
from webapp.doses import bp
from webapp.doses.forms import DeclareForm, EndForm
from webapp.doses.views import DOSE_ROLES, person_or_403
from webapp.exposure.notify import tell_about
from webapp.extensions import db
from webapp.formatting import lab_today
from webapp.forms import validate_with
from webapp.mail import link, tell_safety_officer

# Who may do what: the person declares and withdraws; the safety officer declares for them and
# records the end of the pregnancy.
_ACTIONS = {"declare": {"self", "officer"}, WITHDRAWN: {"self"}, ENDED: {"officer"}}


def _roles_here(person_id: int) -> set[str]:
    """'self' and/or 'officer': the viewer's standing on this person's declaration."""
    roles = set()
    if current_user.id == person_id:
        roles.add("self")
    if current_user.has_role(Role.SAFETY_OFFICER):
        roles.add("officer")
    return roles


@bp.route("/doses/pregnancy")
@roles_required(*DOSE_ROLES)
def my_pregnancy():
    """The logged-in person's own declaration page."""
    return redirect(url_for("doses.pregnancy", person_id=current_user.id))


@bp.route("/doses/pregnancies")
@roles_required(Role.SAFETY_OFFICER)
def pregnancies():
    """Declarations in force: the safety officer's private list."""
    return render_template("doses/pregnancies.html", declarations=open_declarations(db.session))


@bp.route("/doses/person/<int:person_id>/pregnancy")
@roles_required(*DOSE_ROLES)
def pregnancy(person_id: int):
    """A person's declarations, with the forms the viewer may use."""
    return _page(person_id, DeclareForm(), EndForm())


def _page(person_id: int, declare_form: DeclareForm, end_form: EndForm, status: int = 200):
    """Render the declaration page for a person."""
    subject = person_or_403(person_id)
    if not declare_form.declared_on.data:
        declare_form.declared_on.data = lab_today()
    if not end_form.ended_on.data:
        end_form.ended_on.data = lab_today()
    return render_template("doses/pregnancy.html", subject=subject, roles=_roles_here(person_id),
                           current=open_declaration(db.session, person_id),
                           declarations=declarations_of(db.session, person_id),
                           declare_form=declare_form, end_form=end_form, END_REASONS=END_REASONS,
                           ACTIONS=_ACTIONS), status


@bp.route("/doses/person/<int:person_id>/pregnancy/<action>", methods=["POST"])
@roles_required(*DOSE_ROLES)
def pregnancy_change(person_id: int, action: str):
    """Declare, withdraw (the person) or end (the safety officer) a declaration."""
    subject = person_or_403(person_id)
    if action not in _ACTIONS:
        abort(404)
    if not _ACTIONS[action] & _roles_here(person_id):
        abort(403)
    declare_form, end_form = DeclareForm(), EndForm()
    form = declare_form if action == "declare" else end_form

    def change(f) -> list[Investigation]:
        if action == "declare":
            declare(db.session, person_id, f.declared_on.data, today=lab_today(),
                    recorded_by_id=current_user.id, conception_on=f.conception_on.data,
                    expected_end_on=f.expected_end_on.data)
        else:
            current = open_declaration(db.session, person_id)
            if current is None:
                raise Invalid.one("ended_on", "No declaration is in force.")
            end_declaration(db.session, current, f.ended_on.data, action, today=lab_today())
        return review_after_dose_change(db.session, lab_today())

    if not (changed := validate_with(form, change)):
        return _page(person_id, declare_form, end_form, 400)
    tell_about(changed.value)
    if action == "declare" and current_user.id == person_id:
        tell_safety_officer("A declaration needs your review",
                            f"{subject.name} recorded a pregnancy declaration dated "
                            f"{declare_form.declared_on.data}. Please talk with them about work "
                            f"arrangements: {link('doses.pregnancy', person_id=person_id)}")
    db.session.commit()
    flash({"declare": "Declaration recorded.", WITHDRAWN: "Declaration withdrawn.",
           ENDED: "Declaration ended."}[action], "info")
    return redirect(url_for("doses.pregnancy", person_id=person_id))
