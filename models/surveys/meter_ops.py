"""Survey meters: register, recalibrate, retire, and their calibration state."""
from __future__ import annotations

from dataclasses import dataclass
from datetime import date, timedelta

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.base import copy_fields, taken, utcnow
from models.core.bounds import range_text, within
from models.core.due_dates import calibration_due, calibration_valid_on, due_state
from models.core.errors import Invalid
from models.surveys.tables import SurveyMeter

# Meters are calibrated yearly (a common state rule); three years is the outer bound accepted.
CALIBRATION_MONTHS_RANGE = (1, 36)
CORRECTION_RANGE = (0.0, 100.0)
METER_FIELDS = ("serial", "model", "detector_type", "calibrated_on", "calibration_interval_months",
                "correction_factor", "energy_response_notes")


def validate_meter(session: Session, values: dict, today: date, current: SurveyMeter | None = None) -> None:
    """Refuse, by field, every rule a meter's description breaks."""
    errors = {}
    serial = (values.get("serial") or "").strip()
    if not serial:
        errors["serial"] = "Enter the meter's serial number."
    elif taken(session, SurveyMeter.serial, serial, current):
        errors["serial"] = f"A meter with serial '{serial}' is already registered."
    errors.update(_calibration_errors(values.get("calibrated_on"),
                                      values.get("calibration_interval_months"), today))
    factor = values.get("correction_factor")
    if not within(factor, *CORRECTION_RANGE) or factor == 0:
        errors["correction_factor"] = f"The correction factor must be above 0 and at most {CORRECTION_RANGE[1]:g}."
    if errors:
        raise Invalid(errors)


def _calibration_errors(calibrated_on: date | None, months: int | None, today: date) -> dict:
    """Messages for a calibration date in the future or an interval under a month."""
    errors = {}
    if calibrated_on is None:
        errors["calibrated_on"] = "Enter the date of the meter's last calibration."
    elif calibrated_on > today:
        errors["calibrated_on"] = f"The calibration date {calibrated_on} is in the future."
    if not within(months, *CALIBRATION_MONTHS_RANGE):
        errors["calibration_interval_months"] = (
            f"The calibration interval must be from {range_text(*CALIBRATION_MONTHS_RANGE, 'months')}.")
    return errors


def save_meter(session: Session, values: dict, today: date, meter: SurveyMeter | None = None) -> SurveyMeter:
    """Register a meter or change its description; bad values are refused by field."""
    validate_meter(session, values, today, meter)
    meter = meter or SurveyMeter()
    copy_fields(meter, values, METER_FIELDS)
    session.add(meter)
    session.flush()
    return meter


def recalibrate(session: Session, meter: SurveyMeter, calibrated_on: date | None,
                interval_months: int | None, today: date) -> SurveyMeter:
    """Record a new calibration; the old date stays in the audit trail."""
    errors = _calibration_errors(calibrated_on, interval_months, today)
    if not errors and calibrated_on < meter.calibrated_on:
        errors["calibrated_on"] = (f"The new calibration date {calibrated_on} is before the one "
                                   f"on record ({meter.calibrated_on}).")
    if meter.retired_at is not None:
        errors["calibrated_on"] = "This meter is retired."
    if errors:
        raise Invalid(errors)
    meter.calibrated_on = calibrated_on
    meter.calibration_interval_months = interval_months
    session.flush()
    return meter


def retire_meter(session: Session, meter: SurveyMeter) -> SurveyMeter:
    """Take a meter out of use for good; surveys made with it keep pointing to it."""
    meter.retired_at = utcnow()
    session.flush()
    return meter


def active_meters(session: Session) -> list[SurveyMeter]:
    """Meters not retired, by serial."""
    return list(session.scalars(sa.select(SurveyMeter).where(SurveyMeter.retired_at.is_(None))
                                .order_by(SurveyMeter.serial)))


@dataclass(frozen=True)
class Calibration:
    """A meter's calibration as of a day: its last valid day and whether it may be used."""

    last_valid: date
    state: str
    valid: bool


def calibration_on(meter: SurveyMeter, on_date: date, soon_days: int) -> Calibration:
    """The meter's calibration state on a day (states of models.due)."""
    due = calibration_due(meter.calibrated_on, meter.calibration_interval_months)
    # Usable through the day before the anniversary, so that day is the one to count down to.
    last_day = due - timedelta(days=1)
    return Calibration(last_valid=last_day, state=due_state(last_day, on_date, soon_days),
                       valid=calibration_valid_on(meter.calibrated_on,
                                                  meter.calibration_interval_months, on_date))


def validate_meter_usable(meter: SurveyMeter | None, on_date: date) -> None:
    """Refuse a meter that is retired or not within its calibration on the date of the readings."""
    if meter is None:
        raise Invalid.one("meter_id", "Choose the survey meter used.")
    if meter.retired_at is not None:
        raise Invalid.one("meter_id", f"Meter {meter.serial} is retired and cannot be used.")
    if meter.calibrated_on > on_date:
        raise Invalid.one("meter_id", (
            f"Meter {meter.serial}'s calibration on record is dated {meter.calibrated_on}, after "
            f"the readings' date {on_date}; its earlier calibration cannot be checked here."))
    if not calibration_valid_on(meter.calibrated_on, meter.calibration_interval_months, on_date):
        last_valid = (calibration_due(meter.calibrated_on, meter.calibration_interval_months)
                      - timedelta(days=1))
        raise Invalid.one("meter_id", (
            f"Meter {meter.serial} was out of calibration on {on_date}: its calibration was valid "
            f"until {last_valid} (last valid day). Use a calibrated meter, or record the meter's "
            "new calibration first."))
