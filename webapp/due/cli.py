"""`flask reminders send [--dry-run]`: e-mail what is due, for cron or a systemd timer."""
from __future__ import annotations

import click
from flask import current_app

from models.audit.verify_ops import chain_head
from models.checks.check_ops import lapse_expired_controls
from models.core.base import utcnow
from models.core.due_dates import OVERDUE
from models.core.settings import lab_date, lab_settings
from models.due.due_list_ops import CALIBRATION
from models.due.reminder_ops import Reminder, anchor_key, anchor_sent, plan_reminders, record_anchor_sent, record_sent
from models.exposure.figures_ops import lab_evaluation
from webapp.due import bp
from webapp.due.views import target_url
from webapp.extensions import db
from webapp.mail import deliver_queued, link, safety_officer_addresses, send_mail, tell_safety_officer


def compose(reminder: Reminder, lab_name: str, today) -> tuple[list[str], str, str]:
    """Recipients, subject and body of one reminder."""
    late = sum(1 for item in reminder.open_items if item.state == OVERDUE)
    soon = len(reminder.open_items) - late
    new_keys = {item.key for item in reminder.new_items}
    lines = []
    for item in reminder.open_items:
        state = (f"LATE by {item.days_late} day{'s' if item.days_late != 1 else ''}"
                 if item.state == OVERDUE else item.state_label)
        mark = " (new)" if item.key in new_keys else ""
        # A meter's date is its last valid day, not a day by which to act.
        when = "valid until" if item.kind == CALIBRATION else "due"
        lines.append(f"- {item.what}: {item.subject}, {when} {item.due} [{state}]{mark}\n"
                     f"  {target_url(item, external=True)}")
    listing = "\n".join(lines)
    counts = f"{late} late, {soon} due soon or never done"
    if reminder.digest:
        to = safety_officer_addresses()
        subject = f"{lab_name}: lab due list, {counts}"
        body = (f"Safety tasks due soon, late or never done across {lab_name} on {today}, "
                f"latest first:\n\n{listing}")
    else:
        to = [reminder.person.email]
        subject = f"{lab_name}: {counts} for you"
        body = (f"Hello {reminder.person.name},\n\nThese safety tasks are due soon or late for you "
                f"on {today}:\n\n{listing}")
    body += f"\n\nThe full list: {link('due.index')}"
    return to, subject, body


@bp.cli.command("send")
@click.option("--dry-run", is_flag=True, help="Print what would be sent; send and record nothing.")
def send(dry_run: bool):
    """E-mail each person what is due soon or late for them, and the safety officer a digest."""
    session = db.session
    lab = lab_settings(session)
    if not dry_run:
        # Today's evaluation is stored now, so the day's first page need not wait for it.
        lab_evaluation(session, lab_date(session, utcnow()))
    if not lab.reminders_enabled:
        click.echo("Reminders are turned off in the settings; nothing sent.")
        return
    now = utcnow()
    held = lapse_expired_controls(session, now)
    for instrument in held:
        click.echo(f"{instrument.name}: temporary controls expired; now out of service.")
    if not dry_run:
        for instrument in held:
            tell_safety_officer(f"{instrument.name} is out of service: temporary controls expired",
                                instrument.out_of_service_reason)
        session.commit()
    with current_app.test_request_context(base_url=current_app.config["BASE_URL"]):
        reminders = plan_reminders(session, now)
        for reminder in reminders:
            to, subject, body = compose(reminder, lab.lab_name, lab_date(session, now))
            if dry_run:
                click.echo(f"Would send to {', '.join(a for a in to if a)}: {subject}\n{body}\n")
                continue
            # Queued and recorded together: a reminder is never lost nor queued twice.
            if send_mail(to, subject, body):
                record_sent(session, reminder, now)
                session.commit()
                click.echo(f"Queued for {', '.join(a for a in to if a)}: {subject}")
            else:
                click.echo(f"Not queued (no address): {subject}", err=True)
    _mail_anchor(now, dry_run)
    if dry_run:
        session.rollback()
    if not reminders:
        click.echo("Nothing new to remind.")
    delivery = deliver_queued()
    if delivery:
        click.echo(f"Sent {delivery.sent}; not sent {delivery.failed} (retried by `flask mail send-pending`).")
    if delivery.failed:
        raise SystemExit(1)


def _mail_anchor(now, dry_run: bool) -> None:
    """Once a month, queue for the safety officers the head of the audit trail to keep."""
    session = db.session
    key = anchor_key(lab_date(session, now))
    if anchor_sent(session, key):
        return
    line = chain_head(session).line()
    subject = f"{lab_settings(session).lab_name}: audit trail anchor for {key.rsplit(':', 1)[1]}"
    body = (f"{line}\n\nKeep this line outside the logbook (a file, a printout, another mailbox). "
            "`flask audit verify --anchor FILE` with it shows whether events up to this one were "
            "later removed or rewritten.")
    if dry_run:
        click.echo(f"Would send to the safety officers: {subject}\n{body}\n")
        return
    # Queued and recorded together, like the reminders.
    if send_mail(safety_officer_addresses(), subject, body):
        record_anchor_sent(session, key, now)
        session.commit()
        click.echo(f"Queued the audit anchor for the safety officers: {subject}")
