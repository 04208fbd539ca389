"""Sending e-mail through the configured SMTP server."""
from __future__ import annotations

import smtplib
from email.message import EmailMessage

import sqlalchemy as sa
from flask import current_app

from models.people.tables import Person, PersonRole, Role
from webapp.extensions import db
from webapp.formatting import CAUTION, settings


def send_mail(to: list[str], subject: str, body: str) -> bool:
    """Send one message to the given addresses; without an SMTP server, log it instead."""
    to = sorted({address for address in to if address})
    if not to:
        return False
    message = EmailMessage()
    message["From"] = current_app.config["MAIL_FROM"]
    message["To"] = ", ".join(to)
    message["Subject"] = subject
    message.set_content(f"{body}\n\n--\n{CAUTION}\n")
    server = current_app.config["MAIL_SERVER"]
    if not server:
        current_app.logger.warning("No MAIL_SERVER configured; not sent: %s to %s", subject, to)
        return False
    with smtplib.SMTP(server, current_app.config["MAIL_PORT"], timeout=10) as smtp:
        if current_app.config["MAIL_USE_TLS"]:
            smtp.starttls()
        if current_app.config["MAIL_USERNAME"]:
            smtp.login(current_app.config["MAIL_USERNAME"], current_app.config["MAIL_PASSWORD"])
        smtp.send_message(message)
    return True


def link(endpoint: str, **values) -> str:
    """An absolute address for an e-mail, on BASE_URL; works in a request and from the command line."""
    path = current_app.url_map.bind("localhost").build(endpoint, values)
    return current_app.config["BASE_URL"].rstrip("/") + path


def safety_officer_addresses() -> list[str]:
    """Every active safety officer's address, plus the lab's alert address."""
    addresses = db.session.scalars(
        sa.select(Person.email).join(PersonRole)
        .where(PersonRole.role == Role.SAFETY_OFFICER, Person.active.is_(True),
               Person.email.is_not(None))
    ).all()
    return [*addresses, settings().safety_officer_email or ""]


def tell_safety_officer(subject: str, body: str) -> bool:
    """Alert the safety officer at once."""
    return send_mail(safety_officer_addresses(), subject, body)
