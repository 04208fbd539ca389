"""The admin's pages for people: list, add, edit, deactivate."""
from __future__ import annotations

import sqlalchemy as sa
from flask import abort, flash, redirect, render_template, url_for
from flask_login import current_user

from models.audit import audit_ops
from models.core.codes import WorkerCategory
from models.people.person_ops import add_person, set_active, update_person, validate_new_person
from models.people.tables import ROLE_LABELS, Person, Role
from webapp.access import roles_required
from webapp.extensions import db
from webapp.forms import error_text, validate_with
from webapp.mail import link, tell_safety_officer
from webapp.passwords import hash_password
from webapp.people import bp
from webapp.people.forms import DeactivateForm, NewPersonForm, PersonForm


@bp.route("/people/")
@roles_required(Role.ADMIN)
def index():
    """Everyone with an account, active first."""
    people = db.session.scalars(sa.select(Person).order_by(Person.active.desc(), Person.name)).all()
    return render_template("people/index.html", people=people)


@bp.route("/people/new", methods=["GET", "POST"])
@roles_required(Role.ADMIN)
def new():
    """Add a person with a login and a first password."""
    form = NewPersonForm()
    if validate_with(form, lambda f: validate_new_person(
            db.session, f.login.data, f.name.data, {Role(r) for r in f.roles.data or []}, current_user)):
        person = add_person(
            db.session, login=form.login.data, name=form.name.data, email=form.email.data,
            roles={Role(r) for r in form.roles.data}, category=WorkerCategory(form.category.data),
            password_hash=hash_password(form.password.data))
        _tell_officers_of_roles(person, set(), person.role_set)  # queued, sent after the commit
        db.session.commit()
        flash(f"{person.name} can now log in as '{person.login}'.", "info")
        return redirect(url_for("people.index"))
    return render_template("people/edit.html", form=form, person=None)


@bp.route("/people/<int:person_id>", methods=["GET", "POST"])
@roles_required(Role.ADMIN)
def edit(person_id: int):
    """Change a person's name, e-mail, roles and worker category."""
    person = db.session.get(Person, person_id) or abort(404)
    form = PersonForm(obj=person)
    if not form.is_submitted():
        form.roles.data = [r.value for r in person.role_set]
    held = person.role_set
    if validate_with(form, lambda f: update_person(db.session, person, name=f.name.data, email=f.email.data,
                                                   roles={Role(r) for r in f.roles.data},
                                                   category=WorkerCategory(f.category.data), by=current_user)):
        _tell_officers_of_roles(person, held, person.role_set)  # queued, sent after the commit
        db.session.commit()
        flash("Saved.", "info")
        return redirect(url_for("people.index"))
    return render_template("people/edit.html", form=form, person=person,
                           deactivate=DeactivateForm())


@bp.route("/people/<int:person_id>/active", methods=["POST"])
@roles_required(Role.ADMIN)
def toggle_active(person_id: int):
    """Deactivate an account (with a reason) or reactivate it; nobody is deleted."""
    person = db.session.get(Person, person_id) or abort(404)
    form = DeactivateForm()

    def switch(f):
        with audit_ops.reason(db.session, f.reason.data):
            set_active(db.session, person, not person.active)

    if not validate_with(form, switch):
        flash(error_text(form), "error")
        return redirect(url_for("people.edit", person_id=person.id))
    db.session.commit()
    flash(f"{person.name} is now {'active' if person.active else 'deactivated'}.", "info")
    return redirect(url_for("people.index"))


def _tell_officers_of_roles(person: Person, before: set[Role], after: set[Role]) -> None:
    """E-mail the safety officers whenever someone's roles change, naming who changed them."""
    if before == after:
        return
    tell_safety_officer(
        f"Roles changed: {person.name} ({person.login})",
        f"{current_user.name} ({current_user.login}) changed the roles of {person.name} "
        f"({person.login}).\n\nBefore: {_role_names(before)}\nNow: {_role_names(after)}\n\n"
        f"If this was not agreed, check the account: {link('people.edit', person_id=person.id)}")


def _role_names(roles: set[Role]) -> str:
    """Roles as people read them."""
    return ", ".join(ROLE_LABELS[r] for r in sorted(roles)) or "none"
