"""`flask mail send-pending`: deliver queued e-mail, for cron or a systemd timer."""
from __future__ import annotations

import click

from webapp.mail import bp
from webapp.mail.sender import deliver


@bp.cli.command("send-pending")
@click.option("--all", "waiting_too", is_flag=True,
              help="Also retry messages still waiting for their next try (after fixing the mail settings).")
def send_pending(waiting_too: bool):
    """Send every queued message that is due; exit 1 when any could not be sent (it is retried later)."""
    delivery = deliver(waiting_too=waiting_too)
    click.echo(f"Sent {delivery.sent}; not sent {delivery.failed} (kept for the next run).")
    if delivery.failed:
        raise SystemExit(1)
