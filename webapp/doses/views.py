"""Dose records: the safety officer's overview, entry and correction; each person's own records."""
from __future__ import annotations

import sqlalchemy as sa
from flask import abort, flash, redirect, render_template, url_for
from flask_login import current_user
from sqlalchemy.orm import joinedload
from wtforms import SelectChoice

from models.core.labels import LOCATION_LABELS, RESULT_LABELS
from models.doses.dosimeter_ops import describe_dosimeter, missing_results, wear_period
from models.doses.record_ops import add_dose_record, amend_dose_record, entry_of, validate_amendment, validate_entry
from models.doses.tables import SOURCE_LABELS, DoseRecord, Dosimeter
from models.doses.version_ops import chains, history, is_current
from models.exposure.investigation_ops import review_after_dose_change
from models.exposure.pregnancy_ops import declarations_of
from models.people.tables import Person, Role
from webapp.access import can_see_dose_of, roles_required
from webapp.doses import bp
from webapp.doses.forms import AmendForm, DoseForm
from webapp.exposure.notify import tell_about
from webapp.extensions import db
from webapp.formatting import lab_today
from webapp.forms import query_int, validate_with
from webapp.slots import Attention, Severity, attention, home_panels, navigation

# Everyone who may have dose records of their own; an admin alone has none to see.
DOSE_ROLES = (Role.OPERATOR, Role.SAFETY_OFFICER)

navigation.add("Doses", "doses.index", {Role.SAFETY_OFFICER}, order=41)


@bp.context_processor
def _labels() -> dict:
    """Readable names of the dose codes for this area's templates."""
    return {"RESULT_LABELS": RESULT_LABELS, "SOURCE_LABELS": SOURCE_LABELS,
            "LOCATION_LABELS": LOCATION_LABELS, "describe_dosimeter": describe_dosimeter}


def person_or_403(person_id: int) -> Person:
    """The person whose dose is asked for, when the viewer may see it; 403 otherwise."""
    if not can_see_dose_of(person_id):
        abort(403)
    return db.session.get(Person, person_id) or abort(404)


def people_choices() -> list[SelectChoice]:
    """Active people to choose from, by name."""
    people = db.session.scalars(sa.select(Person).where(Person.active.is_(True)).order_by(Person.name))
    return [SelectChoice(p.id, f"{p.name} ({p.login})") for p in people]


def _dosimeter_choices() -> list[SelectChoice]:
    """Dosimeters to choose from, with their wearer."""
    dosimeters = db.session.scalars(sa.select(Dosimeter).options(joinedload(Dosimeter.wearer))
                                    .order_by(Dosimeter.serial))
    return [SelectChoice("", "None")] + [SelectChoice(str(d.id), f"{d.serial} ({d.wearer.name}, {describe_dosimeter(d)})")
                             for d in dosimeters]


@bp.route("/doses/")
@roles_required(Role.SAFETY_OFFICER)
def index():
    """Everyone with their number of current records and the latest wear period on file."""
    stats = {pid: (n, last) for pid, n, last in db.session.execute(
        sa.select(DoseRecord.person_id, sa.func.count(), sa.func.max(DoseRecord.wear_end))
        .where(is_current()).group_by(DoseRecord.person_id))}
    people = db.session.scalars(sa.select(Person).order_by(Person.active.desc(), Person.name)).all()
    return render_template("doses/index.html", people=people, stats=stats)


@bp.route("/doses/mine")
@roles_required(*DOSE_ROLES)
def mine():
    """The logged-in person's own records."""
    return redirect(url_for("doses.person", person_id=current_user.id))


@bp.route("/doses/person/<int:person_id>")
@roles_required(*DOSE_ROLES)
def person(person_id: int):
    """A person's dose records with every version, their dosimeters and any declaration."""
    subject = person_or_403(person_id)
    records = db.session.scalars(sa.select(DoseRecord).where(DoseRecord.person_id == person_id)
                                 .options(joinedload(DoseRecord.dosimeter))).all()
    dosimeters = db.session.scalars(sa.select(Dosimeter).where(Dosimeter.wearer_id == person_id)
                                    .order_by(Dosimeter.returned_on.is_not(None), Dosimeter.serial)).all()
    return render_template("doses/person.html", subject=subject, chains=chains(list(records)),
                           dosimeters=dosimeters, declarations=declarations_of(db.session, person_id))


@bp.route("/doses/record/<int:record_id>")
@roles_required(*DOSE_ROLES)
def record(record_id: int):
    """One record with all its versions, the original first."""
    found = db.session.get(DoseRecord, record_id) or abort(404)
    person_or_403(found.person_id)
    versions = history(db.session, found)
    return render_template("doses/record.html", versions=versions, shown=found, subject=found.person)


@bp.route("/doses/new", methods=["GET", "POST"])
@roles_required(Role.SAFETY_OFFICER)
def new():
    """Enter a dose result by hand."""
    form = DoseForm()
    form.person.choices = people_choices()
    form.dosimeter.choices = _dosimeter_choices()
    if not form.is_submitted():
        form.person.data = query_int("person")
    if validate_with(form, lambda f: validate_entry(db.session, f.entry())):
        added = add_dose_record(db.session, form.entry(), created_by_id=current_user.id)
        raised = review_after_dose_change(db.session, lab_today())
        tell_about(raised)  # queued with the change, sent after the commit
        db.session.commit()
        flash("Dose record saved.", "info")
        return redirect(url_for("doses.record", record_id=added.id))
    return render_template("doses/record_form.html", form=form, original=None)


@bp.route("/doses/record/<int:record_id>/amend", methods=["GET", "POST"])
@roles_required(Role.SAFETY_OFFICER)
def amend(record_id: int):
    """Correct a record by a new version; the record shown stays as it is."""
    original = db.session.get(DoseRecord, record_id) or abort(404)
    latest = history(db.session, original)[-1]
    if latest.id != original.id:
        flash(f"Version {original.version} has been corrected since; this is the latest version.", "warning")
        return redirect(url_for("doses.amend", record_id=latest.id))
    form = AmendForm()
    del form.person
    form.dosimeter.choices = _dosimeter_choices()
    if not form.is_submitted():
        entry = entry_of(original)
        for name in ("wear_start", "wear_end", "value", "unit", "mrd", "basis"):
            getattr(form, name).data = getattr(entry, name)
        for name in ("quantity", "location", "result", "source"):
            getattr(form, name).data = getattr(entry, name).value
        form.dosimeter.data = entry.dosimeter_id
    entry = lambda f: f.entry(person_id=original.person_id)  # noqa: E731
    if validate_with(form, lambda f: validate_amendment(db.session, original, entry(f), f.reason.data)):
        version = amend_dose_record(db.session, original, entry(form), form.reason.data,
                                    created_by_id=current_user.id)
        raised = review_after_dose_change(db.session, lab_today())
        tell_about(raised)  # queued with the change, sent after the commit
        db.session.commit()
        flash(f"Saved as version {version.version}; version {original.version} stays on file.", "info")
        return redirect(url_for("doses.record", record_id=version.id))
    return render_template("doses/record_form.html", form=form, original=original)


@attention.add(order=50)
def _not_returned() -> list[Attention]:
    """Dosimeters whose result never came, for the safety officer's list."""
    lines = []
    for missing in missing_results(db.session, lab_today()):
        what = f"dosimeter {missing.dosimeter.serial}" if missing.dosimeter else "dose record"
        url = (url_for("doses.amend", record_id=missing.record.id) if missing.record
               else url_for("doses.not_returned"))
        lines.append(Attention(Severity.DOSIMETER_NOT_RETURNED,
                               f"{missing.person.name}: {what}, wear period {missing.start} to "
                               f"{missing.end}: {missing.why}.", url, "dosimeter not returned"))
    return lines


@home_panels.add("doses/_home_dosimeters.html", {Role.OPERATOR}, order=35)
def _my_dosimeters(viewer: Person) -> dict:
    """The viewer's dosimeters in use and the end of each one's wear period (time to exchange it)."""
    today = lab_today()
    held = db.session.scalars(sa.select(Dosimeter).where(
        Dosimeter.wearer_id == viewer.id, Dosimeter.returned_on.is_(None)).order_by(Dosimeter.serial))
    return {"dosimeters": [(d, describe_dosimeter(d), wear_period(d, today)[1]) for d in held]}
