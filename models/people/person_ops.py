"""Authorising people on instruments, revoking, and finding whom to ask."""
from __future__ import annotations

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.codes import WorkerCategory
from models.core.errors import Invalid
from models.people.account_ops import end_sessions
from models.people.tables import Person, PersonRole, Role

ONLY_THE_OFFICER = "Only a radiation safety officer grants or removes the safety officer role."
OFFICER_ADDRESS = "Only a radiation safety officer changes a safety officer's e-mail address."


def safety_officers(session: Session) -> list[Person]:
    """Active people holding the radiation safety officer role, by name."""
    return list(session.scalars(
        sa.select(Person).join(PersonRole)
        .where(PersonRole.role == Role.SAFETY_OFFICER, Person.active.is_(True))
        .order_by(Person.name)
    ))


def whom_to_ask(session: Session) -> str:
    """'the radiation safety officer (<name>)' when there is one, else the role alone."""
    names = [p.name for p in safety_officers(session)]
    if not names:
        return "the radiation safety officer"
    return f"the radiation safety officer ({' or '.join(names)})"






def find_person(session: Session, login: str) -> Person | None:
    """The person with this login, if any."""
    return session.scalar(sa.select(Person).where(Person.login == login))


def check_separation(by: Person | None, person: Person | None, roles: set[Role],
                     email: str | None) -> dict[str, str]:
    """Who may touch the safety officer's role and alert address: only a safety officer.

    `by` is None for the server's own command line, which the people running the server answer for.
    """
    if by is None or by.has_role(Role.SAFETY_OFFICER):
        return {}
    errors = {}
    held = person.role_set if person is not None else set()
    if (Role.SAFETY_OFFICER in held) != (Role.SAFETY_OFFICER in roles):
        errors["roles"] = ONLY_THE_OFFICER
    if person is not None and Role.SAFETY_OFFICER in held and (email or "").strip() != (person.email or ""):
        errors["email"] = OFFICER_ADDRESS
    return errors


def validate_new_person(session: Session, login: str | None, name: str | None,
                        roles: set[Role] | None = None, by: Person | None = None) -> None:
    """Refuse a blank login or name, a login already taken, or a role the actor may not give."""
    login, name = (login or "").strip(), (name or "").strip()
    errors = check_separation(by, None, roles or set(), None)
    if not login:
        errors["login"] = "Enter a login."
    elif find_person(session, login) is not None:
        errors["login"] = f"The login '{login}' is already taken."
    if not name:
        errors["name"] = "Enter the person's name."
    if errors:
        raise Invalid(errors)


def add_person(
    session: Session,
    *,
    login: str,
    name: str,
    email: str | None = None,
    roles: set[Role] | None = None,
    category: WorkerCategory = WorkerCategory.ADULT_WORKER,
    password_hash: str | None = None,
) -> Person:
    """Create a person; a blank name or a login already taken is refused."""
    validate_new_person(session, login, name)
    login, name = login.strip(), name.strip()
    person = Person(login=login, name=name, email=(email or "").strip() or None,
                    category=category, password_hash=password_hash)
    person.set_roles(roles or {Role.OPERATOR})
    session.add(person)
    session.flush()
    return person


def update_person(
    session: Session,
    person: Person,
    *,
    name: str,
    email: str | None,
    roles: set[Role],
    category: WorkerCategory,
    by: Person | None = None,
) -> Person:
    """Change a person's name, e-mail, roles and worker category; a role change ends their sessions."""
    errors = check_separation(by, person, roles, email)
    if not name.strip():
        errors["name"] = "Enter the person's name."
    if not roles:
        errors["roles"] = "Give the person at least one role."
    if errors:
        raise Invalid(errors)
    changed_roles = roles != person.role_set
    person.name = name.strip()
    person.email = (email or "").strip() or None
    person.category = category
    person.set_roles(roles)
    if changed_roles:
        end_sessions(session, person)
    session.flush()
    return person


def set_active(session: Session, person: Person, active: bool) -> Person:
    """Deactivate (or reactivate) a person, ending their sessions; people are never deleted."""
    person.active = active
    end_sessions(session, person)
    return person
