"""A note of each reminder sent, so that a second run on the same day sends nothing new."""
from __future__ import annotations

from datetime import date, datetime

import sqlalchemy as sa
from sqlalchemy.orm import Mapped, mapped_column

from models.core.base import Base, IdMixin, utcnow


class ReminderSent(IdMixin, Base):
    """One reminder e-mail sent to one person about one due item on one day."""

    __tablename__ = "reminder_sent"

    person_id: Mapped[int] = mapped_column(sa.ForeignKey("person.id"))
    item_key: Mapped[str] = mapped_column(sa.String(200))
    sent_on: Mapped[date]
    sent_at: Mapped[datetime] = mapped_column(default=utcnow)

    __table_args__ = (
        sa.UniqueConstraint("person_id", "item_key", "sent_on", name="uq_reminder_sent_once"),
    )
