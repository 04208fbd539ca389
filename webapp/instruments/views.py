"""Instrument list and page; the admin adds, edits and retires instruments."""
from __future__ import annotations

from flask import abort, flash, redirect, render_template, url_for
from flask_login import current_user, login_required

from models.audit import audit_ops
from models.instruments.instrument_ops import (
    active_instruments,
    retire_instrument,
    return_to_service,
    save_instrument,
    set_out_of_service,
    validate_instrument,
)
from models.instruments.tables import KIND_LABELS, Instrument
from models.people.tables import Role
from webapp.access import roles_required
from webapp.extensions import db
from webapp.forms import error_text, validate_with
from webapp.instruments import bp
from webapp.instruments.forms import InstrumentForm, ServiceForm
from webapp.slots import instrument_sections


@bp.route("/instruments/")
@login_required
def index():
    """Every instrument in use, with its status."""
    return render_template("instruments/index.html", instruments=active_instruments(db.session),
                           kinds=KIND_LABELS)


@bp.route("/instruments/<int:instrument_id>")
@login_required
def show(instrument_id: int):
    """An instrument's description, status and the sections each area adds."""
    instrument = db.session.get(Instrument, instrument_id) or abort(404)
    return render_template(
        "instruments/show.html", instrument=instrument, kinds=KIND_LABELS,
        sections=instrument_sections.render_for(current_user, instrument),
        service_form=ServiceForm())


@bp.route("/instruments/new", methods=["GET", "POST"])
@roles_required(Role.ADMIN)
def new():
    """Add an instrument with its ratings."""
    return _edit(InstrumentForm(), None)


@bp.route("/instruments/<int:instrument_id>/edit", methods=["GET", "POST"])
@roles_required(Role.ADMIN)
def edit(instrument_id: int):
    """Change an instrument's description and ratings."""
    instrument = db.session.get(Instrument, instrument_id) or abort(404)
    form = InstrumentForm(obj=instrument)
    if not form.is_submitted():
        form.kind.data, form.enclosure.data = instrument.kind.value, instrument.enclosure.value
    return _edit(form, instrument)


def _edit(form: InstrumentForm, instrument: Instrument | None):
    """Validate, save and commit an instrument form, or show it with its errors."""
    if validate_with(form, lambda f: validate_instrument(db.session, f.values(), instrument)):
        instrument = save_instrument(db.session, form.values(), instrument)
        db.session.commit()
        flash(f"Saved {instrument.name}.", "info")
        return redirect(url_for("instruments.show", instrument_id=instrument.id))
    return render_template("instruments/edit.html", form=form, instrument=instrument)


@bp.route("/instruments/<int:instrument_id>/retire", methods=["POST"])
@roles_required(Role.ADMIN)
def retire(instrument_id: int):
    """Retire an instrument; its records stay."""
    instrument = db.session.get(Instrument, instrument_id) or abort(404)
    form = ServiceForm()

    def retire(f):
        with audit_ops.reason(db.session, f.reason.data):
            retire_instrument(db.session, instrument)

    if validate_with(form, retire):
        db.session.commit()
        flash(f"{instrument.name} is retired.", "info")
    else:
        flash(error_text(form), "error")
    return redirect(url_for("instruments.show", instrument_id=instrument.id))


@bp.route("/instruments/<int:instrument_id>/service", methods=["POST"])
@roles_required(Role.SAFETY_OFFICER)
def service(instrument_id: int):
    """The safety officer takes an instrument out of service, or returns it, with a reason."""
    instrument = db.session.get(Instrument, instrument_id) or abort(404)
    form = ServiceForm()

    def switch(f):
        with audit_ops.reason(db.session, f.reason.data):
            if instrument.in_service:
                set_out_of_service(db.session, instrument, f.reason.data)
            else:
                return_to_service(db.session, instrument)

    if validate_with(form, switch):
        db.session.commit()
        flash(f"{instrument.name} is {'in service' if instrument.in_service else 'out of service'}.",
              "info")
    else:
        flash(error_text(form), "error")
    return redirect(url_for("instruments.show", instrument_id=instrument.id))
