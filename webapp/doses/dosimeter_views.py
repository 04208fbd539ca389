"""Dosimeters: issue, return, and the list of those not returned."""
from __future__ import annotations

import sqlalchemy as sa
from flask import abort, flash, redirect, render_template, url_for
from sqlalchemy.orm import joinedload

from models.doses.dosimeter_ops import (
    RESULT_GRACE_DAYS,
    issue_dosimeter,
    missing_results,
    return_dosimeter,
    validate_issue,
)
from models.doses.tables import Dosimeter, ExchangeCycle
from models.people.tables import Role
from webapp.access import roles_required
from webapp.doses import bp
from webapp.doses.forms import IssueForm, ReturnForm, worn_to_kind
from webapp.doses.views import people_choices
from webapp.extensions import db
from webapp.formatting import lab_today
from webapp.forms import error_text, query_int, validate_with


@bp.route("/doses/dosimeters/")
@roles_required(Role.SAFETY_OFFICER)
def dosimeters():
    """Every dosimeter, those in use first."""
    rows = db.session.scalars(sa.select(Dosimeter).options(joinedload(Dosimeter.wearer))
                              .order_by(Dosimeter.returned_on.is_not(None), Dosimeter.serial)).all()
    return render_template("doses/dosimeters.html", dosimeters=rows, return_form=ReturnForm(),
                           today=lab_today())


@bp.route("/doses/dosimeters/new", methods=["GET", "POST"])
@roles_required(Role.SAFETY_OFFICER)
def issue():
    """Issue a dosimeter to a wearer."""
    form = IssueForm()
    form.wearer.choices = people_choices()
    if not form.is_submitted():
        form.wearer.data = query_int("person")
        form.issued_on.data = lab_today()

    def validate(f):
        """The domain's checks on the submitted dosimeter."""
        kind, hand = worn_to_kind(f.worn.data)
        validate_issue(db.session, serial=f.serial.data, kind=kind, hand=hand, wearer_id=f.wearer.data,
                    issued_on=f.issued_on.data)

    if validate_with(form, validate):
        kind, hand = worn_to_kind(form.worn.data)
        dosimeter = issue_dosimeter(db.session, serial=form.serial.data, kind=kind, hand=hand,
                                    wearer_id=form.wearer.data, issued_on=form.issued_on.data,
                                    exchange_cycle=ExchangeCycle(form.exchange_cycle.data))
        db.session.commit()
        flash(f"Dosimeter {dosimeter.serial} issued to {dosimeter.wearer.name}.", "info")
        return redirect(url_for("doses.dosimeters"))
    return render_template("doses/issue.html", form=form)


@bp.route("/doses/dosimeters/<int:dosimeter_id>/return", methods=["POST"])
@roles_required(Role.SAFETY_OFFICER)
def return_(dosimeter_id: int):
    """Record that a dosimeter came back for good."""
    dosimeter = db.session.get(Dosimeter, dosimeter_id) or abort(404)
    form = ReturnForm()
    if validate_with(form, lambda f: return_dosimeter(db.session, dosimeter, f.returned_on.data)):
        db.session.commit()
        flash(f"Dosimeter {dosimeter.serial} returned on {dosimeter.returned_on}.", "info")
    else:
        flash(f"Dosimeter {dosimeter.serial}: {error_text(form)}", "error")
    return redirect(url_for("doses.dosimeters"))


@bp.route("/doses/dosimeters/not-returned")
@roles_required(Role.SAFETY_OFFICER)
def not_returned():
    """Wear periods whose dosimeter or result never came back."""
    return render_template("doses/not_returned.html", missing=missing_results(db.session, lab_today()),
                           grace_days=RESULT_GRACE_DAYS)
