"""Instruments, their checklist templates, authorisations and API tokens."""
from __future__ import annotations

from datetime import date, datetime

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.base import copy_fields, taken, utcnow
from models.core.bounds import range_text, within
from models.core.errors import Invalid
from models.instruments.tables import Authorisation, Instrument
from models.people.tables import Person

ELEMENT_SYMBOLS = frozenset(
    "H He Li Be B C N O F Ne Na Mg Al Si P S Cl Ar K Ca Sc Ti V Cr Mn Fe Co Ni Cu Zn Ga Ge As Se "
    "Br Kr Rb Sr Y Zr Nb Mo Tc Ru Rh Pd Ag Cd In Sn Sb Te I Xe Cs Ba La Ce Pr Nd Pm Sm Eu Gd Tb "
    "Dy Ho Er Tm Yb Lu Hf Ta W Re Os Ir Pt Au Hg Tl Pb Bi".split()
)

# Plausible ratings of an analytical X-ray tube, and sensible schedules (the forms show these ranges).
# Generous outer bounds: analytical tubes run at tens of kV and up to a few kW (common practice).
RANGES = {
    "max_kv": (0.001, 500.0, "kV"), "max_ma": (0.001, 5000.0, "mA"), "max_power_w": (0.001, 100_000.0, "W"),
    "surface_action_level_usv_h": (0.001, 10_000.0, "µSv/h"),
    "housing_action_level_usv_h": (0.001, 10_000.0, "µSv/h"),
    # The published outer bound for checks is 12 months (25 Pa. Code 227a.20); surveys at least yearly.
    "check_interval_days": (1, 366, "days"), "survey_interval_days": (1, 730, "days"),
}

INSTRUMENT_FIELDS = (
    "name", "kind", "room", "registration_number", "anode", "max_kv", "max_ma", "max_power_w",
    "enclosure", "check_interval_days", "survey_interval_days", "surface_action_level_usv_h",
    "housing_action_level_usv_h",
)


# The hold a new instrument starts under, lifted only by commissioning.
NOT_COMMISSIONED = "commissioning"
NOT_COMMISSIONED_REASON = ("Not yet commissioned: it enters service after a passing safety-device "
                           "check and a passing radiation survey, with its checklist in place")
CHECK_STEP, SURVEY_STEP = "check", "survey"


def validate_instrument(session: Session, values: dict, current: Instrument | None = None) -> None:
    """Refuse, by field, every rule an instrument's description breaks."""
    errors = {}
    name = (values.get("name") or "").strip()
    if not name:
        errors["name"] = "Enter the instrument's name."
    elif taken(session, Instrument.name, name, current):
        errors["name"] = f"An instrument called '{name}' already exists."
    if values.get("anode") not in ELEMENT_SYMBOLS:
        errors["anode"] = "Give the anode as an element symbol, e.g. Cu or Mo."
    for key, label in (("max_kv", "Maximum tube voltage"), ("max_ma", "Maximum tube current"),
                       ("max_power_w", "Maximum power"),
                       ("surface_action_level_usv_h", "Surface action level"),
                       ("housing_action_level_usv_h", "Housing action level")):
        value = values.get(key)
        if value is None or not value > 0:  # also refuses NaN
            errors[key] = f"{label} must be greater than zero."
        elif not within(value, *RANGES[key][:2]):
            errors[key] = f"{label} must be from {range_text(*RANGES[key])}."
    for key in ("check_interval_days", "survey_interval_days"):
        value = values.get(key)
        if not within(value, *RANGES[key][:2]):
            errors[key] = f"The interval must be from {range_text(*RANGES[key])}."
    if errors:
        raise Invalid(errors)


def save_instrument(session: Session, values: dict, instrument: Instrument | None = None) -> Instrument:
    """Create an instrument or change its description; bad values are refused by field."""
    validate_instrument(session, values, instrument)
    new = instrument is None
    instrument = instrument or Instrument()
    copy_fields(instrument, values, INSTRUMENT_FIELDS)
    session.add(instrument)
    session.flush()
    if new:
        set_out_of_service(session, instrument, NOT_COMMISSIONED_REASON, cause=NOT_COMMISSIONED)
    return instrument


def mark_commissioned(session: Session, instrument: Instrument, when: datetime) -> Instrument:
    """Record an instrument that was already in use before the logbook as commissioned then."""
    instrument.commissioned_at = when
    if not instrument.in_service and instrument.out_of_service_cause == NOT_COMMISSIONED:
        _clear_hold(instrument)
    session.flush()
    return instrument


def note_commissioning_pass(session: Session, instrument: Instrument, step: str,
                            when: datetime) -> bool:
    """Note a new instrument's passing check or survey; True when this puts it into service."""
    if instrument.commissioned or instrument.retired:
        return False
    if step == CHECK_STEP:
        instrument.commissioning_check_at = instrument.commissioning_check_at or when
    elif step == SURVEY_STEP:
        instrument.commissioning_survey_at = instrument.commissioning_survey_at or when
    else:
        raise ValueError(f"unknown commissioning step {step!r}")
    ready = (instrument.commissioning_check_at is not None
             and instrument.commissioning_survey_at is not None
             and instrument.checklist_template_id is not None)
    if not ready:
        session.flush()
        return False
    mark_commissioned(session, instrument, max(instrument.commissioning_check_at,
                                               instrument.commissioning_survey_at))
    return instrument.in_service


def retire_instrument(session: Session, instrument: Instrument) -> Instrument:
    """Take an instrument off the active list for good; its records stay."""
    instrument.retired_at = utcnow()
    set_out_of_service(session, instrument, "Retired")
    return instrument


def set_out_of_service(
    session: Session, instrument: Instrument, reason: str, cause: str | None = None
) -> Instrument:
    """Stop new use of an instrument, saying why; `cause` marks a hold the logbook itself set."""
    if not reason.strip():
        raise Invalid.one("reason", "Say why the instrument is out of service.")
    instrument.in_service = False
    instrument.out_of_service_reason = reason.strip()
    instrument.out_of_service_since = utcnow()
    instrument.out_of_service_cause = cause
    session.flush()
    return instrument


def return_to_service(session: Session, instrument: Instrument) -> Instrument:
    """Allow use again after the cause was dealt with."""
    if instrument.retired:
        raise Invalid.one("instrument", "A retired instrument cannot return to service.")
    if not instrument.commissioned:
        raise Invalid.one("instrument", f"{instrument.name} is not yet commissioned: it enters "
                          "service by itself after a passing safety-device check and a passing "
                          "radiation survey.")
    _clear_hold(instrument)
    session.flush()
    return instrument


def _clear_hold(instrument: Instrument) -> None:
    """Put the instrument in service and forget why it was out."""
    instrument.in_service = True
    instrument.out_of_service_reason = None
    instrument.out_of_service_since = None
    instrument.out_of_service_cause = None


def active_instruments(session: Session) -> list[Instrument]:
    """Instruments not retired, by name."""
    return list(session.scalars(
        sa.select(Instrument).where(Instrument.retired_at.is_(None)).order_by(Instrument.name)
    ))


def current_authorisations(session: Session, person: Person, today: date) -> list[Authorisation]:
    """A person's authorisations that are not revoked and not past their refresher date."""
    return list(session.scalars(
        sa.select(Authorisation)
        .where(Authorisation.person_id == person.id, Authorisation.revoked_at.is_(None),
               Authorisation.refresher_due >= today)
        .order_by(Authorisation.instrument_id)
    ))
