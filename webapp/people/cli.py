"""`flask people add`, `set-password` and `pregnancy`: accounts and written declarations from scripts."""
from __future__ import annotations

import sys

import click

from models.core.codes import WorkerCategory
from models.core.errors import Invalid
from models.exposure.investigation_ops import review_after_dose_change
from models.exposure.pregnancy_ops import WITHDRAWN, declare, end_declaration, open_declaration
from models.people.account_ops import set_password
from models.people.person_ops import add_person, find_person
from models.people.tables import PERSON_CATEGORIES, Role
from webapp.exposure.notify import tell_about
from webapp.extensions import db
from webapp.formatting import lab_today
from webapp.mail import deliver_queued
from webapp.passwords import hash_password, password_problem
from webapp.people import bp


@bp.cli.command("add")
@click.argument("login")
@click.option("--name", required=True, help="Full name.")
@click.option("--email", default=None, help="E-mail address for reminders.")
@click.option("--role", "roles", multiple=True, default=["operator"], show_default=True,
              type=click.Choice([r.value for r in Role]), help="Repeat for several roles.")
@click.option("--category", default=WorkerCategory.ADULT_WORKER.value, show_default=True,
              type=click.Choice([c.value for c in PERSON_CATEGORIES]))
@click.option("--password-stdin", is_flag=True, help="Read the password from standard input.")
def add(login, name, email, roles, category, password_stdin):
    """Create a person; an existing login is an error."""
    password_hash = _read_password(login, name, email) if password_stdin else None
    try:
        person = add_person(db.session, login=login, name=name, email=email,
                            roles={Role(r) for r in roles}, category=WorkerCategory(category),
                            password_hash=password_hash)
    except Invalid as error:
        db.session.rollback()
        raise click.ClickException(str(error)) from error
    db.session.commit()
    click.echo(f"Added {person.name} ({person.login}): {', '.join(sorted(roles))}.")


@bp.cli.command("set-password")
@click.argument("login")
@click.option("--password-stdin", is_flag=True, required=True,
              help="Read the new password from standard input (required: never on the command line).")
def set_password_command(login, password_stdin):
    """Set a person's password and end every session they have."""
    person = find_person(db.session, login)
    if person is None:
        raise click.ClickException(f"login: nobody has the login '{login}'.")
    set_password(db.session, person, _read_password(person.login, person.name, person.email))
    db.session.commit()
    click.echo(f"New password set for {person.name} ({person.login}); their sessions have ended.")


def _read_password(*about_person: str | None) -> str:
    """One line from standard input, checked for length and guessability, hashed."""
    password = sys.stdin.readline().rstrip("\r\n")
    if problem := password_problem(password, *(p or "" for p in about_person)):
        raise click.ClickException(f"password: {problem}")
    return hash_password(password)
DATE = click.DateTime(formats=["%Y-%m-%d"])


@bp.cli.command("pregnancy")
@click.argument("login")
@click.option("--declared", type=DATE, default=None, help="Date of the written declaration, YYYY-MM-DD.")
@click.option("--conception", type=DATE, default=None, help="Estimated date of conception (optional).")
@click.option("--expected-end", type=DATE, default=None, help="Expected end of the pregnancy (optional).")
@click.option("--withdrawn", type=DATE, default=None, help="Date the declaration was withdrawn.")
def pregnancy(login, declared, conception, expected_end, withdrawn):
    """Record a pregnancy declaration the safety officer received in writing, or its withdrawal."""
    person = find_person(db.session, login)
    if person is None:
        raise click.ClickException(f"login: No person has the login '{login}'.")
    if (declared is None) == (withdrawn is None):
        raise click.ClickException("Give either --declared DATE or --withdrawn DATE.")
    day = lab_today()
    try:
        if declared is not None:
            declare(db.session, person.id, declared.date(), today=day,
                    conception_on=conception and conception.date(),
                    expected_end_on=expected_end and expected_end.date())
            done = f"Declaration of {declared.date()} recorded for {login}."
        else:
            in_force = open_declaration(db.session, person.id)
            if in_force is None:
                raise Invalid.one("withdrawn", f"{login} has no declaration in force.")
            end_declaration(db.session, in_force, withdrawn.date(), WITHDRAWN, today=day)
            done = f"Declaration of {in_force.declared_on} withdrawn on {withdrawn.date()}."
    except Invalid as error:
        db.session.rollback()
        raise click.ClickException(str(error)) from error
    # A declaration is a dose input: crossings it reveals are raised now, as after a dose record.
    tell_about(review_after_dose_change(db.session, day))
    db.session.commit()
    deliver_queued()
    click.echo(done)
