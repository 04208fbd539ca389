"""`flask demo load` and `flask demo logins`: the demo lab for a first look."""
from __future__ import annotations

from zoneinfo import ZoneInfo

import click

from models.audit import audit_ops
from models.core.base import utcnow
from models.exposure.investigation_ops import review_after_dose_change
from models.people.person_ops import find_person
from models.people.tables import CATEGORY_LABELS, ROLE_LABELS
from webapp.demo import bp
from webapp.demo.lab import DEMO_PASSWORD, LAB_ZONE, PEOPLE, is_empty, load_demo_lab
from webapp.exposure.notify import tell_about
from webapp.extensions import db
from webapp.mail import deliver_queued
from webapp.passwords import hash_password


@bp.cli.command("load")
@click.option("--if-empty", is_flag=True,
              help="Do nothing (and succeed) when the database already holds people.")
@click.option("--today", type=click.DateTime(formats=["%Y-%m-%d"]), default=None,
              help="The day the demo's two years of records end (default: today in the lab).")
def load(if_empty, today):
    """Load the demo lab into an empty database."""
    if not is_empty(db.session):
        if if_empty:
            click.echo("The database already holds people; the demo lab was not loaded.")
            return
        raise click.ClickException("The demo lab loads only into an empty database.")
    day = today.date() if today else utcnow().astimezone(ZoneInfo(LAB_ZONE)).date()
    click.echo("Loading the demo lab (hashing the shared password once, then two years of records)...")
    with audit_ops.reason(db.session, "Demo lab loaded"):
        summary = load_demo_lab(db.session, day, hash_password(DEMO_PASSWORD))
    # As after any import: doses over a level raise investigations for the safety officer.
    raised = review_after_dose_change(db.session, day)
    tell_about(raised)  # queued with the change, sent after the commit
    db.session.commit()
    deliver_queued()
    click.echo(f"Loaded the demo lab up to {day.isoformat()}: {summary.people} people, "
               f"{summary.instruments} instruments, {summary.sessions} sessions, "
               f"{summary.checks} checks, {summary.surveys} surveys, "
               f"{summary.dose_records} dose records, {len(raised)} investigations raised.")


@bp.cli.command("logins")
def logins():
    """Print the demo logins with their roles and the shared password."""
    rows = [(p, person) for p in PEOPLE if (person := find_person(db.session, p.login))]
    if not rows:
        raise click.ClickException("The demo lab is not loaded (run `flask demo load`).")
    table = [("Login", "Name", "Roles", "Category", "In the story")] + [
        (person.login, person.name,
         ", ".join(ROLE_LABELS[r] for r in sorted(person.role_set, key=list(ROLE_LABELS).index)),
         CATEGORY_LABELS[person.category], p.story) for p, person in rows]
    widths = [max(len(row[i]) for row in table) for i in range(len(table[0]))]
    lines = ["  ".join(cell.ljust(w) for cell, w in zip(row, widths)).rstrip() for row in table]
    lines.insert(1, "  ".join("-" * w for w in widths))
    click.echo("Demo logins (every one uses the password below):")
    click.echo("\n".join(lines))
    click.echo(f"\nPassword for every demo login: {DEMO_PASSWORD}")
