"""Who may see what: role checks for views."""
from __future__ import annotations

from enum import StrEnum
from functools import wraps

from flask import abort
from flask_login import current_user, login_required

from models.people.tables import Role


def roles_required(*roles: Role):
    """Refuse with 403 anyone logged in without one of the roles; send others to log in."""

    def decorate(view):
        @wraps(view)
        @login_required
        def wrapped(*args, **kwargs):
            if not current_user.has_role(*roles):
                abort(403)
            return view(*args, **kwargs)

        return wrapped

    return decorate


def can_see_dose_of(person_id: int) -> bool:
    """An operator sees only their own dose; the safety officer sees everyone's."""
    return current_user.is_authenticated and (
        current_user.id == person_id or current_user.has_role(Role.SAFETY_OFFICER)
    )


class Audience(StrEnum):
    """Who may open a route; `ROUTE_AUDIENCE` names one for every endpoint of the app."""

    ANYONE = "anyone, signed in or not"
    CALENDAR_LINK = "whoever holds the secret calendar address"
    INSTRUMENT_TOKEN = "an instrument PC with its API token"
    SIGNED_IN = "any signed-in person"
    SELF_OR_OFFICER = "the person whose dose it is, and the safety officer"
    OWNER_OR_OFFICER = "the person who made the record or is named in it, and the safety officer"
    AUTHORISED_OR_OFFICER = "an operator authorised on the instrument, and the safety officer"
    OPERATOR = "operators and the safety officer"
    SAFETY_OFFICER = "the safety officer"
    ADMIN = "the admin"
    OFFICER_OR_ADMIN = "the safety officer and the admin"


_A = Audience
# Read by the role-by-route test (tests/webapp/test_route_matrix.py), which fails for an endpoint
# missing here and requests every one as each role. A new route adds its line.
ROUTE_AUDIENCE: dict[str, Audience] = {
    "static": _A.ANYONE,
    "home.safety": _A.ANYONE,
    "auth.login": _A.ANYONE,
    "auth.reset_request": _A.ANYONE,
    "auth.reset_password": _A.ANYONE,
    "api.v1.openapi": _A.ANYONE,
    "due.feed": _A.CALENDAR_LINK,
    "api.v1.open_": _A.INSTRUMENT_TOKEN,
    "api.v1.list_": _A.INSTRUMENT_TOKEN,
    "api.v1.show": _A.INSTRUMENT_TOKEN,
    "api.v1.close": _A.INSTRUMENT_TOKEN,
    "api.v1.finished": _A.INSTRUMENT_TOKEN,
    "home.index": _A.SIGNED_IN,
    "auth.logout": _A.SIGNED_IN,
    "auth.password": _A.SIGNED_IN,
    "due.index": _A.SIGNED_IN,
    "due.calendar": _A.SIGNED_IN,
    "due.renew": _A.SIGNED_IN,
    "due.stop": _A.SIGNED_IN,
    "exposure.me": _A.SIGNED_IN,
    "incidents.index": _A.SIGNED_IN,
    "incidents.new": _A.SIGNED_IN,
    "instruments.index": _A.SIGNED_IN,
    "instruments.show": _A.SIGNED_IN,
    "checks.show": _A.SIGNED_IN,
    "sessions.index": _A.SIGNED_IN,
    "sessions.show": _A.SIGNED_IN,
    "sessions.printable": _A.SIGNED_IN,
    "surveys.meters": _A.SIGNED_IN,
    "surveys.meter": _A.SIGNED_IN,
    "surveys.permits": _A.SIGNED_IN,
    "surveys.permit": _A.SIGNED_IN,
    "surveys.surveys": _A.SIGNED_IN,
    "surveys.survey": _A.SIGNED_IN,
    "doses.person": _A.SELF_OR_OFFICER,
    "doses.record": _A.SELF_OR_OFFICER,
    "doses.pregnancy": _A.SELF_OR_OFFICER,
    "doses.pregnancy_change": _A.SELF_OR_OFFICER,
    "exposure.person": _A.SELF_OR_OFFICER,
    "exposure.chart": _A.SELF_OR_OFFICER,
    "reports.statement": _A.SELF_OR_OFFICER,
    "sessions.end": _A.OWNER_OR_OFFICER,
    "surveys.close": _A.OWNER_OR_OFFICER,
    "incidents.show": _A.OWNER_OR_OFFICER,
    "checks.new": _A.AUTHORISED_OR_OFFICER,
    "doses.mine": _A.OPERATOR,
    "doses.my_pregnancy": _A.OPERATOR,
    "sessions.log": _A.OPERATOR,
    "sessions.start": _A.OPERATOR,
    "surveys.new_permit": _A.OPERATOR,
    "surveys.new_survey": _A.OPERATOR,
    "checks.activate": _A.SAFETY_OFFICER,
    "checks.add": _A.SAFETY_OFFICER,
    "checks.checklist": _A.SAFETY_OFFICER,
    "checks.control": _A.SAFETY_OFFICER,
    "checks.end": _A.SAFETY_OFFICER,
    "checks.move": _A.SAFETY_OFFICER,
    "checks.remove": _A.SAFETY_OFFICER,
    "checks.reword": _A.SAFETY_OFFICER,
    "doses.amend": _A.SAFETY_OFFICER,
    "doses.dosimeters": _A.SAFETY_OFFICER,
    "doses.import_batch": _A.SAFETY_OFFICER,
    "doses.import_commit": _A.SAFETY_OFFICER,
    "doses.import_mapping": _A.SAFETY_OFFICER,
    "doses.import_preview": _A.SAFETY_OFFICER,
    "doses.import_upload": _A.SAFETY_OFFICER,
    "doses.index": _A.SAFETY_OFFICER,
    "doses.issue": _A.SAFETY_OFFICER,
    "doses.new": _A.SAFETY_OFFICER,
    "doses.not_returned": _A.SAFETY_OFFICER,
    "doses.pregnancies": _A.SAFETY_OFFICER,
    "doses.return_": _A.SAFETY_OFFICER,
    "exposure.investigation": _A.SAFETY_OFFICER,
    "exposure.investigations": _A.SAFETY_OFFICER,
    "exposure.limit_rule": _A.SAFETY_OFFICER,
    "exposure.limit_rule_remove": _A.SAFETY_OFFICER,
    "exposure.limit_set": _A.SAFETY_OFFICER,
    "exposure.limits": _A.SAFETY_OFFICER,
    "exposure.limits_choose": _A.SAFETY_OFFICER,
    "exposure.limits_copy": _A.SAFETY_OFFICER,
    "exposure.limits_history": _A.SAFETY_OFFICER,
    "exposure.limits_install": _A.SAFETY_OFFICER,
    "exposure.limits_policies": _A.SAFETY_OFFICER,
    "exposure.people": _A.SAFETY_OFFICER,
    "exposure.people_csv": _A.SAFETY_OFFICER,
    "incidents.close": _A.SAFETY_OFFICER,
    "incidents.dose": _A.SAFETY_OFFICER,
    "incidents.note": _A.SAFETY_OFFICER,
    "incidents.out_of_service": _A.SAFETY_OFFICER,
    "instruments.service": _A.SAFETY_OFFICER,
    "reports.lab_year_chart": _A.SAFETY_OFFICER,
    "reports.lab_year_page": _A.SAFETY_OFFICER,
    "reports.lab_year_pdf": _A.SAFETY_OFFICER,
    "reports.statements": _A.SAFETY_OFFICER,
    "reports.this_year": _A.SAFETY_OFFICER,
    "sessions.authorisations": _A.SAFETY_OFFICER,
    "sessions.revoke": _A.SAFETY_OFFICER,
    "shielding.chart": _A.SAFETY_OFFICER,
    "shielding.estimate": _A.SAFETY_OFFICER,
    "surveys.approve": _A.SAFETY_OFFICER,
    "surveys.new_meter": _A.SAFETY_OFFICER,
    "surveys.recalibrate_meter": _A.SAFETY_OFFICER,
    "surveys.refuse": _A.SAFETY_OFFICER,
    "surveys.retire": _A.SAFETY_OFFICER,
    "api.create": _A.ADMIN,
    "api.revoke": _A.ADMIN,
    "instruments.edit": _A.ADMIN,
    "instruments.new": _A.ADMIN,
    "instruments.retire": _A.ADMIN,
    "people.edit": _A.ADMIN,
    "people.index": _A.ADMIN,
    "people.new": _A.ADMIN,
    "people.toggle_active": _A.ADMIN,
    "audit.index": _A.OFFICER_OR_ADMIN,
    "settings.index": _A.OFFICER_OR_ADMIN,
    "reports.exports": _A.OFFICER_OR_ADMIN,
    "reports.export_csv": _A.OFFICER_OR_ADMIN,
    "reports.instrument_file_pdf": _A.OFFICER_OR_ADMIN,
}
