"""Declarative base, naming convention and column types shared by every model."""
from __future__ import annotations

import enum
from datetime import UTC, datetime
from functools import partial

import sqlalchemy as sa
from sqlalchemy.orm import DeclarativeBase, InstrumentedAttribute, Mapped, Session, mapped_column

# Named constraints make migrations portable between SQLite and PostgreSQL.
NAMING_CONVENTION = {
    "ix": "ix_%(column_0_label)s",
    "uq": "uq_%(table_name)s_%(column_0_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}


# The one reading of the machine's clock; the tests replace it with a fixed starting instant.
clock = partial(datetime.now, UTC)


def utcnow() -> datetime:
    """Return the current time as an aware UTC datetime."""
    return clock()


class UTCDateTime(sa.TypeDecorator):
    """Store aware datetimes as naive UTC; read them back as aware UTC."""

    impl = sa.DateTime
    cache_ok = True

    def process_bind_param(self, value, dialect):
        if value is None:
            return None
        if value.tzinfo is None:
            raise ValueError("naive datetime given where UTC is required")
        return value.astimezone(UTC).replace(tzinfo=None)

    def process_result_value(self, value, dialect):
        if value is None:
            return None
        return value.replace(tzinfo=UTC)


def enum_column(enum_cls: type[enum.Enum], name: str | None = None, *, checked: bool = True) -> sa.Enum:
    """A portable (VARCHAR + CHECK) enum column storing the members' values.

    `name` names its CHECK constraint; give one when a table has two columns of the same enum.
    `checked=False` leaves the CHECK out, for working state copied into a checked table: SQLite
    re-builds an IN list's look-up for every row of an executemany, which makes it 4x slower.
    """
    return sa.Enum(
        enum_cls,
        native_enum=False,
        create_constraint=checked,
        length=32,
        name=name or enum_cls.__name__.lower(),
        values_callable=lambda members: [m.value for m in members],
        validate_strings=True,
    )


class Base(DeclarativeBase):
    """Base of every model: shared metadata with the naming convention."""

    metadata = sa.MetaData(naming_convention=NAMING_CONVENTION)
    type_annotation_map = {datetime: UTCDateTime()}


def taken(session: Session, column: InstrumentedAttribute, value, current=None) -> bool:
    """True when a row other than `current` already holds this value in a unique column."""
    holder = session.scalar(sa.select(column.class_).where(column == value))
    return holder is not None and holder is not current


def copy_fields(row, values: dict, fields: tuple[str, ...]) -> None:
    """Set the given fields present in `values` on a row, text stripped of outer spaces."""
    for key in fields:
        if key in values:
            value = values[key]
            setattr(row, key, value.strip() if isinstance(value, str) else value)


class IdMixin:
    """Integer surrogate primary key."""

    id: Mapped[int] = mapped_column(primary_key=True)
