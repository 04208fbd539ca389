"""People, their roles and worker categories."""
from __future__ import annotations

import enum
from datetime import datetime

import sqlalchemy as sa
from sqlalchemy.orm import Mapped, mapped_column, relationship

from models.core.base import Base, IdMixin, enum_column, utcnow
from models.core.codes import WorkerCategory


class Role(enum.StrEnum):
    """What a person may do; a person can hold several."""

    OPERATOR = "operator"
    SAFETY_OFFICER = "safety_officer"
    ADMIN = "admin"


ROLE_LABELS = {
    Role.OPERATOR: "Operator",
    Role.SAFETY_OFFICER: "Radiation safety officer",
    Role.ADMIN: "Admin",
}

# Pregnancy is a declaration with its own record, never a person's standing category.
PERSON_CATEGORIES = (WorkerCategory.ADULT_WORKER, WorkerCategory.TRAINEE, WorkerCategory.PUBLIC)

CATEGORY_LABELS = {
    WorkerCategory.ADULT_WORKER: "Adult worker",
    WorkerCategory.TRAINEE: "Trainee or student (16-18)",
    WorkerCategory.PUBLIC: "Member of the public",
    WorkerCategory.DECLARED_PREGNANT: "Declared pregnant worker",
}


class Person(IdMixin, Base):
    """Someone who works in the lab or administers the logbook."""

    __tablename__ = "person"

    login: Mapped[str] = mapped_column(sa.String(64), unique=True)
    name: Mapped[str] = mapped_column(sa.String(200))
    email: Mapped[str | None] = mapped_column(sa.String(254))
    password_hash: Mapped[str | None] = mapped_column(sa.String(255))
    category: Mapped[WorkerCategory] = mapped_column(
        enum_column(WorkerCategory), default=WorkerCategory.ADULT_WORKER
    )
    active: Mapped[bool] = mapped_column(default=True)
    calendar_token_hash: Mapped[str | None] = mapped_column(sa.String(64), unique=True)
    created_at: Mapped[datetime] = mapped_column(default=utcnow)

    roles: Mapped[list[PersonRole]] = relationship(
        back_populates="person", cascade="all, delete-orphan", lazy="selectin"
    )

    __table_args__ = (
        sa.CheckConstraint("length(trim(name)) > 0", name="name_not_blank"),
        sa.CheckConstraint("category <> 'declared_pregnant'", name="category_not_pregnancy"),
    )

    @property
    def role_set(self) -> set[Role]:
        """The roles this person holds."""
        return {r.role for r in self.roles}

    def has_role(self, *roles: Role) -> bool:
        """True when the person holds any of the given roles."""
        return bool(self.role_set.intersection(roles))

    def set_roles(self, roles: set[Role]) -> None:
        """Replace the person's roles, keeping rows for roles still held."""
        self.roles = [r for r in self.roles if r.role in roles] + [
            PersonRole(role=role) for role in sorted(roles - self.role_set)
        ]

    # The four members below are what a login manager asks of a user object.
    is_authenticated = True
    is_anonymous = False

    @property
    def is_active(self) -> bool:
        """Deactivated people cannot log in."""
        return self.active

    def get_id(self) -> str:
        """The identifier kept in the login session."""
        return str(self.id)

    @property
    def sees_dose(self) -> bool:
        """Only the safety officer sees other people's dose."""
        return self.has_role(Role.SAFETY_OFFICER)

    def __repr__(self) -> str:
        return f"<Person {self.login}>"


class PersonRole(IdMixin, Base):
    """One role held by one person."""

    __tablename__ = "person_role"

    person_id: Mapped[int] = mapped_column(sa.ForeignKey("person.id"))
    role: Mapped[Role] = mapped_column(enum_column(Role))
    person: Mapped[Person] = relationship(back_populates="roles")

    __table_args__ = (sa.UniqueConstraint("person_id", "role", name="uq_person_role_person_role"),)
