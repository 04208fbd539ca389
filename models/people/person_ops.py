"""Authorising people on instruments, revoking, and finding whom to ask."""
from __future__ import annotations

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.codes import WorkerCategory
from models.core.errors import Invalid
from models.people.tables import Person, PersonRole, Role


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


def validate_new_person(session: Session, login: str | None, name: str | None) -> None:
    """Refuse a blank login or name, or a login already taken."""
    login, name = (login or "").strip(), (name or "").strip()
    errors = {}
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
) -> Person:
    """Change a person's name, e-mail, roles and worker category."""
    if not name.strip():
        raise Invalid.one("name", "Enter the person's name.")
    if not roles:
        raise Invalid.one("roles", "Give the person at least one role.")
    person.name = name.strip()
    person.email = (email or "").strip() or None
    person.category = category
    person.set_roles(roles)
    session.flush()
    return person


def set_active(session: Session, person: Person, active: bool) -> Person:
    """Deactivate (or reactivate) a person; people are never deleted."""
    person.active = active
    session.flush()
    return person
