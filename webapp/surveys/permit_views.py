"""Bypass permits: operators ask, the safety officer decides, requester or officer closes."""
from __future__ import annotations

from flask import abort, flash, redirect, render_template, url_for
from flask_login import current_user, login_required
from wtforms import SelectChoice

from models.core.base import utcnow
from models.core.errors import Invalid, errors_of
from models.instruments.authorisation_ops import authorised_for, instruments_for
from models.instruments.tables import Instrument
from models.people.tables import Role
from models.surveys.permit_ops import (
    RING_RULE,
    SIGN_RULE,
    PermitRequest,
    close_permit,
    decide,
    display_state,
    may_close,
    permits_of,
    request_permit,
    validate_request,
)
from models.surveys.tables import BypassPermit
from webapp.access import roles_required
from webapp.extensions import db
from webapp.formatting import lab_today, local
from webapp.forms import error_text, query_int, validate_with
from webapp.mail import link, send_mail, tell_safety_officer
from webapp.surveys import bp
from webapp.surveys.forms import DecisionForm, PermitForm, utc


@bp.route("/permits/")
@login_required
def permits():
    """Every permit, latest request first, with its state now."""
    return render_template("surveys/permits.html", permits=permits_of(db.session),
                           state=display_state, now=utcnow())


@bp.route("/permits/<int:permit_id>")
@login_required
def permit(permit_id: int):
    """One permit, with the decision and closing forms for those allowed."""
    permit = db.session.get(BypassPermit, permit_id) or abort(404)
    return _show(permit, DecisionForm())


def _show(permit: BypassPermit, form: DecisionForm):
    """The permit page with the decision form as submitted."""
    return render_template("surveys/permit.html", permit=permit, form=form,
                           state=display_state(permit, utcnow()), may_close=may_close,
                           sign_rule=SIGN_RULE, ring_rule=RING_RULE)


@bp.route("/permits/new", methods=["GET", "POST"])
@roles_required(Role.OPERATOR, Role.SAFETY_OFFICER)
def new_permit():
    """Ask the safety officer for a bypass of safety devices for a stated window."""
    form = PermitForm()
    today = lab_today()
    form.instrument_id.choices = [SelectChoice(i.id, i.name) for i in instruments_for(db.session, current_user, today)]
    if not form.is_submitted():
        form.instrument_id.data = query_int("instrument_id")
    if validate_with(form, lambda f: _validate(f, today)):
        permit = request_permit(db.session, _values(form))
        tell_safety_officer(
            f"Bypass permit asked for: {permit.instrument.name}",
            f"{current_user.name} asks to bypass {permit.devices} on {permit.instrument.name} "
            f"from {local(permit.window_start)} to {local(permit.window_end)} (lab time).\n"
            f"Reason: {permit.reason}\nDecide: {link('surveys.permit', permit_id=permit.id)}")
        db.session.commit()
        flash("Permit asked for. The radiation safety officer decides; do not bypass anything "
              "before it is approved.", "info")
        return redirect(url_for("surveys.permit", permit_id=permit.id))
    return render_template("surveys/permit_new.html", form=form, sign_rule=SIGN_RULE)


def _values(form: PermitForm) -> PermitRequest:
    """The form as the domain takes it."""
    return PermitRequest(
        instrument=db.session.get(Instrument, form.instrument_id.data or 0),
        requested_by=current_user._get_current_object(), devices=form.devices.data or "",
        reason=form.reason.data or "", window_start=utc(form.window_start),
        window_end=utc(form.window_end), ring_dosimetry_confirmed=form.ring_dosimetry_confirmed.data)


def _validate(form: PermitForm, today) -> None:
    """The request's rules, and that the person may work on the instrument."""
    values = _values(form)
    errors = {}
    if values.instrument is not None and not authorised_for(db.session, current_user,
                                                            values.instrument, today):
        errors["instrument_id"] = f"You hold no current authorisation on {values.instrument.name}."
    errors = {**errors_of(lambda: validate_request(values, utcnow())), **errors}
    if errors:
        raise Invalid(errors)


@bp.route("/permits/<int:permit_id>/approve", methods=["POST"])
@roles_required(Role.SAFETY_OFFICER)
def approve(permit_id: int):
    """The safety officer approves the window as asked."""
    return _decide(permit_id, approve=True)


@bp.route("/permits/<int:permit_id>/refuse", methods=["POST"])
@roles_required(Role.SAFETY_OFFICER)
def refuse(permit_id: int):
    """The safety officer refuses, saying why."""
    return _decide(permit_id, approve=False)


def _decide(permit_id: int, approve: bool):
    """Record the decision and tell the requester."""
    permit = db.session.get(BypassPermit, permit_id) or abort(404)
    form = DecisionForm()
    if not validate_with(form, lambda f: decide(db.session, permit, current_user._get_current_object(),
                                                approve, f.note.data)):
        return _show(permit, form)
    word = "approved" if approve else "refused"
    send_mail([permit.requested_by.email or ""], f"Bypass permit {word}: {permit.instrument.name}",
              f"Your bypass permit for {permit.devices} on {permit.instrument.name} was {word} by "
              f"{current_user.name}.\n{permit.decision_note or ''}\n"
              + (f"{SIGN_RULE}\n{RING_RULE}\n" if approve else ""))
    db.session.commit()
    flash(f"Permit {word}.", "info")
    return redirect(url_for("surveys.permit", permit_id=permit.id))


@bp.route("/permits/<int:permit_id>/close", methods=["POST"])
@login_required
def close(permit_id: int):
    """End the bypass; a survey of the instrument is then asked for."""
    permit = db.session.get(BypassPermit, permit_id) or abort(404)
    if not may_close(permit, current_user):
        abort(403)
    form = DecisionForm()
    if not validate_with(form, lambda f: close_permit(db.session, permit, current_user._get_current_object())):
        flash(error_text(form), "error")
        return redirect(url_for("surveys.permit", permit_id=permit.id))
    db.session.commit()
    flash("Permit closed. Restore every bypassed device and remove the sign; a survey of the "
          "instrument is now asked for.", "info")
    return redirect(url_for("surveys.permit", permit_id=permit.id))
