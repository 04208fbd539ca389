"""Outgoing e-mail kept in the database: queued with the record it is about, sent after the commit.

A message is written in the same transaction as the change it reports, so a saved record always has
its alert and a rolled-back one never does. Senders claim a message before delivering it, so two
workers (or a worker and cron) never send the same one twice. Rows are written with Core statements:
the outbox is a delivery queue, not a record of the lab, and is left out of the audit trail.
"""
from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timedelta

import sqlalchemy as sa
from sqlalchemy.orm import Mapped, Session, mapped_column

from models.core.base import Base, IdMixin

# Waits before the next attempt after 1, 2, 3... failures; the last one repeats.
RETRY_WAITS = (timedelta(minutes=1), timedelta(minutes=5), timedelta(minutes=15), timedelta(hours=1))
# A claimed message is left alone this long; a sender that died frees it when the claim lapses.
CLAIM_FOR = timedelta(minutes=5)
ERROR_LENGTH = 500
SUBJECT_LENGTH = 300


class OutboxMessage(IdMixin, Base):
    """One e-mail waiting to be sent, or sent."""

    __tablename__ = "outbox_message"
    __table_args__ = (sa.Index("ix_outbox_message_pending", "sent_at", "next_attempt_at"),
                      {"info": {"audited": False, "audit_rows": False}})

    created_at: Mapped[datetime]
    recipients: Mapped[str] = mapped_column(sa.Text)  # comma-separated addresses
    subject: Mapped[str] = mapped_column(sa.String(SUBJECT_LENGTH))
    body: Mapped[str] = mapped_column(sa.Text)
    attempts: Mapped[int] = mapped_column(default=0)
    last_error: Mapped[str | None] = mapped_column(sa.String(ERROR_LENGTH))
    next_attempt_at: Mapped[datetime]
    claimed_until: Mapped[datetime | None]
    sent_at: Mapped[datetime | None]


@dataclass(frozen=True)
class Outgoing:
    """A claimed message, detached from any session."""

    id: int
    to: list[str]
    subject: str
    body: str


_table = OutboxMessage.__table__


def queue_message(session: Session, to: list[str], subject: str, body: str, now: datetime) -> int | None:
    """Queue one message in the session's transaction; None when it has no address to go to."""
    addresses = sorted({a.strip() for a in to if a and a.strip()})
    if not addresses:
        return None
    result = session.execute(_table.insert().values(
        # A line break in a subject (a name stored before names were checked) would forge headers.
        created_at=now, recipients=", ".join(addresses), subject=" ".join(subject.split())[:SUBJECT_LENGTH],
        body=body,
        attempts=0, next_attempt_at=now))
    return result.inserted_primary_key[0]


def _unsent_and_free(now: datetime):
    """Unsent messages nobody is delivering right now."""
    return sa.and_(_table.c.sent_at.is_(None),
                   sa.or_(_table.c.claimed_until.is_(None), _table.c.claimed_until < now))


def claim_next(session: Session, now: datetime, ids: list[int] | None = None, waiting_too: bool = False,
               skip: frozenset[int] = frozenset()) -> Outgoing | None:
    """Claim the first unsent message to deliver now (of these ids; or due; or waiting, too), or None."""
    where = _unsent_and_free(now)
    if skip:
        where = sa.and_(where, _table.c.id.not_in(skip))
    if ids is not None:
        where = sa.and_(where, _table.c.id.in_(ids))
    elif not waiting_too:
        where = sa.and_(where, _table.c.next_attempt_at <= now)
    while row := session.execute(sa.select(_table.c.id, _table.c.recipients, _table.c.subject, _table.c.body)
                                 .where(where).order_by(_table.c.id).limit(1)).first():
        # Claiming is a conditional update: of two racing senders only one changes the row; the
        # other moves on to the next message.
        if session.execute(_table.update().where(_table.c.id == row.id, _unsent_and_free(now))
                           .values(claimed_until=now + CLAIM_FOR)).rowcount:
            return Outgoing(row.id, row.recipients.split(", "), row.subject, row.body)
        where = sa.and_(where, _table.c.id > row.id)
    return None


def mark_sent(session: Session, message_id: int, now: datetime) -> None:
    """Record a delivery."""
    session.execute(_table.update().where(_table.c.id == message_id)
                    .values(sent_at=now, claimed_until=None, attempts=_table.c.attempts + 1, last_error=None))


def mark_failed(session: Session, message_id: int, error: str, now: datetime) -> None:
    """Record a failed attempt and when to try again."""
    attempts = session.scalar(sa.select(_table.c.attempts).where(_table.c.id == message_id)) or 0
    wait = RETRY_WAITS[min(attempts, len(RETRY_WAITS) - 1)]
    session.execute(_table.update().where(_table.c.id == message_id)
                    .values(attempts=attempts + 1, last_error=error[:ERROR_LENGTH], claimed_until=None,
                            next_attempt_at=now + wait))


def undelivered(session: Session, limit: int = 20) -> tuple[int, list[OutboxMessage]]:
    """How many messages wait to be sent, and the oldest of them."""
    count = session.scalar(sa.select(sa.func.count()).select_from(_table).where(_table.c.sent_at.is_(None)))
    oldest = session.scalars(sa.select(OutboxMessage).where(OutboxMessage.sent_at.is_(None))
                             .order_by(OutboxMessage.id).limit(limit)).all()
    return count or 0, list(oldest)
