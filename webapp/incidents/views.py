"""Incidents: anyone reports, the safety officer is told at once and follows up."""
from __future__ import annotations

import sqlalchemy as sa
from flask import abort, flash, redirect, render_template, url_for
from flask_login import current_user, login_required
from wtforms import SelectChoice

from models.audit import audit_ops
from models.core.codes import Location, Quantity
from models.core.units import to_msv
from models.exposure.investigation_ops import review_after_dose_change
from models.exposure.tables import Investigation
from models.incidents.incident_ops import (
    TYPE_LABELS,
    add_note,
    close_incident,
    estimated_doses,
    incidents_seen_by,
    open_incidents,
    record_estimated_dose,
    report_incident,
    stop_instrument,
    validate_report,
)
from models.incidents.tables import Incident, IncidentType
from models.instruments.instrument_ops import active_instruments
from models.instruments.tables import Instrument
from models.people.tables import Person, Role
from webapp.access import can_see_dose_of, roles_required
from webapp.exposure.notify import tell_about
from webapp.extensions import db
from webapp.formatting import from_local, lab_today, local
from webapp.forms import validate_with
from webapp.incidents import bp
from webapp.incidents.forms import CloseForm, DoseForm, NoteForm, ReportForm, StopForm
from webapp.mail import deliver_queued, link, tell_safety_officer
from webapp.mail.sender import Delivery
from webapp.sessions.forms import optional_id
from webapp.slots import Attention, Severity, attention, navigation

navigation.add("Incidents", "incidents.index", order=40)


def _people() -> list[Person]:
    """Active people by name."""
    return db.session.scalars(sa.select(Person).where(Person.active.is_(True))
                              .order_by(Person.name)).all()


@attention.add(order=10)
def _open_incidents() -> list[Attention]:
    """Open incidents; a suspected exposure ranks at the top (see the module's README notes)."""
    lines = []
    for incident in open_incidents(db.session):
        where = f" on {incident.instrument.name}" if incident.instrument else ""
        text = (f"{TYPE_LABELS[incident.type]}{where}, {local(incident.occurred_at)}, "
                f"reported by {incident.reported_by.name}")
        # A finger in the primary beam can take a local dose far past any limit in seconds, and a
        # dosimeter rarely shows it: it needs the safety officer before anything else on the list.
        exposure = incident.type == IncidentType.SUSPECTED_EXPOSURE
        lines.append(Attention(
            severity=Severity.LIMIT_REACHED if exposure else Severity.INCIDENT, text=text,
            url=url_for("incidents.show", incident_id=incident.id),
            label="suspected exposure" if exposure else "open incident"))
    return lines


@bp.route("/incidents/")
@login_required
def index():
    """Incidents: all for the safety officer, one's own and those naming one for others."""
    everyone = current_user.has_role(Role.SAFETY_OFFICER)
    return render_template("incidents/index.html", labels=TYPE_LABELS, everyone=everyone,
                           incidents=incidents_seen_by(db.session, current_user, everyone=everyone))


def _report_values(form: ReportForm) -> dict:
    """The report form's values as the domain takes them."""
    ids = [optional_id(v) for v in form.people.data or []]
    return {
        "type": IncidentType(form.type.data) if form.type.data in set(IncidentType) else None,
        "occurred_at": from_local(form.occurred_at.data),
        "instrument": db.session.get(Instrument, optional_id(form.instrument.data) or 0),
        "people": [p for p in (db.session.get(Person, i) for i in ids if i) if p is not None],
        "description": form.description.data, "immediate_actions": form.immediate_actions.data,
    }


def _mail_body(incident: Incident) -> str:
    """The safety officer's e-mail: what, where, who, and the link."""
    people = ", ".join(p.name for p in incident.people) or "none named"
    address = link("incidents.show", incident_id=incident.id)
    return (f"{TYPE_LABELS[incident.type]} reported by {incident.reported_by.name}.\n\n"
            f"When: {local(incident.occurred_at)}\n"
            f"Instrument: {incident.instrument.name if incident.instrument else 'none named'}\n"
            f"People involved: {people}\n\nWhat happened:\n{incident.description}\n\n"
            f"What was done at once:\n{incident.immediate_actions or '(nothing stated)'}\n\n"
            f"Follow it up: {address}\n")


@bp.route("/incidents/new", methods=["GET", "POST"])
@login_required
def new():
    """Report an incident; the safety officer is e-mailed at once."""
    form = ReportForm()
    form.instrument.choices = [SelectChoice("", "—")] + [SelectChoice(str(i.id), i.name) for i in active_instruments(db.session)]
    form.people.choices = [SelectChoice(str(p.id), p.name) for p in _people()]
    if validate_with(form, lambda f: validate_report(**_report_values(f))):
        incident = report_incident(db.session, reported_by=current_user, **_report_values(form))
        _queue_alert(incident)
        db.session.commit()
        _say_whether_sent(deliver_queued())
        return redirect(url_for("incidents.show", incident_id=incident.id))
    return render_template("incidents/new.html", form=form)


def _queue_alert(incident: Incident) -> None:
    """Queue the safety officer's e-mail with the report, so a mail failure never loses either."""
    subject = f"Incident: {TYPE_LABELS[incident.type].lower()}"
    if incident.instrument:
        subject += f" on {incident.instrument.name}"
    tell_safety_officer(subject, _mail_body(incident))


def _say_whether_sent(delivery: Delivery) -> None:
    """Tell the reporter whether the e-mail went out; if not, to tell the safety officer in person."""
    if delivery.sent and not delivery.failed:
        flash("Reported. The radiation safety officer has been e-mailed; tell them in person or "
              "by telephone as well.", "info")
    else:
        flash("Reported, but the e-mail to the radiation safety officer could not be sent. "
              "Tell them in person or by telephone now.", "warning")


def _visible(incident_id: int) -> Incident:
    """An incident the current person may see: the safety officer, the reporter, those named."""
    incident = db.session.get(Incident, incident_id) or abort(404)
    allowed = (current_user.has_role(Role.SAFETY_OFFICER) or incident.reported_by_id == current_user.id
               or any(p.id == current_user.id for p in incident.people))
    if not allowed:
        abort(403)
    return incident


def _show(incident: Incident, **forms):
    """The incident page with its follow-up forms (any of them carrying errors)."""
    dose_form = forms.get("dose_form") or DoseForm()
    involved = {p.id for p in incident.people}
    dose_form.person_id.choices = [SelectChoice("", "—")] + [
        SelectChoice(str(p.id), p.name) for p in sorted(_people(), key=lambda p: (p.id not in involved, p.name))]
    doses = [d for d in estimated_doses(db.session, incident) if can_see_dose_of(d.person_id)]
    return render_template(
        "incidents/show.html", incident=incident, labels=TYPE_LABELS, doses=doses,
        note_form=forms.get("note_form") or NoteForm(), stop_form=forms.get("stop_form") or StopForm(),
        dose_form=dose_form, close_form=forms.get("close_form") or CloseForm())


@bp.route("/incidents/<int:incident_id>")
@login_required
def show(incident_id: int):
    """One incident and, for the safety officer, its follow-up."""
    return _show(_visible(incident_id))


_FORM_NAMES = {NoteForm: "note_form", StopForm: "stop_form", DoseForm: "dose_form",
               CloseForm: "close_form"}


def _follow_up(incident_id: int, form, action, done: str, reason: str | None = None, after=None):
    """Run one follow-up action from a form; pass its result to `after` (which queues mail), commit,
    redirect; or show the errors."""
    incident = db.session.get(Incident, incident_id) or abort(404)

    def run(f):
        with audit_ops.reason(db.session, reason):
            return action(incident, f)

    if outcome := validate_with(form, run):
        if after is not None:
            after(outcome.value)
        db.session.commit()
        flash(done, "info")
        return redirect(url_for("incidents.show", incident_id=incident.id))
    return _show(incident, **{_FORM_NAMES[type(form)]: form})


@bp.route("/incidents/<int:incident_id>/notes", methods=["POST"])
@roles_required(Role.SAFETY_OFFICER)
def note(incident_id: int):
    """Add a follow-up note."""
    return _follow_up(incident_id, NoteForm(),
                      lambda i, f: add_note(db.session, i, current_user, f.text.data), "Note added.")


@bp.route("/incidents/<int:incident_id>/out-of-service", methods=["POST"])
@roles_required(Role.SAFETY_OFFICER)
def out_of_service(incident_id: int):
    """Put the incident's instrument out of service."""
    form = StopForm()
    return _follow_up(incident_id, form,
                      lambda i, f: stop_instrument(db.session, i, current_user, f.reason.data),
                      "The instrument is out of service.",
                      reason=f"Incident {incident_id}: {form.reason.data or ''}".strip())


def _record_dose(incident: Incident, form: DoseForm) -> list[Investigation]:
    """Store the estimate, converting from the unit it was entered in; returns the investigations raised."""
    value = to_msv(form.value.data, form.unit.data)
    record_estimated_dose(
        db.session, incident, person=db.session.get(Person, optional_id(form.person_id.data) or 0),
        quantity=Quantity(form.quantity.data), location=Location(form.location.data),
        wear_start=form.wear_start.data, wear_end=form.wear_end.data, value_msv=value,
        basis=form.basis.data, entered_unit=form.unit.data, created_by=current_user)
    return review_after_dose_change(db.session, lab_today())


@bp.route("/incidents/<int:incident_id>/dose", methods=["POST"])
@roles_required(Role.SAFETY_OFFICER)
def dose(incident_id: int):
    """Record an estimated dose for one person."""
    return _follow_up(incident_id, DoseForm(), _record_dose, "Estimated dose recorded.",
                      after=tell_about)


@bp.route("/incidents/<int:incident_id>/close", methods=["POST"])
@roles_required(Role.SAFETY_OFFICER)
def close(incident_id: int):
    """Close the incident with a closing note."""
    return _follow_up(incident_id, CloseForm(),
                      lambda i, f: close_incident(db.session, i, current_user, f.closing_note.data),
                      "Incident closed.")
