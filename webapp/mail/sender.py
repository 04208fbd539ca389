"""Delivering queued e-mail over SMTP, marking each message sent or due for another try."""
from __future__ import annotations

import smtplib
from dataclasses import dataclass
from email.message import EmailMessage

from flask import current_app, g
from sqlalchemy.orm import Session

from models.core.base import utcnow
from models.core.outbox import Outgoing, claim_next, mark_failed, mark_sent
from webapp.extensions import db
from webapp.mail import bp


@dataclass(frozen=True)
class Delivery:
    """What one run of the sender did."""

    sent: int = 0
    failed: int = 0

    def __bool__(self) -> bool:
        """True when anything was tried."""
        return bool(self.sent or self.failed)


def _smtp_send(message: Outgoing) -> None:
    """Hand one message to the SMTP server; raises when it cannot."""
    config = current_app.config
    if not config["MAIL_SERVER"]:
        raise OSError("no MAIL_SERVER configured")
    email = EmailMessage()
    email["From"] = config["MAIL_FROM"]
    email["To"] = ", ".join(message.to)
    email["Subject"] = message.subject
    email.set_content(message.body)
    with smtplib.SMTP(config["MAIL_SERVER"], config["MAIL_PORT"], timeout=config["MAIL_TIMEOUT"]) as smtp:
        if config["MAIL_USE_TLS"]:
            smtp.starttls()
        if config["MAIL_USERNAME"]:
            smtp.login(config["MAIL_USERNAME"], config["MAIL_PASSWORD"])
        smtp.send_message(email)


def deliver(ids: list[int] | None = None, waiting_too: bool = False) -> Delivery:
    """Send these queued messages (or every due one, or every unsent one), each marked sent or failed.

    Each message is claimed just before it is sent, never a batch ahead: a claim lapses after
    `CLAIM_FOR`, and a message waiting its turn behind slow deliveries would otherwise be claimed
    and sent by another sender too. Each message is tried once a run. Runs in its own session, so
    it never commits anything of the caller's.
    """
    sent = failed = 0
    tried: set[int] = set()
    with Session(db.engine) as session:
        while True:
            with session.begin():
                message = claim_next(session, utcnow(), ids, waiting_too, frozenset(tried))
            if message is None:
                return Delivery(sent, failed)
            tried.add(message.id)
            try:
                _smtp_send(message)
            except (OSError, smtplib.SMTPException) as error:
                failed += 1
                current_app.logger.warning("Mail %s not sent (will retry): %s", message.id, error)
                with session.begin():
                    mark_failed(session, message.id, f"{type(error).__name__}: {error}", utcnow())
                continue
            sent += 1
            with session.begin():
                mark_sent(session, message.id, utcnow())


def deliver_queued() -> Delivery:
    """Send what this request or command queued; call it after the commit."""
    ids = g.pop("outbox_ids", None)
    if not ids:
        return Delivery()
    try:
        return deliver(ids)
    except Exception:  # noqa: BLE001  the record is committed; the message waits for cron
        current_app.logger.exception("Mail delivery after the commit failed; left for the sender")
        return Delivery(failed=len(ids))


@bp.teardown_app_request
def _deliver_after_request(_error) -> None:
    """After every request: send the messages it committed."""
    deliver_queued()
