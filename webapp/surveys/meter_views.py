"""Survey meters: the list with calibration states; the safety officer registers and recalibrates."""
from __future__ import annotations

import sqlalchemy as sa
from flask import abort, flash, redirect, render_template, url_for
from flask_login import login_required

from models.audit import audit_ops
from models.people.tables import Role
from models.surveys.meter_ops import calibration_on, recalibrate, retire_meter, save_meter, validate_meter
from models.surveys.tables import Survey, SurveyMeter
from webapp.access import roles_required
from webapp.extensions import db
from webapp.formatting import lab_today, settings
from webapp.forms import validate_with
from webapp.surveys import bp
from webapp.surveys.forms import CalibrationForm, MeterForm, ReasonForm


@bp.route("/meters/")
@login_required
def meters():
    """Every meter with its calibration state today."""
    today = lab_today()
    rows = [(m, calibration_on(m, today, settings().due_soon_days)) for m in db.session.scalars(
        sa.select(SurveyMeter).order_by(SurveyMeter.retired_at.is_not(None), SurveyMeter.serial))]
    return render_template("surveys/meters.html", rows=rows)


@bp.route("/meters/new", methods=["GET", "POST"])
@roles_required(Role.SAFETY_OFFICER)
def new_meter():
    """Register a survey meter."""
    form = MeterForm()
    today = lab_today()
    if validate_with(form, lambda f: validate_meter(db.session, f.values(), today)):
        meter = save_meter(db.session, form.values(), today)
        db.session.commit()
        flash(f"Registered meter {meter.serial}.", "info")
        return redirect(url_for("surveys.meter", meter_id=meter.id))
    return render_template("surveys/meter_new.html", form=form)


@bp.route("/meters/<int:meter_id>")
@login_required
def meter(meter_id: int):
    """A meter, its calibration and the surveys made with it."""
    meter = db.session.get(SurveyMeter, meter_id) or abort(404)
    form = CalibrationForm(calibration_interval_months=meter.calibration_interval_months)
    return _show(meter, form, ReasonForm())


def _show(meter: SurveyMeter, form: CalibrationForm, retire_form: ReasonForm):
    """The meter page, with the forms as submitted."""
    surveys = db.session.scalars(sa.select(Survey).where(Survey.meter_id == meter.id)
                                 .order_by(Survey.performed_at.desc()).limit(50)).all()
    return render_template("surveys/meter.html", meter=meter, form=form, retire_form=retire_form,
                           calibration=calibration_on(meter, lab_today(), settings().due_soon_days),
                           surveys=surveys)


@bp.route("/meters/<int:meter_id>/calibration", methods=["POST"])
@roles_required(Role.SAFETY_OFFICER)
def recalibrate_meter(meter_id: int):
    """Record a new calibration date."""
    meter = db.session.get(SurveyMeter, meter_id) or abort(404)
    form = CalibrationForm()

    def calibrate(f):
        with audit_ops.reason(db.session, f.note.data or "New calibration"):
            recalibrate(db.session, meter, f.calibrated_on.data, f.calibration_interval_months.data,
                        lab_today())

    if validate_with(form, calibrate):
        db.session.commit()
        flash(f"Recorded the calibration of meter {meter.serial}.", "info")
        return redirect(url_for("surveys.meter", meter_id=meter.id))
    return _show(meter, form, ReasonForm())


@bp.route("/meters/<int:meter_id>/retire", methods=["POST"])
@roles_required(Role.SAFETY_OFFICER)
def retire(meter_id: int):
    """Retire a meter; surveys made with it stay."""
    meter = db.session.get(SurveyMeter, meter_id) or abort(404)
    form = ReasonForm()

    def retire(f):
        with audit_ops.reason(db.session, f.reason.data):
            retire_meter(db.session, meter)

    if not validate_with(form, retire):
        return _show(meter, CalibrationForm(), form)
    db.session.commit()
    flash(f"Meter {meter.serial} is retired.", "info")
    return redirect(url_for("surveys.meter", meter_id=meter.id))
