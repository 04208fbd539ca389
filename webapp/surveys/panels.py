"""What this area adds to shared pages: navigation, attention lines, instrument sections, banner."""
from __future__ import annotations

from flask import g, has_request_context, url_for
from flask_login import current_user

from models.core.base import utcnow
from models.core.due_dates import DUE_SOON, OVERDUE
from models.instruments.tables import Instrument
from models.surveys.meter_ops import active_meters, calibration_on
from models.surveys.permit_ops import (
    active_permits,
    display_state,
    expired_unclosed_permits,
    permits_of,
    requested_permits,
)
from models.surveys.survey_ops import latest_failed_surveys, open_survey_tasks, surveys_of
from models.surveys.tables import BypassPermit
from webapp.extensions import db
from webapp.formatting import lab_today, local, settings
from webapp.slots import Attention, Severity, attention, instrument_sections, navigation
from webapp.surveys import bp

navigation.add("Surveys", "surveys.surveys", order=30)
navigation.add("Bypass permits", "surveys.permits", order=35)


@bp.app_context_processor
def _bypass_banner() -> dict:
    """Every page can list the instruments under an active bypass."""
    return {"active_bypass_permits": current_bypasses,
            "bypass_instrument_ids": lambda: {p.instrument_id for p in current_bypasses()}}


def current_bypasses() -> list[BypassPermit]:
    """Permits in force now, looked up once per request; none shown before login."""
    if not has_request_context() or not current_user.is_authenticated:
        return []
    if "active_bypasses" not in g:
        g.active_bypasses = active_permits(db.session)
    return g.active_bypasses


@attention.add
def _meter_lines() -> list[Attention]:
    """Meters out of calibration, or running out soon."""
    today, soon = lab_today(), settings().due_soon_days
    lines = []
    for meter in active_meters(db.session):
        calibration = calibration_on(meter, today, soon)
        if calibration.state in (OVERDUE, DUE_SOON):
            word = "ran out" if not calibration.valid else "runs out"
            lines.append(Attention(Severity.METER_CALIBRATION,
                                   f"Survey meter {meter.serial}: calibration {word} on {calibration.due}.",
                                   url_for("surveys.meter", meter_id=meter.id),
                                   "meter out of calibration" if not calibration.valid
                                   else "meter calibration soon"))
    return lines


@attention.add
def _permit_lines() -> list[Attention]:
    """Permits past their window and not closed, permits in force, requests to decide."""
    lines = [Attention(Severity.BYPASS,
                       f"Bypass on {p.instrument.name} ({p.devices}) ended {local(p.window_end)} "
                       "but the permit was not closed.",
                       url_for("surveys.permit", permit_id=p.id), "bypass not closed")
             for p in expired_unclosed_permits(db.session)]
    lines += [Attention(Severity.BYPASS,
                        f"Bypass active on {p.instrument.name} ({p.devices}) until {local(p.window_end)}.",
                        url_for("surveys.permit", permit_id=p.id), "bypass active")
              for p in active_permits(db.session)]
    lines += [Attention(Severity.BYPASS,
                        f"{p.requested_by.name} asks to bypass {p.devices} on {p.instrument.name}.",
                        url_for("surveys.permit", permit_id=p.id), "bypass to decide")
              for p in requested_permits(db.session)]
    return lines


@attention.add
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
                        + "; ".join(dict.fromkeys(t.reason for t in tasks)),
                        url_for("surveys.new_survey", instrument_id=instrument_id,
                                trigger=tasks[0].trigger.value), "survey needed")
              for instrument_id, tasks in asked.items()]
    return lines


@instrument_sections.add("surveys/_instrument_surveys.html", order=40)
def _instrument_surveys(instrument: Instrument) -> dict:
    """An instrument's surveys and the surveys asked for."""
    return {"surveys": surveys_of(db.session, instrument, limit=10),
            "tasks": open_survey_tasks(db.session, instrument)}


@instrument_sections.add("surveys/_instrument_permits.html", order=45)
def _instrument_permits(instrument: Instrument) -> dict:
    """An instrument's bypass permits, with the one in force first."""
    now = utcnow()
    return {"permits": permits_of(db.session, instrument, limit=10), "now": now,
            "state": display_state, "active": active_permits(db.session, now, instrument)}
