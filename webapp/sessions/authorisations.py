"""The safety officer authorises people on instruments; the posted list of authorised users."""
from __future__ import annotations

import sqlalchemy as sa
from flask import abort, flash, redirect, render_template, url_for
from flask_login import current_user, login_required
from wtforms import SelectChoice

from models.audit import audit_ops
from models.instruments.authorisation_ops import (
    authorised_users,
    grant_authorisation,
    revoke_authorisation,
    standing_authorisation,
    validate_authorisation,
)
from models.instruments.tables import Authorisation, AuthorisationLevel, Instrument
from models.people.person_ops import safety_officers
from models.people.tables import Person, Role
from webapp.access import roles_required
from webapp.extensions import db
from webapp.formatting import lab_today
from webapp.forms import error_text, validate_with
from webapp.sessions import bp
from webapp.sessions.forms import AuthoriseForm, RevokeForm, optional_id
from webapp.slots import instrument_sections


def _form_values(form: AuthoriseForm) -> dict:
    """The authorisation form's values as the domain takes them."""
    return {"person": db.session.get(Person, optional_id(form.person_id.data) or 0),
            "level": AuthorisationLevel(form.level.data) if form.level.data else None,
            "trained_on": form.trained_on.data, "refresher_due_on": form.refresher_due.data}


@bp.route("/instruments/<int:instrument_id>/authorisations", methods=["GET", "POST"])
@roles_required(Role.SAFETY_OFFICER)
def authorisations(instrument_id: int):
    """Who may run the instrument, with a form to authorise someone."""
    instrument = db.session.get(Instrument, instrument_id) or abort(404)
    form = AuthoriseForm()
    people = db.session.scalars(sa.select(Person).where(Person.active.is_(True))
                                .order_by(Person.name)).all()
    form.person_id.choices = [SelectChoice("", "—")] + [SelectChoice(str(p.id), f"{p.name} ({p.login})") for p in people]
    if validate_with(form, lambda f: validate_authorisation(db.session, instrument=instrument,
                                                         **_form_values(f))):
        values = _form_values(form)
        renewed = standing_authorisation(db.session, values["person"], instrument) is not None
        granted = grant_authorisation(db.session, instrument=instrument, granted_by=current_user,
                                      **values)
        db.session.commit()
        verb = "'s authorisation is renewed" if renewed else " is authorised"
        flash(f"{granted.person.name}{verb} on {instrument.name} ({granted.level.value}) until "
              f"{granted.refresher_due.isoformat()}.", "info")
        return redirect(url_for("sessions.authorisations", instrument_id=instrument.id))
    history = db.session.scalars(sa.select(Authorisation).where(
        Authorisation.instrument_id == instrument.id).order_by(Authorisation.granted_at.desc())).all()
    return render_template("sessions/authorisations.html", instrument=instrument, form=form,
                           history=history, revoke_form=RevokeForm(), today=lab_today())


@bp.route("/authorisations/<int:authorisation_id>/revoke", methods=["POST"])
@roles_required(Role.SAFETY_OFFICER)
def revoke(authorisation_id: int):
    """Withdraw an authorisation, with the reason kept in the audit trail."""
    authorisation = db.session.get(Authorisation, authorisation_id) or abort(404)
    form = RevokeForm()
    back = redirect(url_for("sessions.authorisations", instrument_id=authorisation.instrument_id))

    def withdraw(f):
        with audit_ops.reason(db.session, f.reason.data.strip()):
            revoke_authorisation(db.session, authorisation)

    if not validate_with(form, withdraw):
        flash(error_text(form), "error")
        return back
    db.session.commit()
    flash(f"{authorisation.person.name}'s authorisation on {authorisation.instrument.name} "
          "is revoked.", "info")
    return back


@bp.route("/instruments/<int:instrument_id>/authorised/print")
@login_required
def printable(instrument_id: int):
    """The list of authorised users to post beside the instrument."""
    instrument = db.session.get(Instrument, instrument_id) or abort(404)
    return render_template("sessions/print.html", instrument=instrument,
                           users=authorised_users(db.session, instrument),
                           officers=safety_officers(db.session), today=lab_today())


@instrument_sections.add("sessions/_authorised.html", order=15)
def _authorised(instrument: Instrument) -> dict:
    """Who may run this instrument, and until when."""
    return {"instrument": instrument, "users": authorised_users(db.session, instrument),
            "today": lab_today()}
