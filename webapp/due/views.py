"""The due list, the operator's home panel, the attention lines and the calendar feed."""
from __future__ import annotations

from flask import Response, abort, render_template, request, url_for
from flask_login import current_user, login_required
from werkzeug.routing import BuildError

from models.core import due_dates
from models.core.base import utcnow
from models.due.calendar_ops import build_calendar, person_for_token, renew_token, stop_feed
from models.due.due_list_ops import (
    CHECK,
    DOSIMETER,
    REFRESHER,
    SURVEY,
    DueItem,
    calendar_items,
    lab_items,
    person_items,
)
from models.people.tables import Role
from webapp.due import bp
from webapp.extensions import db, limiter
from webapp.formatting import settings
from webapp.mail import link
from webapp.slots import Attention, Severity, attention, home_panels, navigation, settings_sections

STATE_CLASS = {due_dates.OVERDUE: "state-bad", due_dates.NEVER_DONE: "state-bad", due_dates.DUE_SOON: "state-warn",
               due_dates.OK: "state-good"}

# Where to act on items that are not about an instrument as a whole; the owning areas' pages,
# with the instrument page or the due list as the fallback while an area is not merged yet.
OTHER_TARGETS = {"meter": ("surveys.meter", "meter_id"), "permit": ("surveys.permit", "permit_id"),
                 "dosimeter": ("doses.dosimeter", "dosimeter_id")}

# Which attention line a late item makes; training shows as soon as it is due soon. Meter
# calibrations and bypass permits are left out: the surveys area reports those itself.
LATE_SEVERITY = {CHECK: Severity.OVERDUE, SURVEY: Severity.OVERDUE,
                 DOSIMETER: Severity.DOSIMETER_NOT_RETURNED, REFRESHER: Severity.TRAINING}

navigation.add("What is due", "due.index", {Role.OPERATOR, Role.SAFETY_OFFICER}, order=32)


def target_url(item: DueItem, external: bool = False) -> str:
    """The page where the item is acted on; `external` gives a full address on BASE_URL."""
    build = link if external else url_for
    if item.target_kind in OTHER_TARGETS:
        endpoint, arg = OTHER_TARGETS[item.target_kind]
        try:
            return build(endpoint, **{arg: item.target_id})
        except BuildError:
            pass
    if item.instrument_id is not None:
        return build("instruments.show", instrument_id=item.instrument_id)
    return build("due.index")


@bp.context_processor
def _helpers() -> dict:
    """Let this area's pages link and colour due items."""
    return {"due_url": target_url, "due_class": STATE_CLASS}


@bp.route("/due")
@login_required
def index():
    """The safety officer sees the whole lab, latest first; others see their own tasks."""
    now = utcnow()
    lab = current_user.has_role(Role.SAFETY_OFFICER)
    show_all = request.args.get("all") == "1"
    items = (lab_items(db.session, now, pending_only=not show_all) if lab
             else person_items(db.session, current_user, now, pending_only=not show_all))
    return render_template("due/index.html", items=items,
                           lab=lab, show_all=show_all, soon_days=settings().due_soon_days)


@home_panels.add("due/_panel.html", roles={Role.OPERATOR}, order=25)
def _panel(person) -> dict:
    """The operator's own tasks that are due soon or late."""
    return {"tasks": person_items(db.session, person, utcnow(), pending_only=True),
            "soon_days": settings().due_soon_days, "url": target_url, "state_class": STATE_CLASS}


@settings_sections.add("due/_settings.html", order=20)
def _settings(lab) -> dict:
    """The check interval's published bounds, the due-soon window and the reminder command."""
    return {"lab": lab, "bounds": due_dates.CHECK_INTERVAL_OUTER_BOUNDS,
            "check_days": due_dates.DEFAULT_CHECK_INTERVAL_DAYS,
            "survey_days": due_dates.DEFAULT_SURVEY_INTERVAL_DAYS,
            "meter_months": due_dates.METER_CALIBRATION_MONTHS, "refresher_months": due_dates.REFRESHER_MONTHS}


@attention.add(order=40)
def _attention() -> list[Attention]:
    """Late or never-done tasks across the lab, and training running out soon."""
    lines = []
    for item in lab_items(db.session, utcnow(), pending_only=True):
        if item.kind not in LATE_SEVERITY:
            continue
        late = item.state in (due_dates.OVERDUE, due_dates.NEVER_DONE)
        if late or (item.kind == REFRESHER and item.state == due_dates.DUE_SOON):
            when = (f"{item.days_late} day{'s' if item.days_late != 1 else ''} late"
                    if item.state == due_dates.OVERDUE else f"due {item.due}")
            if item.state == due_dates.NEVER_DONE:
                when = "never done"
            lines.append(Attention(LATE_SEVERITY[item.kind], f"{item.what}: {item.subject}, {when}.",
                                   target_url(item), item.state_label))
    return lines


@bp.route("/calendar", methods=["GET"])
@login_required
def calendar():
    """The person's feed: whether it is on, and buttons to renew or stop it."""
    return render_template("due/calendar.html", feed_url=None)


@bp.route("/calendar/renew", methods=["POST"])
@login_required
def renew():
    """Make a new secret address; the old one stops working. The address is shown only now."""
    token = renew_token(db.session, current_user)
    db.session.commit()
    return render_template("due/calendar.html",
                           feed_url=link("due.feed", token=token))


@bp.route("/calendar/stop", methods=["POST"])
@login_required
def stop():
    """Turn the feed off."""
    stop_feed(db.session, current_user)
    db.session.commit()
    return render_template("due/calendar.html", feed_url=None)


@bp.route("/calendar/<token>.ics")
@limiter.limit("60 per minute")
def feed(token: str):
    """The person's due dates as iCalendar; no login, the secret address is the key."""
    person = person_for_token(db.session, token)
    if person is None:
        abort(404)
    now = utcnow()
    body = build_calendar(calendar_items(db.session, person, now),
                          f"{settings().lab_name}: due dates for {person.name}", now,
                          lambda item: target_url(item, external=True))
    return Response(body, mimetype="text/calendar",
                    headers={"Cache-Control": "private, no-store"})
