"""Session operations: open, close and log sessions under the lab's rules; their derived figures.

Every entry point (browser form, instrument PC, script) goes through `check_session`, so a rule
holds the same way wherever a session comes from.
"""
from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime
from zoneinfo import ZoneInfo

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.base import utcnow
from models.core.database import hold_write_lock
from models.core.errors import Invalid
from models.core.settings import LabSettings, lab_date
from models.doses.tables import Dosimeter
from models.instruments import tube
from models.instruments.authorisation_ops import (
    authorisation_on,
    why_not_authorised,
    why_not_supervisor,
)
from models.instruments.tables import Authorisation, AuthorisationLevel, Instrument
from models.people.person_ops import whom_to_ask
from models.people.tables import Person
from models.sessions.tables import EntrySource, InstrumentSession
from models.surveys.permit_ops import active_permits
from models.surveys.survey_ops import ask_for_survey
from models.surveys.tables import BypassPermit, SurveyTrigger

# Power ratings are round numbers; kV x mA in floating point may land a hair above them.
_POWER_TOLERANCE = 1e-9

# The PostgreSQL exclusion constraint behind the overlap rule (migration 0015).
_OVERLAP_CONSTRAINT = "ex_instrument_session_no_overlap"

# Free-text fields and their longest accepted length; longer text is refused, never cut.
TEXT_LIMITS = {"purpose": 300, "configuration_change": 5000, "notes": 5000}

# Fields copied from the checked values onto the session row.
_ROW_FIELDS = ("kv", "ma", "started_at", "ended_at", "beam_on_minutes", "purpose",
               "configuration_changed", "configuration_change", "alignment",
               "pre_use_checks_confirmed", "dosimeter_worn", "notes")

# More dosimeters than anyone wears at once (whole body, collar, two rings, eye) is an input error.
MAX_DOSIMETERS = 6


def minutes_between(start: datetime, end: datetime) -> float:
    """Length of a period in minutes."""
    return (end - start).total_seconds() / 60.0


def active_bypass_permit(
    session: Session, instrument: Instrument, at: datetime
) -> BypassPermit | None:
    """The approved bypass permit whose window holds at that moment, if any."""
    return next(iter(active_permits(session, at, instrument)), None)


def open_sessions_of(session: Session, person: Person) -> list[InstrumentSession]:
    """A person's sessions not ended yet, oldest first."""
    return list(session.scalars(
        sa.select(InstrumentSession)
        .where(InstrumentSession.operator_id == person.id, InstrumentSession.ended_at.is_(None))
        .order_by(InstrumentSession.started_at)
    ))


def busy_instrument_ids(session: Session) -> set[int]:
    """Instruments with a session not ended yet (read from the partial index of open sessions)."""
    return set(session.scalars(sa.select(InstrumentSession.instrument_id)
                               .where(InstrumentSession.ended_at.is_(None)).distinct()))


def _overlapping(
    session: Session, instrument: Instrument, start: datetime, end: datetime | None,
    exclude_id: int | None,
) -> InstrumentSession | None:
    """Another session on the instrument that shares any time with [start, end)."""
    query = sa.select(InstrumentSession).where(
        InstrumentSession.instrument_id == instrument.id,
        sa.or_(InstrumentSession.ended_at.is_(None), InstrumentSession.ended_at > start))
    if end is not None:
        query = query.where(InstrumentSession.started_at < end)
    if exclude_id is not None:
        query = query.where(InstrumentSession.id != exclude_id)
    return session.scalar(query.order_by(InstrumentSession.started_at).limit(1))


def _overlap_message(session: Session, instrument: Instrument, clash: InstrumentSession) -> str:
    """The refusal for a session that would share time with `clash`."""
    until = "still open" if clash.is_open else f"until {_fmt(clash.ended_at, session)}"
    return (f"{instrument.name} already has a session by {clash.operator.name} from "
            f"{_fmt(clash.started_at, session)} ({until}); sessions on one instrument "
            "cannot overlap.")


def _fmt(moment: datetime, session: Session) -> str:
    """A moment in the lab's time zone for a message."""
    settings = session.get(LabSettings, 1)
    zone = ZoneInfo(settings.timezone if settings else "UTC")
    return moment.astimezone(zone).strftime("%Y-%m-%d %H:%M")


def _validate_settings(instrument: Instrument, kv, ma, errors: dict) -> None:
    """Tube voltage, current and power against zero and the instrument's ratings."""
    if kv is None:
        errors["kv"] = "Enter the tube voltage in kV."
    elif not kv > 0:  # also refuses NaN
        errors["kv"] = "Tube voltage must be above 0 kV."
    elif kv > instrument.max_kv:
        errors["kv"] = (f"Tube voltage {kv:g} kV is above this instrument's rating of "
                        f"{instrument.max_kv:g} kV.")
    if ma is None:
        errors["ma"] = "Enter the tube current in mA."
    elif not ma > 0:
        errors["ma"] = "Tube current must be above 0 mA."
    elif ma > instrument.max_ma:
        errors["ma"] = (f"Tube current {ma:g} mA is above this instrument's rating of "
                        f"{instrument.max_ma:g} mA.")
    if "kv" not in errors and "ma" not in errors:
        power = tube.power_w(kv, ma)
        if power > instrument.max_power_w * (1 + _POWER_TOLERANCE):
            errors["ma"] = (f"Tube power {kv:g} kV × {ma:g} mA = {power:g} W is above this "
                            f"instrument's rating of {instrument.max_power_w:g} W.")


def _validate_texts(values: dict, errors: dict) -> None:
    """Each free text within its length: refused with the field named, never cut."""
    for key, limit in TEXT_LIMITS.items():
        text = (values.get(key) or "").strip()
        if len(text) > limit:
            errors[key] = f"At most {limit:,} characters, please (this has {len(text):,})."


def _validate_times(session: Session, values: dict, now: datetime, errors: dict) -> None:
    """Start not in the future, end after start and not in the future, beam-on within the session."""
    start, end = values.get("started_at"), values.get("ended_at")
    minutes = values.get("beam_on_minutes")
    if start is None:
        errors["started_at"] = "Enter when the session started."
    elif start > now:
        errors["started_at"] = (f"The start {_fmt(start, session)} is in the future; "
                                "log a session when it starts or after it ended.")
    if end is not None and start is not None:
        if end <= start:
            errors["ended_at"] = (f"The end {_fmt(end, session)} must be after the start "
                                  f"{_fmt(start, session)}.")
        elif end > now:
            errors["ended_at"] = f"The end {_fmt(end, session)} is in the future."
    if minutes is not None:
        if not minutes >= 0:
            errors["beam_on_minutes"] = "Beam-on time cannot be negative."
        elif end is not None and start is not None and "ended_at" not in errors:
            length = minutes_between(start, end)
            if minutes > length + 1e-9:
                errors["beam_on_minutes"] = (f"Beam-on time {minutes:g} min is longer than the "
                                             f"session ({length:.0f} min).")


def unavailable_reason(session: Session, instrument: Instrument,
                       end: datetime | None = None) -> str | None:
    """Why the instrument takes no session (ending at `end`, if written up), or None if it does."""
    if instrument.in_service and not instrument.retired:
        return None
    ask = whom_to_ask(session)
    if instrument.retired:
        return (f"{instrument.name} is retired and takes no new sessions. "
                f"Ask {ask} which instrument to use instead.")
    since = instrument.out_of_service_since
    # A session written up afterwards that ended before the instrument was stopped is a record
    # of what happened, not new use.
    if end is not None and since is not None and end <= since:
        return None
    reason = (instrument.out_of_service_reason or "no reason recorded").rstrip(" .")
    return f"{instrument.name} is out of service: {reason}. Ask {ask} before any use."


def _validate_instrument(session: Session, instrument: Instrument, values: dict, errors: dict) -> None:
    """The instrument takes new sessions: not retired and in service."""
    refusal = unavailable_reason(session, instrument, values.get("ended_at"))
    if refusal:
        errors["instrument"] = refusal


def dosimeter_ids(values: dict) -> list[int]:
    """The chosen dosimeters' ids, each once, in the order given."""
    return list(dict.fromkeys(values.get("dosimeter_ids") or []))


def _validate_dosimeters(session: Session, operator: Person, values: dict, errors: dict) -> None:
    """Each chosen dosimeter must be the operator's own and issued on the session's date."""
    chosen = dosimeter_ids(values)
    if not values.get("dosimeter_worn") or not chosen:
        return
    if len(chosen) > MAX_DOSIMETERS:
        errors["dosimeter_ids"] = f"Choose at most {MAX_DOSIMETERS} dosimeters."
        return
    start = values.get("started_at")
    on = lab_date(session, start) if start else None
    for dosimeter_id in chosen:
        dosimeter = session.get(Dosimeter, dosimeter_id)
        if dosimeter is None or dosimeter.wearer_id != operator.id:
            errors["dosimeter_ids"] = "Choose only your own dosimeters."
            return
        if on is not None and not (dosimeter.issued_on <= on and
                                   (dosimeter.returned_on is None or dosimeter.returned_on >= on)):
            errors["dosimeter_ids"] = f"Dosimeter {dosimeter.serial} was not issued to you on {on}."
            return


def needs_supervisor(session: Session, instrument: Instrument, operator: Person, start: datetime) -> bool:
    """True when the operator holds only a supervised authorisation on the instrument then."""
    return _supervised(authorisation_on(session, operator, instrument, lab_date(session, start)))


def _supervised(held: Authorisation | None) -> bool:
    """True for an authorisation that allows only supervised work."""
    return held is not None and held.level == AuthorisationLevel.SUPERVISED


@dataclass(frozen=True)
class Checked:
    """What the session rules found, for the row they allowed: so the write reads nothing twice."""

    authorisation: Authorisation | None
    permit: BypassPermit | None


def _validate_supervisor(session: Session, instrument: Instrument, operator: Person, values: dict,
                         held: Authorisation, errors: dict) -> None:
    """A supervised operator's session names an independently authorised supervisor."""
    start = values["started_at"]
    if not _supervised(held):
        return
    supervisor_id = values.get("supervisor_id")
    supervisor = session.get(Person, supervisor_id) if supervisor_id is not None else None
    refusal = why_not_supervisor(session, supervisor, operator, instrument, lab_date(session, start))
    if refusal:
        errors["supervisor_id"] = refusal


def validate_session(
    session: Session, instrument: Instrument | None, operator: Person | None, values: dict,
    *, now: datetime | None = None, exclude_id: int | None = None,
) -> Checked:
    """Refuse, by field, every rule a new session breaks; write nothing."""
    now = now or utcnow()
    errors: dict[str, str] = {}
    if instrument is None:
        raise Invalid.one("instrument", "Choose an instrument.")
    if operator is None or not operator.active:
        raise Invalid.one("operator", "No active person with that login.")
    _validate_settings(instrument, values.get("kv"), values.get("ma"), errors)
    _validate_texts(values, errors)
    _validate_times(session, values, now, errors)
    _validate_instrument(session, instrument, values, errors)
    start, end = values.get("started_at"), values.get("ended_at")
    held = None
    if start is not None and "instrument" not in errors:
        held = authorisation_on(session, operator, instrument, lab_date(session, start))
        if held is None:
            errors["instrument"] = why_not_authorised(session, operator, instrument, lab_date(session, start))
        else:
            _validate_supervisor(session, instrument, operator, values, held, errors)
    if start is not None and "started_at" not in errors and "ended_at" not in errors:
        clash = _overlapping(session, instrument, start, end, exclude_id)
        if clash is not None:
            errors["started_at"] = _overlap_message(session, instrument, clash)
    if not values.get("pre_use_checks_confirmed"):
        errors["pre_use_checks_confirmed"] = (
            "Confirm that you saw the warning light and the shutter indicators working.")
    if values.get("configuration_changed") and not (values.get("configuration_change") or "").strip():
        errors["configuration_change"] = "Describe the configuration change."
    _validate_dosimeters(session, operator, values, errors)
    permit = active_bypass_permit(session, instrument, start) if start else None
    if (permit or values.get("alignment")) and not values.get("caution_acknowledged"):
        errors["caution_acknowledged"] = (
            "Confirm that you have read the caution about the primary beam and ring dosimetry.")
    if errors:
        raise Invalid(errors)
    return Checked(held, permit)


def _new_row(
    session: Session, instrument: Instrument, operator: Person, values: dict, source: EntrySource,
    checked: Checked,
) -> InstrumentSession:
    """Write a checked session, flagging it when a bypass permit covers its start."""
    row = InstrumentSession(instrument_id=instrument.id, operator_id=operator.id, source=source)
    for key in _ROW_FIELDS:
        setattr(row, key, values.get(key))
    for key in TEXT_LIMITS:
        setattr(row, key, (values.get(key) or "").strip() or None)
    row.purpose = row.purpose or ""
    row.configuration_changed = bool(values.get("configuration_changed"))
    if not row.configuration_changed:
        row.configuration_change = None
    row.alignment = bool(values.get("alignment"))
    row.pre_use_checks_confirmed = bool(values.get("pre_use_checks_confirmed"))
    row.dosimeter_worn = bool(values.get("dosimeter_worn"))
    if row.dosimeter_worn:
        row.dosimeters = [session.get(Dosimeter, i) for i in dosimeter_ids(values)]
    row.supervisor_id = values.get("supervisor_id") if _supervised(checked.authorisation) else None
    row.bypass_permit_id = checked.permit.id if checked.permit else None
    _insert_unless_overlapping(session, instrument, row)
    _ask_for_surveys(session, instrument, operator, row)
    return row


def _insert_unless_overlapping(session: Session, instrument: Instrument, row: InstrumentSession) -> None:
    """Insert a checked session; a writer that won a race meanwhile gets the ordinary refusal.

    On PostgreSQL the exclusion constraint refuses the second of two overlapping rows (it waits for
    the first to commit); the savepoint keeps the rest of the transaction usable for the message.
    """
    try:
        with session.begin_nested():
            session.add(row)
            session.flush()
    except sa.exc.IntegrityError as error:
        if _OVERLAP_CONSTRAINT not in str(error.orig):
            raise
        clash = _overlapping(session, instrument, row.started_at, row.ended_at, None)
        raise Invalid.one("started_at", _overlap_message(session, instrument, clash) if clash else
                          f"{instrument.name} already has a session at that time; sessions on one "
                          "instrument cannot overlap.") from None


def _ask_for_surveys(session: Session, instrument: Instrument, operator: Person,
                     row: InstrumentSession) -> None:
    """Alignment with the beam on and component changes call for a survey (25 Pa. Code 227a)."""
    day = lab_date(session, row.started_at)
    if row.alignment:
        ask_for_survey(session, instrument, SurveyTrigger.AFTER_ALIGNMENT,
                       f"Alignment work with the beam on by {operator.name} on {day}.")
    if row.configuration_changed:
        ask_for_survey(session, instrument, SurveyTrigger.AFTER_MAINTENANCE,
                       f"Configuration changed by {operator.name} on {day}: "
                       f"{row.configuration_change}")


def _opening(values: dict, now: datetime) -> dict:
    """A session that starts now (unless told otherwise) and has no end yet."""
    return {**values, "started_at": values.get("started_at") or now, "ended_at": None,
            "beam_on_minutes": None}


def validate_opening(
    session: Session, instrument: Instrument | None, operator: Person | None, values: dict,
    *, now: datetime | None = None,
) -> None:
    """Refuse a session that would start now (or at the given start) breaking a rule."""
    now = now or utcnow()
    validate_session(session, instrument, operator, _opening(values, now), now=now)


def open_session(
    session: Session, instrument: Instrument, operator: Person, values: dict,
    *, source: EntrySource = EntrySource.FORM, now: datetime | None = None,
) -> InstrumentSession:
    """Start a session now (or at the given start), with no end yet."""
    now = now or utcnow()
    values = _opening(values, now)
    hold_write_lock(session)
    checked = validate_session(session, instrument, operator, values, now=now)
    return _new_row(session, instrument, operator, values, source, checked)


def _finished(values: dict) -> dict:
    """A written-up session: beam-on time defaults to the whole session."""
    start, end = values.get("started_at"), values.get("ended_at")
    if values.get("beam_on_minutes") is None and start is not None and end is not None and end > start:
        return {**values, "beam_on_minutes": minutes_between(start, end)}
    return values


def validate_finished(
    session: Session, instrument: Instrument | None, operator: Person | None, values: dict,
    *, now: datetime | None = None,
) -> Checked:
    """Refuse a written-up session that breaks a rule; an end is required."""
    errors, checked = {}, None
    try:
        checked = validate_session(session, instrument, operator, _finished(values), now=now)
    except Invalid as error:
        errors = error.errors
    if values.get("ended_at") is None:
        errors.setdefault("ended_at", "Enter when the session ended.")
    if errors:
        raise Invalid(errors)
    return checked


def log_finished_session(
    session: Session, instrument: Instrument, operator: Person, values: dict,
    *, source: EntrySource = EntrySource.FORM, now: datetime | None = None,
) -> InstrumentSession:
    """Write up a session after it ended; beam-on time defaults to the whole session."""
    hold_write_lock(session)
    checked = validate_finished(session, instrument, operator, values, now=now)
    return _new_row(session, instrument, operator, _finished(values), source, checked)


def close_session(
    session: Session, entry: InstrumentSession, *, ended_at: datetime | None = None,
    beam_on_minutes: float | None = None, now: datetime | None = None,
) -> InstrumentSession:
    """End an open session; beam-on time defaults to the whole session."""
    now = now or utcnow()
    if not entry.is_open:
        raise Invalid.one("session", f"This session already ended at {_fmt(entry.ended_at, session)}.")
    values = {"started_at": entry.started_at, "ended_at": ended_at or now,
              "beam_on_minutes": beam_on_minutes}
    errors: dict[str, str] = {}
    _validate_times(session, values, now, errors)
    # The start was checked when the session opened; only the end can break a rule now.
    errors.pop("started_at", None)
    if errors:
        raise Invalid(errors)
    entry.ended_at = values["ended_at"]
    entry.beam_on_minutes = (beam_on_minutes if beam_on_minutes is not None
                             else minutes_between(entry.started_at, entry.ended_at))
    session.flush()
    return entry


@dataclass(frozen=True)
class Figures:
    """What a session's settings mean for the tube, from models.tube."""

    power_w: float
    energy_kwh: float | None
    max_photon_kev: float
    lambda_min_angstrom: float
    k_edge_kev: float | None
    k_lines_excited: bool | None
    k_note: str | None
    k_alpha_lines: tuple[tube.Line, ...]


def figures(entry: InstrumentSession) -> Figures:
    """Power, energy, maximum photon energy, Duane-Hunt limit and K-line excitation of a session."""
    kv, ma, anode = entry.kv, entry.ma, entry.instrument.anode
    energy = (tube.energy_kwh(kv, ma, entry.beam_on_minutes)
              if entry.beam_on_minutes is not None else None)
    try:
        lines = tuple(l for l in tube.anode_lines(anode) if l.name.startswith("K-alpha"))
        edge, excited, note = tube.k_edge_kev(anode), tube.k_lines_excited(kv, anode), None
        if not excited:
            wavelengths = ", ".join(f"{l.name} {l.wavelength_angstrom:.4f} Å" for l in lines)
            note = f"{tube.k_lines_note(kv, anode)} ({wavelengths})."
    except ValueError:
        # An anode outside the line table: the electrical figures still hold.
        lines, edge, excited, note = (), None, None, None
    return Figures(power_w=tube.power_w(kv, ma), energy_kwh=energy,
                   max_photon_kev=tube.max_photon_energy_kev(kv),
                   lambda_min_angstrom=tube.duane_hunt_min_wavelength_angstrom(kv),
                   k_edge_kev=edge, k_lines_excited=excited, k_note=note, k_alpha_lines=lines)


def find_sessions(
    session: Session, *, instrument: Instrument | None = None, operator: Person | None = None,
    start: datetime | None = None, end: datetime | None = None, limit: int | None = None,
) -> list[InstrumentSession]:
    """Sessions newest first, for one instrument and/or person, touching [start, end)."""
    query = sa.select(InstrumentSession)
    if instrument is not None:
        query = query.where(InstrumentSession.instrument_id == instrument.id)
    if operator is not None:
        query = query.where(InstrumentSession.operator_id == operator.id)
    if start is not None:
        query = query.where(sa.or_(InstrumentSession.ended_at.is_(None),
                                   InstrumentSession.ended_at > start))
    if end is not None:
        query = query.where(InstrumentSession.started_at < end)
    query = query.order_by(InstrumentSession.started_at.desc(), InstrumentSession.id.desc())
    if limit is not None:
        query = query.limit(limit)
    return list(session.scalars(query))


@dataclass(frozen=True)
class Usage:
    """Tube use over a period."""

    sessions: int
    beam_hours: float
    energy_kwh: float


def usage(sessions) -> Usage:
    """Beam hours and kWh of the ended sessions in a list (open ones have no beam time yet)."""
    ended = [s for s in sessions if s.beam_on_minutes is not None]
    if not ended:
        return Usage(len(sessions), 0.0, 0.0)
    hours, kwh = tube.tube_usage([s.kv for s in ended], [s.ma for s in ended],
                                 [s.beam_on_minutes for s in ended])
    return Usage(len(sessions), hours, kwh)


def instrument_usage(
    session: Session, instrument: Instrument, start: datetime, end: datetime
) -> Usage:
    """Beam hours and kWh of an instrument's sessions that started in [start, end)."""
    rows = session.scalars(
        sa.select(InstrumentSession)
        .where(InstrumentSession.instrument_id == instrument.id,
               InstrumentSession.started_at >= start, InstrumentSession.started_at < end))
    return usage(list(rows))
