"""What this area adds to shared pages: navigation, attention lines, instrument sections, banner."""
from __future__ import annotations

from flask import g, has_request_context, url_for
from flask_login import current_user

from models.core.base import utcnow
from models.core.due_dates import DUE_SOON, OVERDUE
from models.instruments.tables import Instrument
from models.surveys.level_sources import level_sources
from models.surveys.meter_ops import active_meters, calibration_on
from models.surveys.permit_ops import (
    active_permits,
    display_state,
    expired_unclosed_permits,
    permits_of,
    requested_permits,
)
from models.surveys.survey_ops import latest_failed_surveys, open_survey_tasks, surveys_of
from models.surveys.tables import BypassPermit, PointLevel
from webapp.extensions import db
from webapp.formatting import lab_today, local, settings
from webapp.slots import (
    Attention,
    Badge,
    Severity,
    attention,
    banners,
    instrument_badges,
    instrument_sections,
    navigation,
)
from webapp.surveys.sources import source_family

navigation.add("Surveys", "surveys.surveys", order=30)
navigation.add("Bypass permits", "surveys.permits", order=35)


def current_bypasses() -> list[BypassPermit]:
    """Permits in force now, looked up once per request; none shown before login."""
    if not has_request_context() or not current_user.is_authenticated:
        return []
    if "active_bypasses" not in g:
        g.active_bypasses = active_permits(db.session)
    return g.active_bypasses


@banners.add("surveys/_bypass_banner.html", order=10)
def _bypass_banner(_viewer) -> dict:
    """Every page lists the instruments under an active bypass."""
    return {"permits": current_bypasses()}


@instrument_badges.add(order=10)
def _bypass_badge(instrument: Instrument) -> list[Badge]:
    """An instrument under an active bypass says so wherever its status shows."""
    if any(p.instrument_id == instrument.id for p in current_bypasses()):
        return [Badge("bypass active", "state-bad")]
    return []


@attention.add(order=30)
def _meter_lines() -> list[Attention]:
    """Meters out of calibration, or running out soon."""
    today, soon = lab_today(), settings().due_soon_days
    lines = []
    for meter in active_meters(db.session):
        calibration = calibration_on(meter, today, soon)
        if calibration.state in (OVERDUE, DUE_SOON):
            word = "was" if not calibration.valid else "is"
            lines.append(Attention(Severity.METER_CALIBRATION,
                                   f"Survey meter {meter.serial}: calibration {word} valid until "
                                   f"{calibration.last_valid} (last valid day).",
                                   url_for("surveys.meter", meter_id=meter.id),
                                   "meter out of calibration" if not calibration.valid
                                   else "meter calibration soon"))
    return lines


@attention.add(order=31)
def _permit_lines() -> list[Attention]:
    """Requests waiting for approval first, then permits not closed, then permits in force."""
    lines = [Attention(Severity.BYPASS,
                       f"Waiting for your approval: {p.requested_by.name} asks to bypass "
                       f"{p.devices} on {p.instrument.name} from {local(p.window_start)} to "
                       f"{local(p.window_end)}.",
                       url_for("surveys.permit", permit_id=p.id), "bypass waiting for approval")
             for p in requested_permits(db.session)]
    lines += [Attention(Severity.BYPASS,
                       f"Bypass on {p.instrument.name} ({p.devices}) ended {local(p.window_end)} "
                       "but the permit was not closed.",
                       url_for("surveys.permit", permit_id=p.id), "bypass not closed")
              for p in expired_unclosed_permits(db.session)]
    lines += [Attention(Severity.BYPASS,
                        f"Bypass active on {p.instrument.name} ({p.devices}) until {local(p.window_end)}.",
                        url_for("surveys.permit", permit_id=p.id), "bypass active")
              for p in active_permits(db.session)]
    return lines


def _sentence(text: str) -> str:
    """A reason as a sentence, so that several read one after the other."""
    text = text.strip()
    return text if text.endswith((".", "!", "?")) else f"{text}."


@attention.add(order=32)
def _survey_lines() -> list[Attention]:
    """Failed latest surveys and surveys asked for."""
    lines = [Attention(Severity.FAILED_CHECK,
                       f"Latest survey of {s.instrument.name} failed ({local(s.performed_at)}).",
                       url_for("surveys.survey", survey_id=s.id), "survey failed")
             for s in latest_failed_surveys(db.session)]
    # One survey answers every request for its instrument: one line each, with all the reasons.
    asked: dict[int, list] = {}
    for task in open_survey_tasks(db.session):
        asked.setdefault(task.instrument_id, []).append(task)
    lines += [Attention(Severity.OVERDUE, f"Survey of {tasks[0].instrument.name} needed: "
                        + " ".join(dict.fromkeys(_sentence(t.reason) for t in tasks)),
                        url_for("surveys.new_survey", instrument_id=instrument_id,
                                trigger=tasks[0].trigger.value), "survey needed")
              for instrument_id, tasks in asked.items()]
    return lines


@instrument_sections.add("surveys/_instrument_surveys.html", order=40)
def _instrument_surveys(instrument: Instrument) -> dict:
    """An instrument's surveys and the surveys asked for."""
    sources = level_sources(source_family())
    levels = [("Outer surface", instrument.surface_action_level_usv_h, sources[PointLevel.SURFACE]),
              ("Tube housing", instrument.housing_action_level_usv_h, sources[PointLevel.HOUSING])]
    return {"surveys": surveys_of(db.session, instrument, limit=10),
            "tasks": open_survey_tasks(db.session, instrument), "levels": levels}


@instrument_sections.add("surveys/_instrument_permits.html", order=45)
def _instrument_permits(instrument: Instrument) -> dict:
    """An instrument's bypass permits, with the one in force first."""
    now = utcnow()
    return {"permits": permits_of(db.session, instrument, limit=10), "now": now,
            "state": display_state, "active": active_permits(db.session, now, instrument)}
