"""Who may see what: role checks for views."""
from __future__ import annotations

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
