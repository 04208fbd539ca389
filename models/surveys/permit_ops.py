"""Bypass permits: request, the safety officer's decision, closing, and which are in force."""
from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.base import utcnow
from models.core.due_dates import ACTIVE, EXPIRED, PENDING, permit_state
from models.core.errors import Invalid
from models.instruments.tables import Instrument
from models.people.tables import Person, Role
from models.surveys.survey_ops import raise_survey_task
from models.surveys.tables import BypassPermit, PermitStatus, SurveyTrigger

# Ring dosimeters are required for open-beam work without a safety device: Ariz. R9-7-806(F).
RING_RULE = ("Ring dosimeters are required for open-beam work without a safety device "
             "(Ariz. R9-7-806(F)).")
# Written RSO approval for a stated period, a sign on the housing, approval kept:
# WAC 246-228-040(2); Ariz. R9-7-806(C)-(D).
SIGN_RULE = ("Post a sign on the tube housing saying which safety device is bypassed and until "
             "when (WAC 246-228-040(2); Ariz. R9-7-806(C)-(D)).")


@dataclass(frozen=True)
class PermitRequest:
    """What an operator asks for: devices to bypass, why, and the window (aware UTC)."""

    instrument: Instrument | None
    requested_by: Person
    devices: str
    reason: str
    window_start: datetime | None
    window_end: datetime | None
    ring_dosimetry_confirmed: bool


def validate_request(values: PermitRequest, now: datetime) -> None:
    """Refuse, by field, every rule a permit request breaks."""
    errors = {}
    if values.instrument is None:
        errors["instrument_id"] = "Choose the instrument."
    elif values.instrument.retired:
        errors["instrument_id"] = f"{values.instrument.name} is retired."
    if not (values.devices or "").strip():
        errors["devices"] = "Name the safety device or devices to be bypassed."
    if not (values.reason or "").strip():
        errors["reason"] = "Say why the bypass is needed."
    if values.window_start is None:
        errors["window_start"] = "Enter when the bypass would start."
    if values.window_end is None:
        errors["window_end"] = "Enter when the bypass would end."
    elif values.window_start is not None and values.window_end <= values.window_start:
        errors["window_end"] = "The window must end after it starts."
    elif values.window_end <= now:
        errors["window_end"] = "The window has already ended; ask for a window to come."
    if not values.ring_dosimetry_confirmed:
        errors["ring_dosimetry_confirmed"] = "Confirm that ring dosimeters will be worn (Ariz. R9-7-806(F))."
    if errors:
        raise Invalid(errors)


def request_permit(session: Session, values: PermitRequest, now: datetime | None = None) -> BypassPermit:
    """An operator asks to defeat safety devices for a window; the safety officer decides."""
    validate_request(values, now or utcnow())
    permit = BypassPermit(instrument=values.instrument, requested_by=values.requested_by,
                          devices=values.devices.strip(), reason=values.reason.strip(),
                          window_start=values.window_start, window_end=values.window_end,
                          ring_dosimetry_confirmed=True, status=PermitStatus.REQUESTED)
    session.add(permit)
    session.flush()
    return permit


def decide(session: Session, permit: BypassPermit, officer: Person, approve: bool, note: str,
           now: datetime | None = None) -> BypassPermit:
    """The safety officer approves or refuses a requested permit; refusing needs a note."""
    now = now or utcnow()
    if not officer.has_role(Role.SAFETY_OFFICER):
        raise PermissionError("only the radiation safety officer decides on bypass permits")
    if permit.status is not PermitStatus.REQUESTED:
        raise Invalid.one("note", f"This permit is already {permit.status.value}.")
    if approve and permit.window_end <= now:
        raise Invalid.one("note", "The requested window has ended; it can only be refused.")
    if not approve and not (note or "").strip():
        raise Invalid.one("note", "Say why the permit is refused.")
    permit.status = PermitStatus.APPROVED if approve else PermitStatus.REFUSED
    permit.decided_by, permit.decided_at = officer, now
    permit.decision_note = (note or "").strip() or None
    session.flush()
    return permit


def close_permit(session: Session, permit: BypassPermit, person: Person,
                 now: datetime | None = None) -> BypassPermit:
    """End an approved permit (requester or safety officer) and ask for a survey after it."""
    if not may_close(permit, person):
        raise PermissionError("only the requester or the safety officer closes a permit")
    if permit.status is not PermitStatus.APPROVED:
        raise Invalid.one("permit", f"Only an approved permit can be closed; this one is "
                                    f"{permit.status.value}.")
    permit.status = PermitStatus.CLOSED
    permit.closed_by_id, permit.closed_at = person.id, now or utcnow()
    session.flush()
    raise_survey_task(session, permit.instrument, SurveyTrigger.AFTER_BYPASS,
                      f"Bypass permit #{permit.id} closed ({permit.devices}): survey before "
                      f"normal use.", permit=permit)
    return permit


def may_close(permit: BypassPermit, person: Person) -> bool:
    """The requester and the safety officer may close a permit."""
    return person.id == permit.requested_by_id or person.has_role(Role.SAFETY_OFFICER)


def window_state(permit: BypassPermit, now: datetime) -> str:
    """PENDING, ACTIVE or EXPIRED for the permit's window (models.due.permit_state)."""
    return permit_state(permit.window_start, permit.window_end, now)


def is_active(permit: BypassPermit, now: datetime) -> bool:
    """Approved and inside its window."""
    return permit.status is PermitStatus.APPROVED and window_state(permit, now) == ACTIVE


def display_state(permit: BypassPermit, now: datetime) -> str:
    """One word for lists: requested, refused, closed, approved (window to come), active, not closed."""
    if permit.status is not PermitStatus.APPROVED:
        return permit.status.value
    return {PENDING: "approved", ACTIVE: "active", EXPIRED: "not closed"}[window_state(permit, now)]


def active_permits(session: Session, now: datetime | None = None,
                   instrument: Instrument | None = None) -> list[BypassPermit]:
    """Approved permits whose window holds at `now` (default: this moment); for one instrument or all.

    `now` may be in the past, for a session logged afterwards: a permit closed since then still
    covered that moment, while one closed before it no longer did.
    """
    now = now or utcnow()
    query = sa.select(BypassPermit).where(
        BypassPermit.status.in_([PermitStatus.APPROVED, PermitStatus.CLOSED]),
        BypassPermit.window_start <= now, BypassPermit.window_end > now,
        sa.or_(BypassPermit.closed_at.is_(None), BypassPermit.closed_at > now))
    if instrument is not None:
        query = query.where(BypassPermit.instrument_id == instrument.id)
    return list(session.scalars(query.order_by(BypassPermit.window_end)))


def expired_unclosed_permits(session: Session, now: datetime | None = None) -> list[BypassPermit]:
    """Approved permits past their window that nobody closed."""
    now = now or utcnow()
    return list(session.scalars(
        sa.select(BypassPermit).where(BypassPermit.status == PermitStatus.APPROVED,
                                      BypassPermit.window_end <= now)
        .order_by(BypassPermit.window_end)))


def requested_permits(session: Session) -> list[BypassPermit]:
    """Permits waiting for the safety officer's decision, oldest first."""
    return list(session.scalars(
        sa.select(BypassPermit).where(BypassPermit.status == PermitStatus.REQUESTED)
        .order_by(BypassPermit.requested_at)))


def permits_of(session: Session, instrument: Instrument | None = None,
               limit: int = 100) -> list[BypassPermit]:
    """Permits, latest request first; for one instrument or all. None is ever deleted."""
    query = sa.select(BypassPermit)
    if instrument is not None:
        query = query.where(BypassPermit.instrument_id == instrument.id)
    return list(session.scalars(query.order_by(BypassPermit.requested_at.desc(),
                                               BypassPermit.id.desc()).limit(limit)))
