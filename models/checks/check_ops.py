"""Recording safety-device checks and temporary controls, and the service hold they drive.

The rule for the instrument's status (one hold, owned by this module):
- a failed check takes the instrument out of service at once, marked with cause CHECK_HOLD,
  unless a person already took it out for another reason (an incident, a failed survey): then it
  stays out for that reason, which a check must not lift;
- only a hold marked CHECK_HOLD is lifted by this module: by a passing check, or by temporary
  written controls that the safety officer records against the failed check;
- controls that run out (or are withdrawn) put the hold back while the latest check still fails.
  Expiry is applied lazily: at the start of each web request and by `flask reminders send`
  (`lapse_expired_controls`), so nothing needs a clock of its own and no request sees stale status;
- the safety officer's own "return to service" is a recorded override and stands until the next
  such event.
"""
from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.checks.checklist_ops import active_items, checklist_for
from models.checks.tables import CheckItemResult, ItemResult, SafetyCheck, TemporaryControl
from models.core.errors import Invalid
from models.core.settings import lab_date
from models.instruments.instrument_ops import (
    CHECK_STEP,
    current_authorisations,
    note_commissioning_pass,
    return_to_service,
    set_out_of_service,
)
from models.instruments.tables import Instrument
from models.people.tables import Person, Role
from models.surveys.meter_ops import validate_meter_usable
from models.surveys.tables import SurveyMeter

CHECK_HOLD = "check"

RESULT_LABELS = {
    ItemResult.PASS: "Pass",
    ItemResult.FAIL: "Fail",
    ItemResult.NOT_APPLICABLE: "Not applicable",
}


@dataclass(frozen=True)
class Answer:
    """What the person checking found for one checklist item."""

    result: ItemResult | None
    comment: str = ""


def may_record_check(session: Session, person: Person, instrument: Instrument, now: datetime) -> bool:
    """The safety officer, or an operator currently authorised on the instrument."""
    if person.has_role(Role.SAFETY_OFFICER):
        return True
    today = lab_date(session, now)
    return any(a.instrument_id == instrument.id for a in current_authorisations(session, person, today))


def validate_check(
    session: Session,
    instrument: Instrument,
    performed_at: datetime | None,
    answers: dict[int, Answer],
    meter: SurveyMeter | None,
    now: datetime,
) -> None:
    """Refuse, by field, everything wrong with a check before anything is written."""
    errors = {}
    if instrument.retired:
        errors["instrument"] = "This instrument is retired; no new checks can be recorded."
    if performed_at is None:
        errors["performed_at"] = "Enter when the check was done."
    elif performed_at > now:
        errors["performed_at"] = "The check time is in the future; enter when it was actually done."
    for item in active_items(checklist_for(session, instrument)):
        answer = answers.get(item.id)
        if answer is None or answer.result is None:
            errors[f"result_{item.id}"] = "Choose pass, fail or not applicable for this item."
        elif answer.result == ItemResult.FAIL and not answer.comment.strip():
            errors[f"comment_{item.id}"] = "Say what failed: a fail needs a comment."
    if meter is not None and performed_at is not None:
        try:
            validate_meter_usable(meter, lab_date(session, performed_at))
        except Invalid as error:
            errors.update(error.errors)
    if errors:
        raise Invalid(errors)


def record_check(
    session: Session,
    instrument: Instrument,
    performer: Person,
    performed_at: datetime,
    answers: dict[int, Answer],
    meter: SurveyMeter | None,
    notes: str | None,
    now: datetime,
) -> SafetyCheck:
    """Record a check with one result per active item, then apply the service hold."""
    validate_check(session, instrument, performed_at, answers, meter, now)
    results = []
    for item in active_items(checklist_for(session, instrument)):
        answer = answers[item.id]
        results.append(CheckItemResult(item_id=item.id, item_text=item.text, result=answer.result,
                                       comment=answer.comment.strip() or None))
    check = SafetyCheck(instrument=instrument, performed_by=performer, performed_at=performed_at,
                        meter_id=meter.id if meter else None, results=results,
                        passed=all(r.result != ItemResult.FAIL for r in results),
                        notes=(notes or "").strip() or None)
    session.add(check)
    session.flush()
    if check.passed:
        note_commissioning_pass(session, instrument, CHECK_STEP, performed_at)
    latest = latest_check(session, instrument)
    if latest.passed:
        # The devices work again: any controls written for the old failure have done their job.
        for control in open_controls(session, instrument):
            control.ended_at = now
        if not instrument.in_service and instrument.out_of_service_cause == CHECK_HOLD:
            return_to_service(session, instrument)
    elif latest is check:
        # A new failure needs its own controls; those written for an older one no longer cover it.
        for control in open_controls(session, instrument):
            control.ended_at = now
        _hold(session, instrument, failure_reason(session, check))
    session.flush()
    return check


def failed_items(check: SafetyCheck) -> list[CheckItemResult]:
    """The results that failed."""
    return [r for r in check.results if r.result == ItemResult.FAIL]


def failure_reason(session: Session, check: SafetyCheck) -> str:
    """The out-of-service reason naming the failed items as failed, each with its comment."""
    # An item is written as the working state ("the light lights..."), so it is quoted and
    # marked as not holding, never run into the sentence as if it were true.
    failed = failed_items(check)
    items = "; ".join(f"“{r.item_text.strip().rstrip('.')}” did not hold"
                      + (f" ({r.comment.strip().rstrip('.')})" if r.comment else "") for r in failed)
    count = f"{len(failed)} item{'s' if len(failed) != 1 else ''}"
    return (f"Safety-device check of {lab_date(session, check.performed_at)} failed on "
            f"{count}: {items}")


def _hold(session: Session, instrument: Instrument, reason: str) -> None:
    """Take the instrument out for a failed check, unless a person already took it out."""
    if instrument.in_service or instrument.out_of_service_cause == CHECK_HOLD:
        set_out_of_service(session, instrument, reason, cause=CHECK_HOLD)


def latest_check(session: Session, instrument: Instrument) -> SafetyCheck | None:
    """The most recently performed check (by when it was done, not when it was entered)."""
    return session.scalar(
        sa.select(SafetyCheck).where(SafetyCheck.instrument_id == instrument.id)
        .order_by(SafetyCheck.performed_at.desc(), SafetyCheck.id.desc()).limit(1)
    )


def check_history(session: Session, instrument: Instrument, limit: int = 20) -> list[SafetyCheck]:
    """The instrument's checks, newest first."""
    return list(session.scalars(
        sa.select(SafetyCheck).where(SafetyCheck.instrument_id == instrument.id)
        .order_by(SafetyCheck.performed_at.desc(), SafetyCheck.id.desc()).limit(limit)
    ))


def open_controls(session: Session, instrument: Instrument) -> list[TemporaryControl]:
    """Controls on the instrument not yet ended (some may be past their expiry)."""
    return list(session.scalars(
        sa.select(TemporaryControl)
        .where(TemporaryControl.instrument_id == instrument.id, TemporaryControl.ended_at.is_(None))
    ))


def current_control(session: Session, instrument: Instrument, now: datetime) -> TemporaryControl | None:
    """The controls that let the instrument be used despite its failed check, if any."""
    latest = latest_check(session, instrument)
    if latest is None or latest.passed:
        return None
    return session.scalar(
        sa.select(TemporaryControl)
        .where(TemporaryControl.check_id == latest.id, TemporaryControl.ended_at.is_(None),
               TemporaryControl.expires_at > now)
        .order_by(TemporaryControl.expires_at.desc()).limit(1)
    )


def validate_control(session: Session, instrument: Instrument, description: str | None,
                  expires_at: datetime | None, now: datetime) -> None:
    """Refuse, by field, temporary controls that could not stand."""
    errors = {}
    latest = latest_check(session, instrument)
    if latest is None or latest.passed:
        errors["instrument"] = ("Temporary controls answer a failed check; the latest check of "
                                "this instrument did not fail.")
    if not (description or "").strip():
        errors["description"] = "Write the controls that replace the failed devices."
    if expires_at is None:
        errors["expires_at"] = "Enter when the controls expire."
    elif expires_at <= now:
        errors["expires_at"] = "The expiry must be in the future."
    if errors:
        raise Invalid(errors)


def record_control(session: Session, instrument: Instrument, recorder: Person, description: str,
                   expires_at: datetime, now: datetime) -> TemporaryControl:
    """The safety officer's written controls: use allowed again until they expire."""
    if not recorder.has_role(Role.SAFETY_OFFICER):
        raise Invalid.one("recorder", "Only the radiation safety officer records temporary controls.")
    validate_control(session, instrument, description, expires_at, now)
    for old in open_controls(session, instrument):
        old.ended_at = now  # superseded by the new controls
    control = TemporaryControl(instrument=instrument, check_id=latest_check(session, instrument).id,
                               description=description.strip(), recorded_by=recorder,
                               recorded_at=now, expires_at=expires_at)
    session.add(control)
    session.flush()
    if not instrument.in_service and instrument.out_of_service_cause == CHECK_HOLD:
        return_to_service(session, instrument)
    return control


def end_control(session: Session, control: TemporaryControl, now: datetime) -> TemporaryControl:
    """Withdraw controls early; the failed check holds the instrument again."""
    control.ended_at = now
    session.flush()
    _rehold(session, control.instrument,
            f"Temporary controls withdrawn on {lab_date(session, now)}", now)
    return control


def lapse_expired_controls(session: Session, now: datetime) -> list[Instrument]:
    """End controls past their expiry; return the instruments this put out of service."""
    expired = session.scalars(
        sa.select(TemporaryControl)
        .where(TemporaryControl.ended_at.is_(None), TemporaryControl.expires_at <= now)
    ).all()
    held = []
    for control in expired:
        control.ended_at = control.expires_at
        session.flush()
        instrument = control.instrument
        was_in_service = instrument.in_service
        _rehold(session, instrument,
                f"Temporary controls expired on {lab_date(session, control.expires_at)}", now)
        if was_in_service and not instrument.in_service:
            held.append(instrument)
    return held


def _rehold(session: Session, instrument: Instrument, why: str, now: datetime) -> None:
    """Put the hold back when controls stop while the latest check still fails."""
    latest = latest_check(session, instrument)
    if latest is None or latest.passed or instrument.retired:
        return
    if current_control(session, instrument, now) is None:
        _hold(session, instrument, f"{why}. {failure_reason(session, latest)}")
