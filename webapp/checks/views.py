"""Recording safety-device checks, the checklist editor and temporary controls."""
from __future__ import annotations

import sqlalchemy as sa
from flask import abort, flash, redirect, render_template, url_for
from flask_login import current_user, login_required
from flask_wtf import FlaskForm

from models.audit import audit_ops
from models.checks.check_ops import (
    RESULT_LABELS,
    check_history,
    current_control,
    end_control,
    failed_items,
    lapse_expired_controls,
    latest_check,
    may_record_check,
    record_check,
    record_control,
    validate_check,
    validate_control,
)
from models.checks.checklist_ops import (
    active_items,
    add_item,
    checklist_for,
    item_is_used,
    move_item,
    remove_item,
    reword_item,
    set_item_active,
)
from models.checks.tables import SafetyCheck, TemporaryControl
from models.core.base import utcnow
from models.core.settings import lab_date
from models.due.due_list_ops import check_item, horizon
from models.instruments.instrument_ops import active_instruments
from models.instruments.tables import ChecklistItem, Instrument
from models.people.tables import Role
from models.surveys.tables import SurveyMeter
from webapp.access import roles_required
from webapp.checks import bp
from webapp.checks.forms import ControlForm, ItemForm, ReasonForm, check_form
from webapp.extensions import db
from webapp.formatting import local
from webapp.forms import error_text, validate_with
from webapp.mail import link, tell_safety_officer
from webapp.slots import Attention, Severity, attention, instrument_sections, request_hooks, settings_sections


@request_hooks.add(order=10)
def _lapse_controls() -> None:
    """Apply expired temporary controls before anything reads an instrument's status.

    Ordered before the hook that names the actor, so the lapse is recorded as the system's doing.
    """
    held = lapse_expired_controls(db.session, utcnow())
    if held:
        for instrument in held:
            tell_safety_officer(f"{instrument.name} is out of service: temporary controls expired",
                                f"{instrument.out_of_service_reason}\n\nRecord a passing check or "
                                "new temporary controls to return it to service.")
        db.session.commit()


def _instrument(instrument_id: int) -> Instrument:
    """The instrument or 404."""
    return db.session.get(Instrument, instrument_id) or abort(404)


def _meters() -> list[SurveyMeter]:
    """Meters that can be chosen."""
    return list(db.session.scalars(sa.select(SurveyMeter).where(SurveyMeter.retired_at.is_(None))
                                   .order_by(SurveyMeter.serial)))


@bp.route("/instruments/<int:instrument_id>/checks/new", methods=["GET", "POST"])
@login_required
def new(instrument_id: int):
    """Record a safety-device check: one result per item on the instrument's checklist."""
    instrument = _instrument(instrument_id)
    now = utcnow()
    if not may_record_check(db.session, current_user, instrument, now):
        abort(403)
    items = active_items(checklist_for(db.session, instrument))
    db.session.commit()  # a default checklist made on first use is kept
    form = check_form(items, _meters())

    def meter():
        return db.session.get(SurveyMeter, form.meter_pk()) if form.meter_pk() else None

    def validate(f):
        validate_check(db.session, instrument, f.performed_at_utc(), f.answers(items), meter(), now)

    if validate_with(form, validate):
        safety_check = record_check(db.session, instrument, current_user, form.performed_at_utc(),
                                    form.answers(items), meter(), form.notes.data, now)
        if not safety_check.passed:
            _tell_failure(safety_check)
        db.session.commit()
        return redirect(url_for("checks.show", check_id=safety_check.id))
    return render_template("checks/new.html", instrument=instrument, form=form, items=items)


def _tell_failure(safety_check: SafetyCheck) -> None:
    """Queue the safety officer's alert about a failed check, committed with the check."""
    instrument = safety_check.instrument
    lines = "\n".join(f"- {r.item_text}: {r.comment}" for r in failed_items(safety_check))
    tell_safety_officer(
        f"Failed safety-device check: {instrument.name}",
        f"{safety_check.performed_by.name} recorded a failed safety-device check of "
        f"{instrument.name} ({instrument.room}).\n\nFailed items:\n{lines}\n\n"
        f"Status now: {'in service' if instrument.in_service else 'out of service'}.\n"
        f"{link('checks.show', check_id=safety_check.id)}")


@bp.route("/checks/<int:check_id>")
@login_required
def show(check_id: int):
    """One recorded check with its results."""
    safety_check = db.session.get(SafetyCheck, check_id) or abort(404)
    meter = db.session.get(SurveyMeter, safety_check.meter_id) if safety_check.meter_id else None
    return render_template("checks/show.html", check=safety_check, labels=RESULT_LABELS,
                           failed=failed_items(safety_check), meter=meter)


@bp.route("/instruments/<int:instrument_id>/checklist")
@roles_required(Role.SAFETY_OFFICER)
def checklist(instrument_id: int):
    """The safety officer's editor for an instrument's checklist."""
    instrument = _instrument(instrument_id)
    template = checklist_for(db.session, instrument)
    db.session.commit()
    return _checklist_page(instrument, template, ItemForm(formdata=None))


def _checklist_page(instrument, template, add_form, status=200):
    """Render the checklist editor."""
    used = {item.id for item in template.items if item_is_used(db.session, item)}
    return render_template("checks/checklist.html", instrument=instrument, template=template,
                           used=used, add_form=add_form, reason_form=ReasonForm(formdata=None),
                           item_form=ItemForm(formdata=None)), status


@bp.route("/instruments/<int:instrument_id>/checklist/items", methods=["POST"])
@roles_required(Role.SAFETY_OFFICER)
def add(instrument_id: int):
    """Add an item at the end of the checklist."""
    instrument = _instrument(instrument_id)
    template = checklist_for(db.session, instrument)
    form = ItemForm()
    if validate_with(form, lambda f: add_item(db.session, template, f.text.data)):
        db.session.commit()
        flash("Item added.", "info")
        return redirect(url_for("checks.checklist", instrument_id=instrument.id))
    return _checklist_page(instrument, template, form, 400)


def _item_action(item_id: int, action, done: str, form: FlaskForm | None = None):
    """Load an item, run an edit on it, commit, and go back to its checklist (errors flashed there)."""
    item = db.session.get(ChecklistItem, item_id) or abort(404)
    instrument = db.session.scalar(sa.select(Instrument).where(
        Instrument.checklist_template_id == item.template_id)) or abort(404)
    form = FlaskForm() if form is None else form
    if validate_with(form, lambda f: action(item)):
        db.session.commit()
        flash(done, "info")
    else:
        flash(error_text(form), "error")
    return redirect(url_for("checks.checklist", instrument_id=instrument.id))


@bp.route("/checklist-items/<int:item_id>/move/<any(up, down):direction>", methods=["POST"])
@roles_required(Role.SAFETY_OFFICER)
def move(item_id: int, direction: str):
    """Move an item up or down the list."""
    return _item_action(item_id, lambda i: move_item(db.session, i, -1 if direction == "up" else 1),
                        "Item moved.")


@bp.route("/checklist-items/<int:item_id>/reword", methods=["POST"])
@roles_required(Role.SAFETY_OFFICER)
def reword(item_id: int):
    """Change an item's wording; past results keep theirs."""
    form = ItemForm()
    return _item_action(item_id, lambda i: reword_item(db.session, i, form.text.data),
                        "Item reworded.", form)


@bp.route("/checklist-items/<int:item_id>/active/<any(on, off):state>", methods=["POST"])
@roles_required(Role.SAFETY_OFFICER)
def activate(item_id: int, state: str):
    """Stop asking an item (or ask it again), with a reason kept in the audit log."""
    form = ReasonForm()

    def toggle(item):
        with audit_ops.reason(db.session, form.reason.data):
            set_item_active(db.session, item, state == "on")

    return _item_action(item_id, toggle,
                        "Item asked again." if state == "on" else "Item no longer asked.", form)


@bp.route("/checklist-items/<int:item_id>/remove", methods=["POST"])
@roles_required(Role.SAFETY_OFFICER)
def remove(item_id: int):
    """Delete an item never used in a check."""
    return _item_action(item_id, lambda i: remove_item(db.session, i), "Item removed.")


@bp.route("/instruments/<int:instrument_id>/controls/new", methods=["GET", "POST"])
@roles_required(Role.SAFETY_OFFICER)
def control(instrument_id: int):
    """Record temporary written controls that allow use until they expire."""
    instrument = _instrument(instrument_id)
    now = utcnow()
    form = ControlForm()
    if validate_with(form, lambda f: validate_control(db.session, instrument, f.description.data,
                                                     f.expires_at_utc(), now)):
        record_control(db.session, instrument, current_user, form.description.data,
                       form.expires_at_utc(), now)
        db.session.commit()
        flash(f"Temporary controls recorded; {instrument.name} is "
              f"{'in service' if instrument.in_service else 'still out of service'}.", "info")
        return redirect(url_for("instruments.show", instrument_id=instrument.id))
    return render_template("checks/control.html", instrument=instrument, form=form,
                           latest=latest_check(db.session, instrument))


@bp.route("/controls/<int:control_id>/end", methods=["POST"])
@roles_required(Role.SAFETY_OFFICER)
def end(control_id: int):
    """Withdraw temporary controls before their expiry."""
    control_row = db.session.get(TemporaryControl, control_id) or abort(404)
    form = ReasonForm()

    def withdraw(f):
        with audit_ops.reason(db.session, f.reason.data):
            end_control(db.session, control_row, utcnow())

    if validate_with(form, withdraw):
        db.session.commit()
        flash("Temporary controls withdrawn.", "info")
    else:
        flash(error_text(form), "error")
    return redirect(url_for("instruments.show", instrument_id=control_row.instrument_id))


@instrument_sections.add("checks/_section.html", order=25)
def _section(instrument: Instrument) -> dict:
    """Next check due and its state, temporary controls, and the check history."""
    now = utcnow()
    h = horizon(db.session, now)
    history = check_history(db.session, instrument)
    last_pass = next((c for c in history if c.passed), None)
    item = check_item(instrument.id, instrument.name,
                      lab_date(db.session, last_pass.performed_at) if last_pass else None,
                      instrument.check_interval_days, lab_date(db.session, instrument.created_at),
                      h.today, h.soon_days)
    return {"history": history, "item": item, "control": current_control(db.session, instrument, now),
            "may_record": may_record_check(db.session, current_user, instrument, now),
            "reason_form": ReasonForm(formdata=None)}


@settings_sections.add("checks/_settings.html", roles={Role.SAFETY_OFFICER}, order=30)
def _settings(_lab) -> dict:
    """Links to each instrument's checklist."""
    return {"instruments": active_instruments(db.session)}


@attention.add(order=20)
def _attention() -> list[Attention]:
    """Instruments out of service, held by a failed check, or running under temporary controls."""
    now = utcnow()
    lines = []
    for instrument in active_instruments(db.session):
        url = url_for("instruments.show", instrument_id=instrument.id)
        control_row = current_control(db.session, instrument, now)
        if not instrument.in_service:
            lines.append(Attention(Severity.OUT_OF_SERVICE,
                                   f"{instrument.name} is out of service: "
                                   f"{instrument.out_of_service_reason}", url))
        elif control_row is not None:
            lines.append(Attention(Severity.FAILED_CHECK,
                                   f"{instrument.name} failed its last check and runs under temporary "
                                   f"controls until {local(control_row.expires_at)}.",
                                   url, "under controls"))
        elif (latest := latest_check(db.session, instrument)) is not None and not latest.passed:
            lines.append(Attention(Severity.FAILED_CHECK,
                                   f"{instrument.name} failed its last check but was returned to "
                                   "service by hand.", url))
    return lines
