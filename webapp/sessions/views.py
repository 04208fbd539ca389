"""Sessions: start, end, write up afterwards, and the lists with their derived figures."""
from __future__ import annotations

from datetime import datetime, time, timedelta

import sqlalchemy as sa
from flask import abort, flash, redirect, render_template, request, url_for
from flask_login import current_user, login_required
from wtforms import SelectChoice

from models.core.base import utcnow
from models.doses.tables import Dosimeter, DosimeterKind
from models.due.start_ops import start_notices, start_session
from models.instruments.authorisation_ops import supervisors_on
from models.instruments.instrument_ops import active_instruments, current_authorisations
from models.instruments.tables import Authorisation, AuthorisationLevel, Instrument
from models.people.tables import Person, Role
from models.sessions.list_ops import SessionFilter, filtered_usage, session_page
from models.sessions.session_ops import (
    active_bypass_permit,
    busy_instrument_ids,
    close_session,
    figures,
    find_sessions,
    instrument_usage,
    log_finished_session,
    needs_supervisor,
    open_sessions_of,
    unavailable_reason,
)
from models.sessions.tables import InstrumentSession
from webapp.access import can_see_dose_of, roles_required
from webapp.extensions import db
from webapp.formatting import day_start, lab_today, lab_zone
from webapp.forms import query_int, validate_with
from webapp.sessions import bp
from webapp.sessions.forms import EndForm, LogForm, StartForm, optional_id
from webapp.slots import home_panels, instrument_sections, navigation

OPERATING = {Role.OPERATOR, Role.SAFETY_OFFICER}

navigation.add("Sessions", "sessions.index", order=20)


@bp.app_template_filter("dosimeter")
def dosimeter_label(dosimeter: Dosimeter) -> str:
    """A dosimeter as a person picks it: serial, kind and, for a ring, the hand."""
    kind = dosimeter.kind.value.replace("_", " ")
    hand = f", {dosimeter.hand.value.replace('_', ' ')} hand" if dosimeter.hand else ""
    return f"{dosimeter.serial} ({kind}{hand})"


def _offer_dosimeters(form, person: Person) -> None:
    """Offer the person's dosimeters still issued; on a new form, tick their whole-body one."""
    rows = db.session.scalars(sa.select(Dosimeter).where(
        Dosimeter.wearer_id == person.id, Dosimeter.returned_on.is_(None)).order_by(Dosimeter.serial)).all()
    form.dosimeter_ids.choices = [SelectChoice(str(d.id), dosimeter_label(d)) for d in rows]
    if not form.is_submitted():
        form.dosimeter_ids.data = [str(d.id) for d in rows if d.kind == DosimeterKind.WHOLE_BODY]
        # "Worn" follows the preselection, so a blank form never records a dosimeter not worn.
        form.dosimeter_worn.data = bool(form.dosimeter_ids.data)


def _offer_supervisors(form, people: list[Person], person: Person) -> None:
    """Offer the given people, less the operator, as the session's supervisor."""
    form.supervisor_id.choices = [SelectChoice("", "—")] + [
        SelectChoice(str(p.id), p.name) for p in people if p.id != person.id]


def _independent_users() -> list[Person]:
    """Everyone holding a current independent authorisation on some instrument, by name."""
    return list(db.session.scalars(
        sa.select(Person).join(Authorisation, Authorisation.person_id == Person.id)
        .where(Authorisation.revoked_at.is_(None), Authorisation.refresher_due >= lab_today(),
               Authorisation.level == AuthorisationLevel.INDEPENDENT, Person.active.is_(True))
        .distinct().order_by(Person.name)))


def _holds_supervised(person: Person) -> bool:
    """True when any of the person's current authorisations is supervised only."""
    return any(a.level == AuthorisationLevel.SUPERVISED
               for a in current_authorisations(db.session, person, lab_today()))


@home_panels.add("sessions/_home.html", roles=OPERATING, order=10)
def _home(person: Person) -> dict:
    """My open sessions and the instruments I may start a session on."""
    open_rows = open_sessions_of(db.session, person)
    busy = busy_instrument_ids(db.session)
    return {"open": [(s, figures(s)) for s in open_rows],
            "authorisations": current_authorisations(db.session, person, lab_today()),
            "busy": busy, "end_form": EndForm(),
            "unavailable": {i.id: unavailable_reason(db.session, i)
                            for i in active_instruments(db.session)}}


@bp.route("/sessions/start/<int:instrument_id>", methods=["GET", "POST"])
@roles_required(*OPERATING)
def start(instrument_id: int):
    """Start a session now on one instrument: settings, checks, dosimeters."""
    instrument = db.session.get(Instrument, instrument_id) or abort(404)
    unavailable = unavailable_reason(db.session, instrument)
    if unavailable:
        # No form for an instrument that takes no session: the reason and whom to ask instead.
        return render_template("sessions/start_unavailable.html", instrument=instrument,
                               reason=unavailable)
    form = StartForm()
    _offer_dosimeters(form, current_user)
    now = utcnow()
    _offer_supervisors(form, supervisors_on(db.session, instrument, lab_today()), current_user)
    # Every Start rule runs, then the session rules again under the write lock, so another PC
    # cannot take the slot between check and write.
    if validate_with(form, lambda f: start_session(db.session, instrument, current_user, f.values(), now=now)):
        db.session.commit()
        flash(f"Session started on {instrument.name}.", "info")
        return redirect(url_for("home.index"))
    return render_template("sessions/start.html", form=form, instrument=instrument,
                           permit=active_bypass_permit(db.session, instrument, now),
                           notices=start_notices(db.session, instrument, current_user, now),
                           supervised=needs_supervisor(db.session, instrument, current_user, now))


def _own_session(session_id: int) -> InstrumentSession:
    """A session the current person may end: their own, or any for the safety officer."""
    entry = db.session.get(InstrumentSession, session_id) or abort(404)
    if entry.operator_id != current_user.id and not current_user.has_role(Role.SAFETY_OFFICER):
        abort(403)
    return entry


@bp.route("/sessions/<int:session_id>/end", methods=["GET", "POST"])
@login_required
def end(session_id: int):
    """End an open session; beam-on time defaults to the whole session."""
    entry = _own_session(session_id)
    form = EndForm()
    if validate_with(form, lambda f: close_session(db.session, entry, beam_on_minutes=f.beam_on_minutes.data)):
        db.session.commit()
        flash(f"Session on {entry.instrument.name} ended.", "info")
        return redirect(url_for("sessions.show", session_id=entry.id))
    return render_template("sessions/end.html", form=form, entry=entry, figures=figures(entry))


@bp.route("/sessions/log", methods=["GET", "POST"])
@roles_required(*OPERATING)
def log():
    """Write up a session after it ended."""
    form = LogForm()
    _offer_dosimeters(form, current_user)
    _offer_supervisors(form, _independent_users(), current_user)
    form.instrument.choices = [SelectChoice("", "—")] + [SelectChoice(str(i.id), i.name)
                                                         for i in active_instruments(db.session)]
    instrument = db.session.get(Instrument, optional_id(form.instrument.data) or 0)
    now = utcnow()
    logged = validate_with(form, lambda f: log_finished_session(db.session, instrument, current_user,
                                                                 f.values(), now=now))
    if logged:
        db.session.commit()
        flash(f"Session on {instrument.name} logged.", "info")
        return redirect(url_for("sessions.show", session_id=logged.value.id))
    return render_template("sessions/log.html", form=form, notices=[], permit=None,
                           supervised=_holds_supervised(current_user))


@bp.route("/sessions/<int:session_id>")
@login_required
def show(session_id: int):
    """One session with its derived figures."""
    entry = db.session.get(InstrumentSession, session_id) or abort(404)
    # Dosimeter serials are dose data of their wearer: shown to them and the safety officer only.
    return render_template("sessions/show.html", entry=entry, figures=figures(entry),
                           show_serials=can_see_dose_of(entry.operator_id))


def _page_key(text: str | None) -> tuple[datetime, int] | None:
    """The keyset position `ISO-time_id` of a 'next page' link, or None for the first page."""
    at, _, row_id = (text or "").rpartition("_")
    try:
        moment = datetime.fromisoformat(at)
        key = int(row_id)
    except ValueError:
        return None
    if moment.tzinfo is None or not 0 < key < 2**63:
        return None
    return moment, key


@bp.route("/sessions/")
@login_required
def index():
    """Sessions filtered by instrument, person and date range, one page at a time, newest first."""
    instrument = db.session.get(Instrument, query_int("instrument", 0))
    person = db.session.get(Person, query_int("person", 0))
    start = day_start(request.args.get("from"))
    until = day_start(request.args.get("to"))
    chosen = SessionFilter(instrument.id if instrument else None, person.id if person else None,
                           start, until + timedelta(days=1) if until else None)
    page = session_page(db.session, chosen, _page_key(request.args.get("before")))
    # Totals read every session of the range, so they wait until a range is chosen.
    totals = filtered_usage(db.session, chosen) if start and until else None
    next_args = None
    if page.next_key:
        at, row_id = page.next_key
        next_args = {**request.args.to_dict(), "before": f"{at.isoformat()}_{row_id}"}
    return render_template(
        "sessions/index.html", rows=[(s, figures(s)) for s in page.rows], totals=totals,
        instrument=instrument, person=person, instruments=active_instruments(db.session),
        people=db.session.scalars(sa.select(Person).order_by(Person.name)).all(),
        args={k: v for k, v in request.args.items() if k != "before"}, next_args=next_args,
        first_page=request.args.get("before") is None)


@instrument_sections.add("sessions/_instrument.html", order=20)
def _instrument(instrument: Instrument) -> dict:
    """Recent sessions and tube use over the last 30 days and this year."""
    now = utcnow()
    today = lab_today()
    year_start = datetime.combine(today.replace(month=1, day=1), time.min, tzinfo=lab_zone())
    recent = find_sessions(db.session, instrument=instrument, limit=10)
    return {"instrument": instrument, "recent": [(s, figures(s)) for s in recent],
            "last_30": instrument_usage(db.session, instrument, now - timedelta(days=30), now),
            "this_year": instrument_usage(db.session, instrument, year_start, now),
            "year": today.year}
